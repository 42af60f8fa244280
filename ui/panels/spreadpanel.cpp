#include "panels/spreadpanel.h"

#include "panels/plotpanel.h"
#include "panels/spreadmetric.h"
#include "support/backgroundrun.h"
#include "support/errorline.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/value.h"
#include "loopsketch/feedback/exactsolution.h"

#include <QChart>
#include <QChartView>
#include <QComboBox>
#include <QDoubleSpinBox>
#include <QGridLayout>
#include <QHBoxLayout>
#include <QHeaderView>
#include <QLabel>
#include <QLocale>
#include <QProgressBar>
#include <QPushButton>
#include <QSpinBox>
#include <QTableWidget>
#include <QTimer>
#include <QVBoxLayout>

#include <algorithm>
#include <climits>
#include <cmath>
#include <functional>
#include <limits>

namespace loopsketch::ui {

namespace {

const QString kDash = QStringLiteral("—");

} // namespace

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
      m_yield(new QLabel(this)), m_noise(new QLabel(this)), m_table(new QTableWidget(3, 7, this)),
      m_background(new BackgroundRun(this))
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
    layout->addWidget(m_noise);
    layout->addWidget(m_method);
    layout->addLayout(plots, 1);
    layout->addWidget(legend);

    connect(m_background, &BackgroundRun::progressed, this,
            [this](std::size_t done, std::size_t total) {
                m_progress->setValue(static_cast<int>(std::min(done, total)));
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
    m_noise->setWordWrap(true);
    m_noise->setTextInteractionFlags(Qt::TextSelectableByMouse);
    m_noise->hide();
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

SpreadPanel::~SpreadPanel()
{
    m_background->stop();
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
    showStatus(m_message, text, error);
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

QString SpreadPanel::noiseText() const
{
    return m_noise->text();
}

QString SpreadPanel::cellText(Metric metric, Column column) const
{
    const QTableWidgetItem *item = m_table->item(int(metric), int(column));
    return item ? item->text() : QString();
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
    showNoise();
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

void SpreadPanel::showNoise()
{
    // Only a run whose trials computed the noise (core's MonteCarloResult::hasNoise: the
    // design has a noise spec) has noise figures; otherwise the line is hidden, not "—".
    if (!m_result || !m_result->monteCarlo.hasNoise) {
        m_noise->clear();
        m_noise->hide();
        return;
    }
    const MonteCarloResult &mc = m_result->monteCarlo;
    const WorstCaseResult &wc = m_result->worstCase;
    const auto line
        = [&](const QString &name, const OptionalNumber &nominal, const MetricRange &corners,
              const MetricStats &trials, const std::function<QString(double)> &fmt) {
              const auto opt = [&](const OptionalNumber &v) {
                  return v ? fmt(*v) : kDash;
              };
              QString text = tr("%1: nominal %2; worst case %3 … %4")
                                 .arg(name, opt(nominal), opt(corners.min), opt(corners.max));
              if (trials.count > 0)
                  text += tr("; Monte Carlo min %1, mean %2, max %3")
                              .arg(fmt(trials.min), fmt(trials.mean), fmt(trials.max));
              else
                  text += tr("; no trial has a figure");
              if (trials.missing > 0)
                  text += tr(" (%1 trials without one)")
                              .arg(QLocale().toString(qulonglong(trials.missing)));
              return text;
          };
    const std::string out = m_resultUnit.substr(0, m_resultUnit.find('/')) + " rms";
    QString text
        = line(tr("Output noise"), mc.nominal.outputNoiseRms, wc.outputNoiseRms, mc.outputNoiseRms,
               [&](double v) { return toQString(formatEngineering(v, 4, out)); });
    if (mc.snrDb.count > 0 || mc.nominal.snrDb)
        text += QStringLiteral("\n")
            + line(tr("SNR"), mc.nominal.snrDb, wc.snrDb, mc.snrDb,
                   [](double v) { return QString::number(v, 'f', 1) + QStringLiteral(" dB"); });
    m_noise->setText(text);
    m_noise->show();
}

} // namespace loopsketch::ui
