#pragma once

// Which number of a spread result belongs to which of the Spread panel's metrics (closed-loop
// gain, -3 dB bandwidth, phase margin), and the metrics' names: one table of them, shared
// by the panel's table, its run controller and its histograms.

#include "panels/spreadpanel.h"

#include "loopsketch/analysis/spread.h"

#include <QString>

namespace loopsketch::ui {

/// The Monte Carlo statistics of `m` (gain in the design's gain unit, bandwidth in Hz, phase
/// margin in degrees).
const MetricStats &statsOf(const MonteCarloResult &mc, SpreadPanel::Metric m);
/// The worst-case range of `m`, in the units of statsOf().
const MetricRange &rangeOf(const WorstCaseResult &w, SpreadPanel::Metric m);
/// The nominal design's value of `m`, in the units of statsOf().
OptionalNumber nominalOf(const TrialMetrics &t, SpreadPanel::Metric m);
/// The metric's name in a histogram's title ("closed-loop gain").
QString metricName(SpreadPanel::Metric m);
/// The short name on a histogram's axis ("gain").
QString axisName(SpreadPanel::Metric m);

} // namespace loopsketch::ui
