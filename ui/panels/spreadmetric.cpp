#include "panels/spreadmetric.h"

#include "loopsketch/base/lookup.h"

#include <QObject>

#include <array>

namespace loopsketch::ui {

namespace {

/// Where each result keeps a metric's numbers, and the metric's names.
struct MetricFacts
{
    SpreadPanel::Metric metric;
    MetricStats MonteCarloResult::*stats;
    MetricRange WorstCaseResult::*range;
    OptionalNumber TrialMetrics::*nominal;
    const char *name;
    const char *axis;
};

constexpr std::array<MetricFacts, 3> kMetrics{
    {{SpreadPanel::Metric::Gain, &MonteCarloResult::gain, &WorstCaseResult::gain,
      &TrialMetrics::gain, QT_TR_NOOP("closed-loop gain"), QT_TR_NOOP("gain")},
     {SpreadPanel::Metric::Bandwidth, &MonteCarloResult::bandwidthHz, &WorstCaseResult::bandwidthHz,
      &TrialMetrics::bandwidthHz, QT_TR_NOOP("−3 dB bandwidth"), QT_TR_NOOP("bandwidth")},
     {SpreadPanel::Metric::PhaseMargin, &MonteCarloResult::phaseMarginDeg,
      &WorstCaseResult::phaseMarginDeg, &TrialMetrics::phaseMarginDeg, QT_TR_NOOP("phase margin"),
      QT_TR_NOOP("phase margin")}}};

/// The facts of `m`; phase margin's for a value outside the enum.
const MetricFacts &factsOf(SpreadPanel::Metric m)
{
    const MetricFacts *facts = findRow(kMetrics, &MetricFacts::metric, m);
    return facts ? *facts : kMetrics.back();
}

} // namespace

const MetricStats &statsOf(const MonteCarloResult &mc, SpreadPanel::Metric m)
{
    return mc.*factsOf(m).stats;
}

const MetricRange &rangeOf(const WorstCaseResult &w, SpreadPanel::Metric m)
{
    return w.*factsOf(m).range;
}

OptionalNumber nominalOf(const TrialMetrics &t, SpreadPanel::Metric m)
{
    return t.*factsOf(m).nominal;
}

QString metricName(SpreadPanel::Metric m)
{
    return QObject::tr(factsOf(m).name);
}

QString axisName(SpreadPanel::Metric m)
{
    return QObject::tr(factsOf(m).axis);
}

} // namespace loopsketch::ui
