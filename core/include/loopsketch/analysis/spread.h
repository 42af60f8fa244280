#pragma once

// Tolerance spread: how part tolerances and the gain block's spread move the closed-loop
// gain, bandwidth and phase margin. Worst case by corners, and Monte Carlo.

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/limits.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <atomic>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch {

enum class SpreadDistribution {
    Uniform, ///< uniform over nominal * (1 +- tolerance)
    Normal, ///< normal, tolerance = 3 sigma (not truncated; a non-positive draw is redrawn)
};

/// One toleranced quantity: a part field and its relative tolerance.
struct SpreadQuantity
{
    std::string part; ///< part id
    std::string field; ///< "value", "r", "gain", "gbw"
    double nominal = 0; ///< SI
    double tolerance = 0; ///< fraction, 0 < tolerance < 1
};

/// The Monte Carlo trials of a run the user does not size: the review sheet's spread section
/// (`loopsketch export`, File > Export) and the Spread panel's starting value.
inline constexpr int kDefaultMonteCarloTrials = 2000;

struct SpreadOptions
{
    int trials = 1000; ///< Monte Carlo trials, 1 .. kMaxTrials
    std::uint64_t seed = 1;
    SpreadDistribution distribution = SpreadDistribution::Uniform;
    std::optional<double> gainSpread; ///< fraction on the gain block's gain (e.g. 0.5)
    std::optional<double> gbwSpread; ///< fraction on the gain block's gbw
    int threads = 0; ///< worker threads, 0: std::thread::hardware_concurrency()
    int histogramBins = 20; ///< 1 .. 1000
    int pointsPerDecade = 10; ///< coarse grid for the trial metrics, 1 .. 1000
    ProgressCallback progress; ///< optional, from worker threads
    const std::atomic<bool> *cancel = nullptr; ///< optional; true stops the run early
};

/// Statistics of one metric over the trials where it exists.
struct MetricStats
{
    std::size_t count = 0; ///< trials where the metric exists
    std::size_t missing = 0; ///< trials where it does not (e.g. no crossover)
    double min = 0, mean = 0, max = 0;
    double std = 0; ///< sample standard deviation (n - 1), 0 for one trial
    double histogramLow = 0, histogramHigh = 0; ///< the bins span [low, high]
    std::vector<std::size_t> histogram; ///< equal-width bins, counts
};

struct MonteCarloResult
{
    std::vector<SpreadQuantity> quantities;
    SpreadDistribution distribution = SpreadDistribution::Uniform;
    std::uint64_t seed = 0;
    std::size_t trials = 0; ///< requested
    std::size_t completed = 0; ///< run (fewer when cancelled)
    std::size_t failed = 0; ///< trials whose circuit had no solution
    bool cancelled = false;
    TrialMetrics nominal;
    MetricStats gain, bandwidthHz, phaseMarginDeg; ///< gain unit, Hz, degrees
    /// True when the trials computed the noise (the design has a noise spec: the trials
    /// evaluate it only then, see evaluateTrial()); the two statistics below are empty else.
    bool hasNoise = false;
    /// Output noise rms over the noise band (V, or A for a current output) and SNR (dB)
    /// over the trials; a trial without a figure (unstable, no solution) counts as missing.
    MetricStats outputNoiseRms, snrDb;
    bool hasSpecs = false;
    std::size_t passed = 0; ///< completed trials meeting every spec
    double yield = 0; ///< passed / completed, 0 .. 1 (meaningful when hasSpecs)
};

/// The range of one metric over the corners, with the corner (one sign per quantity, -1 or
/// +1) that gives each end.
struct MetricRange
{
    OptionalNumber min, max;
    std::vector<int> minCorner, maxCorner;
};

struct WorstCaseResult
{
    std::vector<SpreadQuantity> quantities;
    /// True: every vertex of the tolerance box was evaluated (up to kMaxVertexQuantities).
    /// False: sensitivity corners (see worstCase()), an approximation.
    bool exhaustive = true;
    std::size_t corners = 0; ///< corners evaluated
    bool cancelled = false;
    TrialMetrics nominal;
    MetricRange gain, bandwidthHz, phaseMarginDeg;
    /// Output noise rms (V or A) and SNR (dB) over the corners: only with a noise spec.
    MetricRange outputNoiseRms, snrDb;
    /// Each spec's verdict at every corner evaluated: a spec passes only where it passes at
    /// all of them (checkSpecs() per corner, combined).
    SpecCheck specsAtCorners;
};

/// The toleranced quantities of a design: every part with a tolerance on its primary value,
/// the signal source's r_parallel and c_parallel with r_parallel_tolerance and
/// c_parallel_tolerance, the gain block's gbw with gbw_tolerance, plus the gain block's gain
/// and gbw when the options give their spreads (the options' gbw spread wins over the
/// file's gbw_tolerance). Fails, naming
/// part and field, when there are none or a spread is out of range.
Result<std::vector<SpreadQuantity>>
spreadQuantities(const Design &design, const SpreadOptions &options, std::string_view file = {});

/// Worst case over the tolerance box. Up to kMaxVertexQuantities quantities: all 2^n
/// vertices. Beyond: for each metric, the signs of its sensitivities to each quantity
/// (central differences at +-1 % of each tolerance) pick the corner that should push it
/// highest and the opposite corner; exact only when the metric is monotonic in every
/// quantity over the box.
Result<WorstCaseResult> worstCase(const Design &design, const SpreadOptions &options,
                                  std::string_view file = {});

/// Monte Carlo: trial i draws from std::mt19937_64 seeded from (seed, i) alone, so the
/// numbers are the same for any thread count.
Result<MonteCarloResult> monteCarlo(const Design &design, const SpreadOptions &options,
                                    std::string_view file = {});

/// Statistics of `values` (NaN = missing) with `bins` histogram bins.
MetricStats metricStats(const std::vector<double> &values, int bins);

/// "uniform" / "normal".
std::string toString(SpreadDistribution distribution);
std::optional<SpreadDistribution> parseSpreadDistribution(std::string_view text);

/// JSON (schema loopsketch.spread/1) and terminal text of a spread run.
std::string spreadToJson(const WorstCaseResult &worst, const MonteCarloResult &monteCarlo,
                         const std::string &gainUnit);
std::string spreadToText(const WorstCaseResult &worst, const MonteCarloResult &monteCarlo,
                         const std::string &gainUnit);

} // namespace loopsketch
