#include "panels/spreadpanel.h"

#include "panels/plotpanel.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/value.h"
#include "loopsketch/feedback/exactsolution.h"

#include <QAreaSeries>
#include <QChart>
#include <QChartView>
#include <QComboBox>
#include <QDoubleSpinBox>
#include <QFormLayout>
#include <QGridLayout>
#include <QHBoxLayout>
#include <QHeaderView>
#include <QLabel>
#include <QLegend>
#include <QLineSeries>
#include <QLocale>
#include <QProgressBar>
#include <QPushButton>
#include <QSpinBox>
#include <QTableWidget>
#include <QTimer>
#include <QVBoxLayout>
#include <QValueAxis>

#include <algorithm>
#include <climits>
#include <cmath>
#include <limits>

namespace loopsketch::ui {

namespace {

constexpr int kBins = 24;
const QString kDash = QStringLiteral("—");

double niceStep(double span, int ticks)
{
    const double raw = span / std::max(1, ticks);
    const double decade = std::pow(10.0, std::floor(std::log10(raw)));
    for (double m : {1.0, 2.0, 2.5, 5.0, 10.0}) {
        if (m * decade >= raw)
            return m * decade;
    }
    return 10.0 * decade;
}

const MetricStats &statsOf(const MonteCarloResult &mc, SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return mc.gain;
    case SpreadPanel::Metric::Bandwidth:
        return mc.bandwidthHz;
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return mc.phaseMarginDeg;
}

const MetricRange &rangeOf(const WorstCaseResult &w, SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return w.gain;
    case SpreadPanel::Metric::Bandwidth:
        return w.bandwidthHz;
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return w.phaseMarginDeg;
}

OptionalNumber nominalOf(const TrialMetrics &t, SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return t.gain;
    case SpreadPanel::Metric::Bandwidth:
        return t.bandwidthHz;
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return t.phaseMarginDeg;
}

QString quantityText(const SpreadQuantity &q)
{
    return QStringLiteral("%1 %2 ±%3 %")
        .arg(toQString(q.part), toQString(q.field), QString::number(q.tolerance * 100, 'g', 3));
}

QString metricName(SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return QObject::tr("closed-loop gain");
    case SpreadPanel::Metric::Bandwidth:
        return QObject::tr("−3 dB bandwidth");
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return QObject::tr("phase margin");
}

/// The short name on a histogram's axis.
QString axisName(SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return QObject::tr("gain");
    case SpreadPanel::Metric::Bandwidth:
        return QObject::tr("bandwidth");
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return QObject::tr("phase margin");
}

/// Worst-case corners evaluated with progress reports for `n` quantities (spread.cpp).
std::size_t cornerCount(std::size_t n)
{
    return n <= static_cast<std::size_t>(kMaxVertexQuantities) ? std::size_t{1} << n : 6;
}

} // namespace

/// What a worker hands back to the GUI thread.
struct SpreadPanel::Delivery
{
    int generation = 0;
    std::thread::id thread;
    QString error;
    std::optional<WorstCaseResult> worst;
    std::optional<MonteCarloResult> monteCarlo;
    std::string gainUnit;
    Specs specs;
};

QString SpreadPanel::formatMetric(Metric metric, double value, const std::string &gainUnit)
{
    if (!std::isfinite(value))
        return kDash;
    switch (metric) {
    case Metric::Gain:
        return toQString(formatEngineering(value, 4, gainUnit));
    case Metric::Bandwidth:
        return toQString(formatEngineering(value, 4, "Hz"));
    case Metric::PhaseMargin:
        break;
    }
    // two decimals; a spread below 0.01° keeps two significant digits instead of "0.00"
    const bool tiny = value != 0 && std::abs(value) < 0.01;
    return QString::number(value, tiny ? 'g' : 'f', 2) + QStringLiteral("°");
}

SpreadPanel::SpreadPanel(DesignDocument *document, QWidget *parent)
    : QWidget(parent), m_document(document), m_trials(new QSpinBox(this)),
      m_seed(new QSpinBox(this)), m_distribution(new QComboBox(this)),
      m_gainSpread(new QDoubleSpinBox(this)), m_gbwSpread(new QDoubleSpinBox(this)),
      m_run(new QPushButton(tr("Run"), this)), m_cancel(new QPushButton(tr("Cancel"), this)),
      m_progress(new QProgressBar(this)), m_message(new QLabel(this)), m_method(new QLabel(this)),
      m_yield(new QLabel(this)), m_table(new QTableWidget(3, 7, this)),
      m_progressTimer(new QTimer(this))
{
    setObjectName(QStringLiteral("Spread"));
    setUpInputs();
    setUpTable();
    auto *plots = new QHBoxLayout;
    plots->setSpacing(4);
    for (int i = 0; i < 3; ++i) {
        plots->addWidget(makeHistogram(i), 1);
        showHistogram(static_cast<Metric>(i));
    }

    auto *legend = new QLabel(
        tr("<span style='color:%1'>▬</span> Monte Carlo trials &nbsp; "
           "<span style='color:%2'>╌</span> spec limit &nbsp; "
           "<span style='color:%3'>┄</span> nominal")
            .arg(palette::kBlue.name(), palette::kVermillion.name(), palette::kBlack.name()),
        this);
    QFont small = legend->font();
    small.setPointSizeF(small.pointSizeF() * 0.9);
    legend->setFont(small);

    auto *layout = new QVBoxLayout(this);
    layout->setContentsMargins(6, 6, 6, 6);
    layout->setSpacing(5);
    layout->addLayout(controlsLayout());
    layout->addWidget(m_message);
    layout->addWidget(m_table);
    layout->addWidget(m_yield);
    layout->addWidget(m_method);
    layout->addLayout(plots, 1);
    layout->addWidget(legend);

    m_progressTimer->setInterval(50);
    connect(m_progressTimer, &QTimer::timeout, this, [this] {
        if (m_state)
            m_progress->setValue(static_cast<int>(std::min(m_state->done.load(), m_state->total)));
    });
    connect(m_run, &QPushButton::clicked, this, &SpreadPanel::run);
    connect(m_cancel, &QPushButton::clicked, this, &SpreadPanel::cancel);
    connect(m_gainSpread, &QDoubleSpinBox::valueChanged, this, &SpreadPanel::optionsChanged);
    connect(m_gbwSpread, &QDoubleSpinBox::valueChanged, this, &SpreadPanel::optionsChanged);
    connect(m_trials, &QSpinBox::valueChanged, this, &SpreadPanel::optionsChanged);
    connect(m_document, &DesignDocument::partChanged, this, &SpreadPanel::designChanged);
    connect(m_document, &DesignDocument::structureChanged, this, &SpreadPanel::designChanged);
    connect(m_document, &DesignDocument::designReset, this, [this] {
        designChanged();
        m_result.reset();
        showResult();
    });
    updatePreview();
}

void SpreadPanel::setUpInputs()
{
    m_trials->setRange(1, kMaxTrials);
    m_trials->setValue(kDefaultTrials);
    m_trials->setSingleStep(1000);
    m_trials->setGroupSeparatorShown(true);
    m_trials->setToolTip(tr("Monte Carlo trials"));
    m_seed->setRange(0, std::numeric_limits<int>::max());
    m_seed->setValue(static_cast<int>(kDefaultSeed));
    m_seed->setToolTip(tr("The same seed gives the same trials"));
    m_distribution->addItem(tr("uniform"), int(SpreadDistribution::Uniform));
    m_distribution->addItem(tr("normal (tolerance = 3σ)"), int(SpreadDistribution::Normal));
    for (QDoubleSpinBox *box : {m_gainSpread, m_gbwSpread}) {
        box->setRange(0, 99);
        box->setDecimals(1);
        box->setSingleStep(5);
        box->setSuffix(QStringLiteral(" %"));
        box->setSpecialValueText(tr("none"));
    }
    m_gainSpread->setToolTip(tr("Spread of the gain block's DC gain (± %)"));
    m_gbwSpread->setToolTip(tr("Spread of the gain block's gain-bandwidth product (± %); the "
                               "gain block must give its gbw"));
    m_cancel->setEnabled(false);
    m_progress->setRange(0, 1);
    m_progress->setValue(0);
    m_progress->setTextVisible(true);
    m_progress->setFormat(QStringLiteral("%p %"));
    m_message->setWordWrap(true);
    m_message->setTextInteractionFlags(Qt::TextSelectableByMouse);
    m_method->setWordWrap(true);
    m_yield->setWordWrap(true);
    QFont bold = m_yield->font();
    bold.setBold(true);
    m_yield->setFont(bold);
}

QGridLayout *SpreadPanel::controlsLayout()
{
    auto *controls = new QGridLayout;
    controls->setHorizontalSpacing(8);
    controls->setVerticalSpacing(4);
    auto addControl = [&](int row, int col, const QString &label, QWidget *w) {
        auto *l = new QLabel(label, this);
        l->setBuddy(w);
        controls->addWidget(l, row, col * 2, Qt::AlignRight);
        controls->addWidget(w, row, col * 2 + 1);
    };
    addControl(0, 0, tr("&Trials"), m_trials);
    addControl(0, 1, tr("S&eed"), m_seed);
    addControl(0, 2, tr("&Distribution"), m_distribution);
    addControl(1, 0, tr("&Gain spread"), m_gainSpread);
    addControl(1, 1, tr("G&BW spread"), m_gbwSpread);
    auto *buttons = new QHBoxLayout;
    buttons->addWidget(m_run);
    buttons->addWidget(m_cancel);
    buttons->addWidget(m_progress, 1);
    controls->addLayout(buttons, 1, 4, 1, 2);
    controls->setColumnStretch(5, 1);
    return controls;
}

void SpreadPanel::setUpTable()
{
    const QStringList columns{tr("nominal"), tr("worst min"), tr("worst max"), tr("MC min"),
                              tr("MC mean"), tr("MC max"),    tr("MC σ")};
    m_table->setHorizontalHeaderLabels(columns);
    m_table->setVerticalHeaderLabels(
        {axisName(Metric::Gain), axisName(Metric::Bandwidth), axisName(Metric::PhaseMargin)});
    m_table->horizontalHeaderItem(6)->setToolTip(tr("sample standard deviation (n − 1)"));
    m_table->horizontalHeaderItem(1)->setToolTip(tr("lowest value over the worst-case corners"));
    m_table->horizontalHeaderItem(2)->setToolTip(tr("highest value over the worst-case corners"));
    QFont tableFont = m_table->font();
    tableFont.setPointSizeF(8);
    m_table->setFont(tableFont);
    m_table->horizontalHeader()->setFont(tableFont);
    m_table->verticalHeader()->setFont(tableFont);
    m_table->setWordWrap(false);
    m_table->setTextElideMode(Qt::ElideRight);
    m_table->setEditTriggers(QAbstractItemView::NoEditTriggers);
    m_table->setSelectionMode(QAbstractItemView::NoSelection);
    m_table->setFocusPolicy(Qt::NoFocus);
    m_table->horizontalHeader()->setSectionResizeMode(QHeaderView::Stretch);
    m_table->verticalHeader()->setSectionResizeMode(QHeaderView::Fixed);
    m_table->verticalHeader()->setDefaultSectionSize(QFontMetrics(tableFont).height() + 6);
    m_table->setVerticalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
    m_table->setHorizontalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
    for (int r = 0; r < 3; ++r)
        for (int c = 0; c < 7; ++c) {
            auto *item = new QTableWidgetItem(kDash);
            item->setTextAlignment(Qt::AlignRight | Qt::AlignVCenter);
            m_table->setItem(r, c, item);
        }
    int tableHeight = m_table->horizontalHeader()->sizeHint().height() + 2 * m_table->frameWidth();
    for (int r = 0; r < 3; ++r)
        tableHeight += m_table->rowHeight(r);
    m_table->setFixedHeight(tableHeight);
}

QChartView *SpreadPanel::makeHistogram(int i)
{
    Histogram &h = m_histograms[i];
    auto *chart = new QChart;
    chart->setBackgroundRoundness(0);
    chart->setMargins(QMargins(2, 2, 6, 2));
    chart->setAnimationOptions(QChart::NoAnimation);
    chart->legend()->hide();
    chart->setTitle(QStringLiteral(" "));
    QFont titleFont = chart->titleFont();
    titleFont.setPointSizeF(7.5);
    chart->setTitleFont(titleFont);
    chart->setTitleBrush(palette::kVermillion);
    h.x = new QValueAxis;
    h.y = new QValueAxis;
    QFont axisFont = h.x->labelsFont();
    axisFont.setPointSizeF(7.5);
    for (QValueAxis *a : {h.x, h.y}) {
        a->setLabelsFont(axisFont);
        QFont t = a->titleFont();
        t.setPointSizeF(8);
        t.setBold(false);
        a->setTitleFont(t);
        a->setTickType(QValueAxis::TicksDynamic);
        a->setTickAnchor(0);
        a->setMinorTickCount(0);
    }
    h.y->setTitleText(tr("trials"));
    h.y->setLabelFormat(QStringLiteral("%.0f"));
    chart->addAxis(h.x, Qt::AlignBottom);
    chart->addAxis(h.y, Qt::AlignLeft);
    h.outline = new QLineSeries;
    auto *area = new QAreaSeries(h.outline);
    QColor fill = palette::kSkyBlue;
    fill.setAlpha(150);
    area->setBrush(fill);
    area->setPen(QPen(palette::kBlue, 1.2));
    chart->addSeries(area);
    area->attachAxis(h.x);
    area->attachAxis(h.y);
    const auto addLine = [&](const QColor &colour, Qt::PenStyle style) {
        auto *s = new QLineSeries;
        QPen pen(colour, 1.6, style);
        pen.setCosmetic(true);
        s->setPen(pen);
        chart->addSeries(s);
        s->attachAxis(h.x);
        s->attachAxis(h.y);
        return s;
    };
    h.specLow = addLine(palette::kVermillion, Qt::DashLine);
    h.specHigh = addLine(palette::kVermillion, Qt::DashLine);
    h.nominal = addLine(palette::kBlack, Qt::DotLine);
    h.view = new QChartView(chart, this);
    h.view->setRenderHint(QPainter::Antialiasing);
    h.view->setMinimumSize(170, 150);
    h.view->setObjectName(QStringLiteral("SpreadHistogram%1").arg(i));
    return h.view;
}

SpreadPanel::~SpreadPanel()
{
    stopWorker(true);
}

void SpreadPanel::setTrials(int trials)
{
    m_trials->setValue(trials);
}

void SpreadPanel::setSeed(std::uint64_t seed)
{
    m_seed->setValue(static_cast<int>(std::min<std::uint64_t>(seed, INT_MAX)));
}

void SpreadPanel::setDistribution(SpreadDistribution distribution)
{
    m_distribution->setCurrentIndex(m_distribution->findData(int(distribution)));
}

void SpreadPanel::setGainSpreadPct(double pct)
{
    m_gainSpread->setValue(pct);
}

void SpreadPanel::setGbwSpreadPct(double pct)
{
    m_gbwSpread->setValue(pct);
}

SpreadOptions SpreadPanel::options() const
{
    SpreadOptions o;
    o.trials = m_trials->value();
    o.seed = static_cast<std::uint64_t>(m_seed->value());
    o.distribution = static_cast<SpreadDistribution>(m_distribution->currentData().toInt());
    if (m_gainSpread->value() > 0)
        o.gainSpread = m_gainSpread->value() / 100.0;
    if (m_gbwSpread->value() > 0)
        o.gbwSpread = m_gbwSpread->value() / 100.0;
    o.histogramBins = kBins;
    return o;
}

const SheetSpread *SpreadPanel::completedResult() const
{
    if (!m_result || !m_resultCurrent || m_result->monteCarlo.cancelled
        || m_result->worstCase.cancelled)
        return nullptr;
    return &*m_result;
}

void SpreadPanel::stopWorker(bool wait)
{
    if (m_state)
        m_state->cancel = true;
    if (wait && m_worker.joinable())
        m_worker.join();
}

void SpreadPanel::run()
{
    // The old worker stops within one chunk of trials once its flag is set.
    stopWorker(true);
    const Design design = m_document->design();
    const SpreadOptions base = options();
    const std::string file = toStdString(m_document->filePath());
    auto quantities = spreadQuantities(design, base, file);
    if (!quantities) {
        setMessage(toQString(quantities.errorText()), true);
        return;
    }
    auto state = std::make_shared<RunState>();
    state->generation = ++m_generation;
    const std::size_t corners = cornerCount(quantities->size());
    state->total = corners + static_cast<std::size_t>(base.trials);
    m_state = state;
    m_running = true;
    setBusy(true);
    m_progress->setRange(0, static_cast<int>(std::min<std::size_t>(state->total, INT_MAX)));
    m_progress->setValue(0);
    m_progress->setFormat(QStringLiteral("%p %"));
    setMessage(tr("Running %1 worst-case corners and %2 Monte Carlo trials…")
                   .arg(corners)
                   .arg(QLocale().toString(base.trials)),
               false);
    m_clock.start();
    m_worker = std::thread([this, design, base, file, state, corners] {
        auto delivery = std::make_shared<Delivery>();
        delivery->generation = state->generation;
        delivery->thread = std::this_thread::get_id();
        delivery->gainUnit = gainUnit(design);
        delivery->specs = design.specs;
        SpreadOptions o = base;
        o.cancel = &state->cancel;
        o.progress = [state](std::size_t done, std::size_t) {
            state->done = done;
        };
        auto worst = worstCase(design, o, file);
        if (!worst) {
            delivery->error = toQString(worst.errorText());
        } else {
            delivery->worst = std::move(worst).value();
            if (!delivery->worst->cancelled) {
                o.progress = [state, corners](std::size_t done, std::size_t) {
                    state->done = corners + done;
                };
                auto mc = monteCarlo(design, o, file);
                if (!mc)
                    delivery->error = toQString(mc.errorText());
                else
                    delivery->monteCarlo = std::move(mc).value();
            }
        }
        QMetaObject::invokeMethod(
            this, [this, delivery] { deliver(delivery); }, Qt::QueuedConnection);
    });
    m_progressTimer->start();
}

QString SpreadPanel::progressText() const
{
    return m_progress->text();
}

int SpreadPanel::progressValue() const
{
    return m_progress->value();
}

int SpreadPanel::progressMaximum() const
{
    return m_progress->maximum();
}

void SpreadPanel::cancel()
{
    if (!m_running || !m_state)
        return;
    m_state->userCancelled = true;
    m_state->cancel = true;
    m_cancel->setEnabled(false);
    setMessage(tr("Cancelling…"), false);
}

void SpreadPanel::deliver(const std::shared_ptr<Delivery> &delivery)
{
    if (m_worker.joinable() && m_worker.get_id() == delivery->thread)
        m_worker.join();
    if (delivery->generation != m_generation || !m_running) {
        emit runDiscarded(delivery->monteCarlo ? delivery->monteCarlo->completed : 0);
        return;
    }
    m_lastRunMs = double(m_clock.nsecsElapsed()) / 1e6;
    m_running = false;
    m_progressTimer->stop();
    setBusy(false);
    const bool userCancelled = m_state && m_state->userCancelled;
    if (!delivery->error.isEmpty()) {
        setMessage(delivery->error, true);
        emit runFinished();
        return;
    }
    if (!delivery->monteCarlo) {
        m_progress->setValue(0);
        setMessage(tr("Cancelled during the worst case; nothing to show. Press Run to start "
                      "again."),
                   false);
        emit runFinished();
        return;
    }
    m_result = SheetSpread{std::move(*delivery->worst), std::move(*delivery->monteCarlo)};
    m_resultUnit = delivery->gainUnit;
    m_resultSpecs = delivery->specs;
    m_resultCurrent = true;
    const MonteCarloResult &mc = m_result->monteCarlo;
    if (mc.cancelled || userCancelled) {
        // The bar shows how far the run got, never a full bar for a run cut short.
        m_progress->setRange(0, static_cast<int>(std::min<std::size_t>(mc.trials, INT_MAX)));
        m_progress->setValue(static_cast<int>(std::min<std::size_t>(mc.completed, INT_MAX)));
        m_progress->setFormat(tr("cancelled at %1 of %2")
                                  .arg(QLocale().toString(qulonglong(mc.completed)),
                                       QLocale().toString(qulonglong(mc.trials))));
    } else {
        m_progress->setValue(m_progress->maximum());
    }
    QString text = mc.cancelled || userCancelled
        ? tr("Cancelled at %1 of %2 trials; the statistics below cover those.")
              .arg(QLocale().toString(qulonglong(mc.completed)),
                   QLocale().toString(qulonglong(mc.trials)))
        : tr("%1 trials, %2, seed %3, in %4 s.")
              .arg(QLocale().toString(qulonglong(mc.trials)), toQString(toString(mc.distribution)))
              .arg(mc.seed)
              .arg(m_lastRunMs / 1000.0, 0, 'f', 2);
    QStringList spread;
    for (const SpreadQuantity &q : mc.quantities)
        spread << quantityText(q);
    text += QStringLiteral(" ") + tr("Spread: %1.").arg(spread.join(QStringLiteral(", ")));
    if (mc.failed)
        text += QStringLiteral(" ") + tr("%1 trials had no circuit solution.").arg(mc.failed);
    if (mc.bandwidthHz.missing)
        text += QStringLiteral(" ")
            + tr("%1 trials have no −3 dB point inside the sweep.").arg(mc.bandwidthHz.missing);
    if (mc.phaseMarginDeg.missing)
        text += QStringLiteral(" ")
            + tr("%1 trials have no loop crossover.").arg(mc.phaseMarginDeg.missing);
    setMessage(text, false);
    showResult();
    emit runFinished();
}

void SpreadPanel::designChanged()
{
    if (m_running) {
        // The result would describe a design that no longer exists: drop it.
        stopWorker(false);
        ++m_generation;
        m_running = false;
        m_progressTimer->stop();
        m_progress->setValue(0);
        setBusy(false);
    }
    m_resultCurrent = false;
    updatePreview();
}

void SpreadPanel::optionsChanged()
{
    if (!m_running)
        updatePreview();
}

void SpreadPanel::updatePreview()
{
    auto quantities
        = spreadQuantities(m_document->design(), options(), toStdString(m_document->filePath()));
    if (!quantities) {
        setMessage(toQString(quantities.errorText()), true);
        m_run->setEnabled(false);
        return;
    }
    m_run->setEnabled(!m_running);
    QStringList spread;
    for (const SpreadQuantity &q : *quantities)
        spread << quantityText(q);
    const std::size_t n = quantities->size();
    QString text
        = tr("Spread: %1. Worst case: %2; Monte Carlo: %3 trials.")
              .arg(spread.join(QStringLiteral(", ")),
                   n <= std::size_t(kMaxVertexQuantities)
                       ? (n == 1 ? tr("both corners") : tr("all %1 corners").arg(cornerCount(n)))
                       : tr("sensitivity corners"),
                   QLocale().toString(m_trials->value()));
    if (m_result && !m_resultCurrent)
        text = tr("The design changed since the results below were computed; press Run for "
                  "the design as it is now.")
            + QStringLiteral(" ") + text;
    else if (!m_result)
        text += QStringLiteral(" ") + tr("Press Run.");
    setMessage(text, false);
}

void SpreadPanel::setBusy(bool busy)
{
    m_run->setEnabled(!busy);
    m_cancel->setEnabled(busy);
    for (QWidget *w : std::initializer_list<QWidget *>{m_trials, m_seed, m_distribution,
                                                       m_gainSpread, m_gbwSpread})
        w->setEnabled(!busy);
}

void SpreadPanel::setMessage(const QString &text, bool error)
{
    m_message->setText(text);
    m_message->setStyleSheet(error ? QStringLiteral("color: #b3261e;") : QString());
}

QString SpreadPanel::messageText() const
{
    return m_message->text();
}

QString SpreadPanel::methodText() const
{
    return m_method->text();
}

QString SpreadPanel::yieldText() const
{
    return m_yield->text();
}

QString SpreadPanel::cellText(Metric metric, Column column) const
{
    const QTableWidgetItem *item = m_table->item(int(metric), int(column));
    return item ? item->text() : QString();
}

QChart *SpreadPanel::histogramChart(Metric metric) const
{
    return m_histograms[int(metric)].view->chart();
}

void SpreadPanel::showResult()
{
    for (int r = 0; r < 3; ++r) {
        const auto metric = static_cast<Metric>(r);
        QStringList cells(7, kDash);
        if (m_result) {
            const MonteCarloResult &mc = m_result->monteCarlo;
            const WorstCaseResult &wc = m_result->worstCase;
            const auto fmt = [&](const OptionalNumber &v) {
                return v ? formatMetric(metric, *v, m_resultUnit) : kDash;
            };
            const MetricRange &range = rangeOf(wc, metric);
            const MetricStats &s = statsOf(mc, metric);
            cells[int(Column::Nominal)] = fmt(nominalOf(mc.nominal, metric));
            cells[int(Column::WorstMin)] = fmt(range.min);
            cells[int(Column::WorstMax)] = fmt(range.max);
            if (s.count > 0) {
                cells[int(Column::Min)] = formatMetric(metric, s.min, m_resultUnit);
                cells[int(Column::Mean)] = formatMetric(metric, s.mean, m_resultUnit);
                cells[int(Column::Max)] = formatMetric(metric, s.max, m_resultUnit);
                cells[int(Column::Std)] = formatMetric(metric, s.std, m_resultUnit);
            }
        }
        for (int c = 0; c < 7; ++c)
            m_table->item(r, c)->setText(cells[c]);
        showHistogram(metric);
    }
    if (!m_result) {
        m_method->clear();
        m_yield->clear();
        return;
    }
    const WorstCaseResult &wc = m_result->worstCase;
    const MonteCarloResult &mc = m_result->monteCarlo;
    m_method->setText(
        wc.exhaustive
            ? (wc.corners == 2 ? tr("Worst case: both corners of the tolerance box evaluated.")
                               : tr("Worst case: all %1 corners of the tolerance box evaluated.")
                                     .arg(wc.corners))
            : tr("Worst case: %1 sensitivity corners, an approximation (more than %2 toleranced "
                 "quantities).")
                  .arg(wc.corners)
                  .arg(kMaxVertexQuantities));
    if (mc.hasSpecs)
        m_yield->setText(tr("Yield %1 % (%2 of %3 trials meet every spec)")
                             .arg(mc.yield * 100.0, 0, 'f', 2)
                             .arg(QLocale().toString(qulonglong(mc.passed)),
                                  QLocale().toString(qulonglong(mc.completed))));
    else
        m_yield->setText(tr("Yield: the design has no specs"));
}

void SpreadPanel::showHistogram(Metric metric)
{
    Histogram &h = m_histograms[int(metric)];
    const MetricStats *s = m_result ? &statsOf(m_result->monteCarlo, metric) : nullptr;
    const std::string &unit = m_resultUnit;
    if (!s || s->count == 0 || s->histogram.empty()) {
        h.outline->clear();
        h.view->chart()->setTitle(QStringLiteral(" "));
        for (QLineSeries *l : {h.specLow, h.specHigh, h.nominal})
            l->clear();
        h.x->setTitleText(metric == Metric::PhaseMargin ? tr("phase margin (°)")
                                                        : axisName(metric));
        h.x->setRange(0, 1);
        h.x->setTickInterval(0.25);
        h.y->setRange(0, 10);
        h.y->setTickInterval(5);
        return;
    }
    // Specs that apply to this metric.
    std::vector<double> specs;
    if (metric == Metric::Gain) {
        if (m_resultSpecs.gainMin)
            specs.push_back(m_resultSpecs.gainMin->si);
        if (m_resultSpecs.gainMax)
            specs.push_back(m_resultSpecs.gainMax->si);
    } else if (metric == Metric::Bandwidth && m_resultSpecs.bandwidthMin) {
        specs.push_back(m_resultSpecs.bandwidthMin->si);
    } else if (metric == Metric::PhaseMargin && m_resultSpecs.phaseMarginMinDeg) {
        specs.push_back(*m_resultSpecs.phaseMarginMinDeg);
    }
    double lo = s->histogramLow, hi = s->histogramHigh;
    if (!(hi > lo)) {
        const double pad = std::max(std::abs(lo) * 1e-3, 1e-12);
        lo -= pad;
        hi += pad;
    }
    // Spec limits join the plot unless they are so far away that the histogram would
    // shrink to a sliver.
    const double span = hi - lo;
    double plotLo = lo, plotHi = hi;
    QStringList offPlot;
    for (double v : specs) {
        if (v >= lo - 3 * span && v <= hi + 3 * span) {
            plotLo = std::min(plotLo, v);
            plotHi = std::max(plotHi, v);
        } else {
            offPlot << (metric == Metric::Gain ? QString() : QStringLiteral("≥ "))
                    + formatMetric(metric, v, unit)
                    + (v < lo ? tr(", left of the plot") : tr(", right of the plot"));
        }
    }
    const double nominal = [&] {
        const OptionalNumber n = nominalOf(m_result->monteCarlo.nominal, metric);
        return n ? *n : std::nan("");
    }();
    // Axis in display units: a prefix for gain and bandwidth (MV/A, kHz), degrees as they are.
    ScalePrefix scale;
    QString unitText = QStringLiteral("°");
    if (metric != Metric::PhaseMargin) {
        scale = scalePrefixFor(std::max(std::abs(plotLo), std::abs(plotHi)));
        unitText = scale.prefix + (metric == Metric::Gain ? toQString(unit) : QStringLiteral("Hz"));
    }
    const double k = scale.factor;
    const double margin = (plotHi - plotLo) * 0.04;
    double xLo = (plotLo - margin) * k, xHi = (plotHi + margin) * k;
    const double step = niceStep(xHi - xLo, 4);
    xLo = std::floor(xLo / step) * step;
    xHi = std::ceil(xHi / step) * step;
    h.x->setRange(xLo, xHi);
    h.x->setTickInterval(step);
    const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
    h.x->setLabelFormat(QStringLiteral("%.%1f").arg(decimals));
    h.x->setTitleText(QStringLiteral("%1 (%2)").arg(axisName(metric), unitText));

    QList<QPointF> points;
    const std::size_t bins = s->histogram.size();
    const double width = (s->histogramHigh - s->histogramLow) / double(bins);
    std::size_t top = 1;
    points.reserve(qsizetype(2 * bins + 2));
    const double base = bins == 1 || !(width > 0) ? lo : s->histogramLow;
    const double binWidth = bins == 1 || !(width > 0) ? (hi - lo) : width;
    points << QPointF(base * k, 0);
    for (std::size_t b = 0; b < bins; ++b) {
        const double c = double(s->histogram[b]);
        top = std::max(top, s->histogram[b]);
        points << QPointF((base + double(b) * binWidth) * k, c)
               << QPointF((base + double(b + 1) * binWidth) * k, c);
    }
    points << QPointF((base + double(bins) * binWidth) * k, 0);
    h.outline->replace(points);
    const double yStep = niceStep(double(top) * 1.1, 4);
    h.y->setRange(0, std::ceil(double(top) * 1.1 / yStep) * yStep);
    h.y->setTickInterval(yStep);
    const double yTop = h.y->max();
    const auto vertical = [&](QLineSeries *line, double v) {
        if (std::isfinite(v))
            line->replace({QPointF(v * k, 0), QPointF(v * k, yTop)});
        else
            line->clear();
    };
    const auto shown = [&](std::size_t i) {
        if (i >= specs.size())
            return std::nan("");
        const double v = specs[i];
        return v >= lo - 3 * span && v <= hi + 3 * span ? v : std::nan("");
    };
    vertical(h.specLow, shown(0));
    vertical(h.specHigh, shown(1));
    vertical(h.nominal, nominal);
    // The spec values read in the tooltip; the lines show where they fall.
    QString tip = metricName(metric);
    if (!specs.empty()) {
        if (metric == Metric::Gain)
            tip += QStringLiteral(", ")
                + tr("spec %1 … %2")
                      .arg(m_resultSpecs.gainMin
                               ? formatMetric(metric, m_resultSpecs.gainMin->si, unit)
                               : QStringLiteral("−∞"),
                           m_resultSpecs.gainMax
                               ? formatMetric(metric, m_resultSpecs.gainMax->si, unit)
                               : QStringLiteral("+∞"));
        else
            tip += QStringLiteral(", ")
                + tr("spec ≥ %1").arg(formatMetric(metric, specs.front(), unit));
        if (!offPlot.isEmpty())
            tip += QStringLiteral(" ")
                + QStringLiteral("(%1)").arg(offPlot.join(QStringLiteral("; ")));
    }
    h.view->setToolTip(tip);
    // A blank title otherwise keeps the three plot areas level.
    h.view->chart()->setTitle(offPlot.isEmpty()
                                  ? QStringLiteral(" ")
                                  : tr("spec %1").arg(offPlot.join(QStringLiteral("; "))));
}

} // namespace loopsketch::ui
