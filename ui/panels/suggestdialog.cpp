#include "panels/suggestdialog.h"

#include "support/backgroundrun.h"
#include "support/errorline.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/value.h"
#include "loopsketch/feedback/exactsolution.h"

#include <QComboBox>
#include <QDialogButtonBox>
#include <QDoubleSpinBox>
#include <QFormLayout>
#include <QHBoxLayout>
#include <QHeaderView>
#include <QLabel>
#include <QListWidget>
#include <QLocale>
#include <QProgressBar>
#include <QPushButton>
#include <QSet>
#include <QTableWidget>
#include <QVBoxLayout>

#include <algorithm>
#include <climits>
#include <cmath>

namespace loopsketch::ui {

namespace {

const QString kDash = QStringLiteral("—");
const QColor kPass(20, 110, 40);
const QColor kFail(170, 20, 20);

bool searchable(const Part &p)
{
    return p.type == PartType::Resistor || p.type == PartType::Capacitor
        || p.type == PartType::Inductor;
}

ValueKind kindOf(const Part &p)
{
    const FieldSpec *spec = findFieldSpec(p.type, p.primaryField());
    return spec ? spec->kind : ValueKind::Plain;
}

/// "1M0 · 1 MΩ": IEC 60062 RKM code and engineering form (inductors: engineering only).
QString valueText(const Part *p, double v)
{
    const ValueKind kind = p ? kindOf(*p) : ValueKind::Plain;
    const QString eng = toQString(formatValue(v, kind, 3));
    if (kind == ValueKind::Resistance || kind == ValueKind::Capacitance)
        return toQString(formatRkm(v, kind, 3)) + QStringLiteral(" · ") + eng;
    return eng;
}

} // namespace

struct SuggestDialog::Delivery
{
    QString error;
    std::optional<SuggestResult> result;
    std::string gainUnit;
};

SuggestDialog::SuggestDialog(DesignDocument *document, QWidget *parent)
    : QDialog(parent), m_document(document), m_parts(new QListWidget(this)),
      m_series(new QComboBox(this)), m_decades(new QDoubleSpinBox(this)),
      m_targets(new QLabel(this)), m_preview(new QLabel(this)),
      m_run(new QPushButton(tr("Search"), this)), m_cancel(new QPushButton(tr("Cancel"), this)),
      m_progress(new QProgressBar(this)), m_status(new QLabel(this)),
      m_table(new QTableWidget(this)), m_background(new BackgroundRun(this))
{
    setObjectName(QStringLiteral("SuggestDialog"));
    setWindowTitle(tr("Suggest values"));
    m_series->addItem(tr("each part's own"), -1);
    for (ESeries s : allESeries()) {
        if (s != ESeries::E3)
            m_series->addItem(toQString(toString(s)), int(s));
    }
    m_series->setCurrentIndex(0);
    m_series->setToolTip(tr("The E-series searched (IEC 60063): each part's own (E24 for a part "
                            "without one), or one series for every ticked part, which applying "
                            "a suggestion then also sets on them"));
    m_decades->setRange(0.5, 6);
    m_decades->setSingleStep(0.5);
    m_decades->setDecimals(1);
    m_decades->setValue(2);
    m_decades->setSuffix(tr(" decades"));
    m_decades->setToolTip(tr("Width of each part's range, centred on its current value: 2 "
                             "decades search from a tenth to ten times the value"));
    m_parts->setMaximumHeight(6 * m_parts->fontMetrics().height() + 8);
    m_parts->setToolTip(tr("Parts whose values are searched"));
    m_targets->setWordWrap(true);
    m_preview->setWordWrap(true);
    m_status->setWordWrap(true);
    m_status->setTextInteractionFlags(Qt::TextSelectableByMouse);
    m_cancel->setEnabled(false);
    m_progress->setRange(0, 1);
    m_progress->setValue(0);
    m_table->setEditTriggers(QAbstractItemView::NoEditTriggers);
    m_table->setSelectionBehavior(QAbstractItemView::SelectRows);
    m_table->setSelectionMode(QAbstractItemView::SingleSelection);
    m_table->verticalHeader()->hide();
    m_table->horizontalHeader()->setHighlightSections(false);
    m_table->setMinimumHeight(200);

    auto *form = new QFormLayout;
    form->addRow(tr("&Parts"), m_parts);
    auto *rangeRow = new QHBoxLayout;
    rangeRow->addWidget(m_series);
    auto *rangeLabel = new QLabel(tr("&Range"), this);
    rangeLabel->setBuddy(m_decades);
    rangeRow->addSpacing(12);
    rangeRow->addWidget(rangeLabel);
    rangeRow->addWidget(m_decades);
    rangeRow->addStretch(1);
    auto *seriesLabel = new QLabel(tr("&Series"), this);
    seriesLabel->setBuddy(m_series);
    form->addRow(seriesLabel, rangeRow);
    form->addRow(tr("Targets"), m_targets);
    auto *runRow = new QHBoxLayout;
    runRow->addWidget(m_run);
    runRow->addWidget(m_cancel);
    runRow->addWidget(m_progress, 1);

    auto *close = new QDialogButtonBox(QDialogButtonBox::Close, this);
    connect(close, &QDialogButtonBox::rejected, this, &QDialog::reject);

    auto *layout = new QVBoxLayout(this);
    layout->addLayout(form);
    layout->addWidget(m_preview);
    layout->addLayout(runRow);
    layout->addWidget(m_status);
    layout->addWidget(m_table, 1);
    auto *order = new QLabel(tr("Ranked: combinations meeting every spec first, then by the "
                                "smallest gain error against the window's centre, then by the "
                                "largest phase margin."),
                             this);
    order->setWordWrap(true);
    QFont small = order->font();
    small.setPointSizeF(small.pointSizeF() * 0.9);
    order->setFont(small);
    layout->addWidget(order);
    layout->addWidget(close);
    resize(860, 560);

    connect(m_background, &BackgroundRun::progressed, this,
            [this](std::size_t done, std::size_t total) {
                if (total > 0) {
                    m_progress->setRange(0, int(std::min<std::size_t>(total, INT_MAX)));
                    m_progress->setValue(int(std::min(done, total)));
                }
            });
    connect(m_run, &QPushButton::clicked, this, &SuggestDialog::run);
    connect(m_cancel, &QPushButton::clicked, this, &SuggestDialog::cancel);
    connect(m_parts, &QListWidget::itemChanged, this, &SuggestDialog::updatePreview);
    connect(m_series, &QComboBox::currentIndexChanged, this, &SuggestDialog::updatePreview);
    connect(m_decades, &QDoubleSpinBox::valueChanged, this, &SuggestDialog::updatePreview);
    connect(m_document, &DesignDocument::partChanged, this, &SuggestDialog::designChanged);
    connect(m_document, &DesignDocument::structureChanged, this, &SuggestDialog::designChanged);
    connect(m_document, &DesignDocument::designReset, this, [this] {
        m_parts->clear();
        designChanged();
    });
    rebuildParts();
    updateTargets();
    updatePreview();
    showResult();
}

SuggestDialog::~SuggestDialog()
{
    m_background->stop();
}

bool SuggestDialog::isRunning() const
{
    return m_background->isRunning();
}

double SuggestDialog::lastRunMs() const
{
    return m_background->lastRunMs();
}

QStringList SuggestDialog::offeredParts() const
{
    QStringList ids;
    for (int i = 0; i < m_parts->count(); ++i)
        ids << m_parts->item(i)->data(Qt::UserRole).toString();
    return ids;
}

void SuggestDialog::setPartChecked(const QString &id, bool checked)
{
    for (int i = 0; i < m_parts->count(); ++i) {
        QListWidgetItem *item = m_parts->item(i);
        if (item->data(Qt::UserRole).toString() == id)
            item->setCheckState(checked ? Qt::Checked : Qt::Unchecked);
    }
}

QStringList SuggestDialog::checkedParts() const
{
    QStringList ids;
    for (int i = 0; i < m_parts->count(); ++i) {
        if (m_parts->item(i)->checkState() == Qt::Checked)
            ids << m_parts->item(i)->data(Qt::UserRole).toString();
    }
    return ids;
}

void SuggestDialog::setSeries(std::optional<ESeries> series)
{
    m_series->setCurrentIndex(m_series->findData(series ? int(*series) : -1));
}

std::optional<ESeries> SuggestDialog::series() const
{
    const int chosen = m_series->currentData().toInt();
    if (chosen < 0)
        return std::nullopt;
    return static_cast<ESeries>(chosen);
}

void SuggestDialog::setDecades(double decades)
{
    m_decades->setValue(decades);
}

void SuggestDialog::rebuildParts()
{
    const Design &d = m_document->design();
    QSet<QString> checked;
    const bool first = m_parts->count() == 0;
    for (const QString &id : checkedParts())
        checked.insert(id);
    if (first) {
        // First time: the feedback network's parts, as the analysis found them.
        if (const Analysis *a = m_document->analysis(); a && a->topology) {
            for (const std::string &id : a->topology->networkParts)
                checked.insert(toQString(id));
        }
    }
    const QSignalBlocker block(m_parts);
    m_parts->clear();
    for (const Part &p : d.parts) {
        if (!searchable(p))
            continue;
        const QString id = toQString(p.id);
        QString text = id + QStringLiteral("   ") + toQString(partSpec(p.type).typeName);
        if (p.has(p.primaryField()))
            text += QStringLiteral(", ") + valueText(&p, p.number(p.primaryField()));
        if (p.series)
            text += QStringLiteral(", ") + toQString(toString(*p.series));
        auto *item = new QListWidgetItem(text, m_parts);
        item->setData(Qt::UserRole, id);
        item->setFlags(Qt::ItemIsUserCheckable | Qt::ItemIsEnabled);
        item->setCheckState(checked.contains(id) ? Qt::Checked : Qt::Unchecked);
    }
}

void SuggestDialog::updateTargets()
{
    const Design &d = m_document->design();
    const Specs &s = d.specs;
    const std::string unit = gainUnit(d);
    if (!s.gainMin || !s.gainMax) {
        m_targets->setText(tr("The design's specs give no gain window, and the search needs one "
                              "as its target: add \"gain\": [min, max] to the specs."));
        m_targets->setStyleSheet(QStringLiteral("color: #b3261e;"));
        return;
    }
    m_targets->setStyleSheet(QString());
    QStringList parts;
    const double centre = (s.gainMin->si + s.gainMax->si) / 2.0;
    parts << tr("gain %1 … %2 (aiming at %3)")
                 .arg(toQString(formatEngineering(s.gainMin->si, 4, unit)),
                      toQString(formatEngineering(s.gainMax->si, 4, unit)),
                      toQString(formatEngineering(centre, 4, unit)));
    parts << (s.bandwidthMin ? tr("bandwidth ≥ %1")
                                   .arg(toQString(formatEngineering(s.bandwidthMin->si, 3, "Hz")))
                             : tr("no minimum bandwidth"));
    parts << (s.phaseMarginMinDeg ? tr("phase margin ≥ %1°").arg(*s.phaseMarginMinDeg)
                                  : tr("no minimum phase margin"));
    m_targets->setText(parts.join(QStringLiteral("; ")));
}

QString SuggestDialog::previewText() const
{
    return m_preview->text();
}

void SuggestDialog::updatePreview()
{
    const Design &d = m_document->design();
    const QStringList ids = checkedParts();
    bool ok = d.specs.gainMin && d.specs.gainMax && !ids.isEmpty() && !m_background->isRunning();
    QString text;
    if (ids.isEmpty()) {
        text = tr("Tick the parts whose values are searched.");
    } else {
        const double half = std::pow(10.0, m_decades->value() / 2.0);
        double combinations = 1;
        QStringList counts;
        for (const QString &id : ids) {
            const Part *p = d.findPart(toStdString(id));
            if (!p || !p->has(p->primaryField()))
                continue;
            const double v = p->number(p->primaryField());
            const ESeries s = series().value_or(p->series.value_or(ESeries::E24));
            const std::size_t n = valuesInRange(s, v / half, v * half).size();
            combinations *= double(n);
            counts << tr("%1: %2 %3 values").arg(id).arg(n).arg(toQString(toString(s)));
        }
        const auto [design, options] = searchRequest();
        const auto plan = planSuggest(design, options);
        text
            = tr("Searches %1; %2 combinations.")
                  .arg(counts.join(QStringLiteral(", ")), QLocale().toString(combinations, 'f', 0));
        if (plan) {
            // combinations the DC gain decides together (a capacitor's values) or by bisection
            // (a resistor's series) are not computed one by one
            if (plan->evaluations < plan->combinations)
                text += QStringLiteral(" ")
                    + tr("At least %1 DC gains computed.")
                          .arg(QLocale().toString(qulonglong(plan->evaluations)));
        } else if (d.specs.gainMin && d.specs.gainMax) {
            text += QStringLiteral(" ") + toQString(plan.diagnostics().front().message);
            ok = false;
        }
    }
    m_preview->setText(text);
    m_run->setEnabled(ok);
}

std::pair<Design, SuggestOptions> SuggestDialog::searchRequest() const
{
    Design design = m_document->design();
    SuggestOptions options;
    for (const QString &id : checkedParts())
        options.parts.push_back(toStdString(id));
    if (const std::optional<ESeries> chosen = series())
        for (const std::string &id : options.parts)
            if (Part *p = design.findPart(id))
                p->series = chosen;
    options.series = ESeries::E24; // for parts that give none
    options.decades = m_decades->value();
    options.best = kBest;
    return {std::move(design), std::move(options)};
}

void SuggestDialog::run()
{
    auto [design, options] = searchRequest();
    const std::optional<ESeries> chosen = series();
    const std::string file = toStdString(m_document->filePath());
    m_background->start(
        [design = std::move(design), options, file](BackgroundRun::State &state) {
            Delivery delivery;
            delivery.gainUnit = gainUnit(design);
            SuggestOptions o = options;
            o.cancel = &state.cancel;
            o.progress = [&state](std::size_t done, std::size_t total) {
                state.total = total;
                state.done = done;
            };
            auto found = suggestValues(design, o, file);
            if (found)
                delivery.result = std::move(found).value();
            else
                delivery.error = toQString(found.errorText());
            return delivery;
        },
        [this](Delivery delivery) { deliver(std::move(delivery)); });
    m_result.reset();
    m_resultSeries = chosen;
    showResult();
    setBusy(true);
    m_progress->setRange(0, 0);
    setStatus(tr("Searching…"), false);
}

void SuggestDialog::cancel()
{
    if (!m_background->isRunning())
        return;
    m_background->cancel();
    m_cancel->setEnabled(false);
    setStatus(tr("Cancelling…"), false);
}

void SuggestDialog::deliver(Delivery delivery)
{
    setBusy(false);
    m_progress->setRange(0, 1);
    m_progress->setValue(delivery.result ? 1 : 0);
    if (!delivery.result) {
        setStatus(delivery.error, true);
        emit searchFinished();
        return;
    }
    m_result = std::move(delivery.result);
    m_resultUnit = delivery.gainUnit;
    const SuggestResult &r = *m_result;
    QString text = r.cancelled
        ? tr("Cancelled after %1 of %2 combinations; the best of those are listed.")
              .arg(QLocale().toString(qulonglong(r.evaluated)),
                   QLocale().toString(qulonglong(r.combinations)))
        : tr("%1 combinations searched in %2 s.")
              .arg(QLocale().toString(qulonglong(r.combinations)))
              .arg(lastRunMs() / 1000.0, 0, 'f', 2);
    if (r.failed)
        text += QStringLiteral(" ") + tr("%1 had no circuit solution.").arg(r.failed);
    const bool unmet = !r.targetsMet;
    if (unmet)
        text += QStringLiteral(" ") + toQString(r.unmet) + QStringLiteral(".");
    else if (!r.worstCaseMet)
        text += QStringLiteral(" ")
            + tr("No row meets every spec at the worst case over the tolerances.");
    if (!r.yieldNote.empty()) {
        QString note = toQString(r.yieldNote);
        note[0] = note[0].toUpper();
        text += QStringLiteral(" ") + note + QStringLiteral(".");
    }
    text += QStringLiteral(" ")
        + tr("Ranked by specs met at the worst case, then yield, then %1, then closeness to the "
             "current values.")
              .arg(r.noiseObjective ? tr("output noise") : tr("gain error"));
    setStatus(text, unmet);
    showResult();
    emit searchFinished();
}

void SuggestDialog::showResult()
{
    m_table->clear();
    QStringList headers{QStringLiteral("#")};
    const SuggestResult *r = result();
    if (r) {
        for (const SuggestRange &range : r->ranges)
            headers << toQString(range.part);
    }
    headers << tr("gain") << tr("gain error") << tr("bandwidth") << tr("phase margin")
            << tr("output noise") << tr("specs") << tr("worst case") << tr("yield") << QString();
    m_table->setColumnCount(int(headers.size()));
    m_table->setHorizontalHeaderLabels(headers);
    m_table->setRowCount(r ? int(r->suggestions.size()) : 0);
    if (!r)
        return;
    const Design &d = m_document->design();
    const auto setCell = [this](int row, int col, const QString &text,
                                Qt::Alignment align = Qt::AlignRight | Qt::AlignVCenter,
                                const QColor &colour = QColor()) {
        auto *item = new QTableWidgetItem(text);
        item->setTextAlignment(align);
        if (colour.isValid())
            item->setForeground(colour);
        m_table->setItem(row, col, item);
    };
    for (int row = 0; row < int(r->suggestions.size()); ++row) {
        const Suggestion &s = r->suggestions[std::size_t(row)];
        int col = 0;
        setCell(row, col++, QString::number(row + 1), Qt::AlignCenter);
        for (const auto &[id, v] : s.values)
            setCell(row, col++, valueText(d.findPart(id), v));
        setCell(row, col++,
                s.metrics.gain ? toQString(formatEngineering(*s.metrics.gain, 5, m_resultUnit))
                               : kDash);
        setCell(row, col++,
                s.gainErrorPct ? QString::asprintf("%+.3f %%", *s.gainErrorPct) : kDash);
        setCell(row, col++,
                s.metrics.bandwidthHz
                    ? toQString(formatEngineering(*s.metrics.bandwidthHz, 3, "Hz"))
                    : tr("above the sweep"));
        setCell(row, col++, degrees(s.metrics.phaseMarginDeg));
        setCell(row, col++,
                s.metrics.outputNoiseRms ? toQString(formatEngineering(
                    *s.metrics.outputNoiseRms, 3, m_resultUnit.substr(0, m_resultUnit.find('/'))))
                                         : kDash);
        QStringList missed;
        if (!s.specs.gain)
            missed << tr("gain");
        if (!s.specs.bandwidth)
            missed << tr("bandwidth");
        if (!s.specs.phaseMargin)
            missed << tr("margin");
        if (!s.specs.outputNoise)
            missed << tr("noise");
        if (!s.specs.snr)
            missed << tr("SNR");
        setCell(row, col++,
                s.meetsSpecs ? tr("pass") : tr("fail: %1").arg(missed.join(QStringLiteral(", "))),
                Qt::AlignLeft | Qt::AlignVCenter, s.meetsSpecs ? kPass : kFail);
        // Over the tolerance box (core's worstCase() on this row) and its Monte Carlo yield.
        setCell(row, col++,
                s.worstCasePass    ? tr("pass")
                    : s.meetsSpecs ? tr("nominal only")
                                   : tr("fail"),
                Qt::AlignLeft | Qt::AlignVCenter, s.worstCasePass ? kPass : kFail);
        // A yield that could not be computed is a dash with the reason, never "0.0 %".
        setCell(row, col++,
                !s.yieldProblem.empty()
                    ? QStringLiteral("—")
                    : QString::number(100.0 * s.yield, 'f', 1) + QStringLiteral(" %")
                        + (s.toleranced ? QString() : tr(" (no tolerances)")));
        m_table->item(row, col - 1)
            ->setToolTip(!s.yieldProblem.empty()
                             ? tr("No yield: %1").arg(toQString(s.yieldProblem))
                             : tr("%1 Monte Carlo trials, uniform over the tolerances, seed %2")
                                   .arg(r->yieldTrials)
                                   .arg(r->seed));
        auto *apply = new QPushButton(tr("Apply"), m_table);
        apply->setObjectName(QStringLiteral("ApplySuggestion%1").arg(row));
        apply->setToolTip(tr("Set these values in the design (one undo step)"));
        // Queued: applying rebuilds the table, which deletes this button.
        connect(
            apply, &QPushButton::clicked, this, [this, row] { applySuggestion(row); },
            Qt::QueuedConnection);
        m_table->setCellWidget(row, col, apply);
    }
    m_table->resizeColumnsToContents();
    m_table->horizontalHeader()->setStretchLastSection(false);
    for (int c = 1; c < m_table->columnCount() - 1; ++c)
        m_table->horizontalHeader()->setSectionResizeMode(c, QHeaderView::Stretch);
}

bool SuggestDialog::applySuggestion(int row)
{
    if (!m_result || row < 0 || row >= int(m_result->suggestions.size()))
        return false;
    const Suggestion s = m_result->suggestions[std::size_t(row)];
    QStringList text;
    for (const auto &[id, v] : s.values)
        text << QStringLiteral("%1 = %2").arg(toQString(id), toQString(formatEngineering(v, 3)));
    const QString summary = text.join(QStringLiteral(", "));
    m_applying = true;
    m_document->applyValues(s.values, m_resultSeries, tr("Apply suggestion: %1").arg(summary));
    m_applying = false;
    setStatus(tr("Applied %1. Edit ▸ Undo restores the previous values.").arg(summary), false);
    return true;
}

void SuggestDialog::designChanged()
{
    if (m_background->isRunning()) {
        m_background->drop();
        m_progress->setRange(0, 1);
        m_progress->setValue(0);
        setBusy(false);
        setStatus(tr("The design changed, so the search was stopped."), false);
    } else if (m_result && !m_applying) {
        setStatus(tr("The design changed; search again for suggestions that fit it."), false);
    }
    m_result.reset();
    showResult();
    rebuildParts();
    updateTargets();
    updatePreview();
}

void SuggestDialog::setBusy(bool busy)
{
    m_cancel->setEnabled(busy);
    m_parts->setEnabled(!busy);
    m_series->setEnabled(!busy);
    m_decades->setEnabled(!busy);
    if (busy)
        m_run->setEnabled(false);
    else
        updatePreview();
}

void SuggestDialog::setStatus(const QString &text, bool error)
{
    showStatus(m_status, text, error);
}

QString SuggestDialog::targetsText() const
{
    return m_targets->text();
}

QString SuggestDialog::statusText() const
{
    return m_status->text();
}

QString SuggestDialog::cellText(int row, int column) const
{
    const QTableWidgetItem *item = m_table->item(row, column);
    return item ? item->text() : QString();
}

int SuggestDialog::resultRows() const
{
    return m_table->rowCount();
}

} // namespace loopsketch::ui
