// The Spread panel's run controller: the options of a run, the worker thread that runs core's
// worst case and Monte Carlo, progress and cancel, and the hand-over of a result to the GUI
// thread (a run a newer one or a design change superseded is dropped).
#include "panels/spreadpanel.h"

#include "support/backgroundrun.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include <QComboBox>
#include <QDoubleSpinBox>
#include <QLocale>
#include <QProgressBar>
#include <QPushButton>
#include <QSpinBox>

#include <algorithm>
#include <climits>

namespace loopsketch::ui {

namespace {

constexpr int kBins = 24;

QString quantityText(const SpreadQuantity &q)
{
    return QStringLiteral("%1 %2 ±%3 %")
        .arg(toQString(q.part), toQString(q.field), QString::number(q.tolerance * 100, 'g', 3));
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
    QString error;
    std::optional<WorstCaseResult> worst;
    std::optional<MonteCarloResult> monteCarlo;
    std::string gainUnit;
    Specs specs;
};

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

void SpreadPanel::run()
{
    const Design design = m_document->design();
    const SpreadOptions base = options();
    const std::string file = toStdString(m_document->filePath());
    auto quantities = spreadQuantities(design, base, file);
    if (!quantities) {
        setMessage(toQString(quantities.errorText()), true);
        return;
    }
    const std::size_t corners = cornerCount(quantities->size());
    const std::size_t total = corners + static_cast<std::size_t>(base.trials);
    m_userCancelled = false;
    m_background->start(
        [design, base, file, corners](BackgroundRun::State &state) {
            Delivery delivery;
            delivery.gainUnit = gainUnit(design);
            delivery.specs = design.specs;
            SpreadOptions o = base;
            o.cancel = &state.cancel;
            o.progress = [&state](std::size_t done, std::size_t) {
                state.done = done;
            };
            auto worst = worstCase(design, o, file);
            if (!worst) {
                delivery.error = toQString(worst.errorText());
                return delivery;
            }
            delivery.worst = std::move(worst).value();
            if (delivery.worst->cancelled)
                return delivery;
            o.progress = [&state, corners](std::size_t done, std::size_t) {
                state.done = corners + done;
            };
            auto mc = monteCarlo(design, o, file);
            if (!mc)
                delivery.error = toQString(mc.errorText());
            else
                delivery.monteCarlo = std::move(mc).value();
            return delivery;
        },
        [this](Delivery delivery) { deliver(std::move(delivery)); },
        [this](const Delivery &delivery) {
            emit runDiscarded(delivery.monteCarlo ? delivery.monteCarlo->completed : 0);
        },
        total);
    setBusy(true);
    m_progress->setRange(0, static_cast<int>(std::min<std::size_t>(total, INT_MAX)));
    m_progress->setValue(0);
    m_progress->setFormat(QStringLiteral("%p %"));
    setMessage(tr("Running %1 worst-case corners and %2 Monte Carlo trials…")
                   .arg(corners)
                   .arg(QLocale().toString(base.trials)),
               false);
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

bool SpreadPanel::isRunning() const
{
    return m_background->isRunning();
}

std::size_t SpreadPanel::progressDone() const
{
    return m_background->done();
}

double SpreadPanel::lastRunMs() const
{
    return m_background->lastRunMs();
}

void SpreadPanel::cancel()
{
    if (!m_background->isRunning())
        return;
    m_userCancelled = true;
    m_background->cancel();
    m_cancel->setEnabled(false);
    setMessage(tr("Cancelling…"), false);
}

void SpreadPanel::deliver(Delivery delivery)
{
    setBusy(false);
    const bool userCancelled = m_userCancelled;
    if (!delivery.error.isEmpty()) {
        setMessage(delivery.error, true);
        emit runFinished();
        return;
    }
    if (!delivery.monteCarlo) {
        m_progress->setValue(0);
        setMessage(tr("Cancelled during the worst case; nothing to show. Press Run to start "
                      "again."),
                   false);
        emit runFinished();
        return;
    }
    m_result = SheetSpread{std::move(*delivery.worst), std::move(*delivery.monteCarlo)};
    m_resultUnit = delivery.gainUnit;
    m_resultSpecs = delivery.specs;
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
              .arg(lastRunMs() / 1000.0, 0, 'f', 2);
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
    if (m_background->isRunning()) {
        // The result would describe a design that no longer exists: drop it.
        m_background->drop();
        m_progress->setValue(0);
        setBusy(false);
    }
    m_resultCurrent = false;
    updatePreview();
}

void SpreadPanel::optionsChanged()
{
    if (!m_background->isRunning())
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
    m_run->setEnabled(!m_background->isRunning());
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

} // namespace loopsketch::ui
