#pragma once

// Lean evaluation of one design variant for the spread and suggest searches: only the two
// reduced systems the three metrics need (exact gain, return ratio), sampled on a coarse
// grid and refined by bisection. A full LoopModel also builds the impedance and two-port
// systems, which would cost about as much again per trial.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/result.h"
#include "loopsketch/circuit/restamp.h"
#include "loopsketch/design/design.h"

#include <atomic>
#include <cstddef>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch {

/// The metrics of one trial. nullopt where a metric does not exist (no -3 dB point in the
/// grid, no loop crossover).
struct TrialMetrics
{
    OptionalNumber gain; ///< closed-loop DC gain of the exact solution, signed, gain unit
    OptionalNumber bandwidthHz; ///< closed-loop -3 dB frequency, Hz
    OptionalNumber phaseMarginDeg; ///< worst phase margin over all loop crossovers, degrees
    /// Output noise rms over the noise band, V (A for a current output); evaluateTrial()
    /// computes it only when the design has a noise spec (output_noise_max, snr_min_db).
    OptionalNumber outputNoiseRms;
    OptionalNumber inputNoiseRms; ///< outputNoiseRms / |gain| at the band's low end
    OptionalNumber snrDb; ///< full-scale sine (signal_level) over the noise, dB
    bool stable = true; ///< no closed-loop pole in the right half-plane or on the jw axis
    /// False when some closed-loop poles could not be located and none found is unstable:
    /// `stable` is false too, and the specs fail with the reason "stability unknown".
    bool stabilityKnown = true;
};

/// The metrics of a full analysis, for the spec check.
TrialMetrics trialMetricsOf(const Analysis &analysis);

/// Log-spaced grid over the design's sweep with `pointsPerDecade` (>= 1) points per decade,
/// start and stop included (Hz).
std::vector<double> coarseGrid(const Sweep &sweep, int pointsPerDecade);

/// The metrics of a valid design on `gridHz` (ascending, Hz): gain, bandwidth, phase margin,
/// and the noise rms and SNR when the design has a noise spec. Fails when the circuit has no
/// solution. Crossings are refined to 1e-10 relative in frequency.
Result<TrialMetrics> evaluateTrial(const Design &design, const std::vector<double> &gridHz);

/// What evaluateTrial() keeps between the trials of one worker: the two circuit systems of
/// its last trial and the values of `fields` they hold, re-stamped (restamp.h) for the next
/// trial's values instead of assembled anew where only those values changed.
struct TrialCache
{
    std::vector<FieldChange> fields; ///< part and field of each varied value; `from`: held
    /// The systems of the last trial, shared with its reduced systems (no copy per trial).
    std::shared_ptr<DescriptorSystem> full, returnRatio;
};

/// evaluateTrial() with `cache` (the same metrics, bit for bit: a re-stamped system is the
/// assembled one).
Result<TrialMetrics> evaluateTrial(const Design &design, const std::vector<double> &gridHz,
                                   TrialCache &cache);

/// Only the closed-loop DC gain (the cheap first stage of a search).
Result<double> evaluateDcGain(const Design &design);

/// Progress report: trials done so far and the total. Called from worker threads, one call
/// at a time.
using ProgressCallback = std::function<void(std::size_t done, std::size_t total)>;

/// Which of the design's specs a trial meets. A missing bandwidth (no -3 dB point inside the
/// sweep) meets bandwidth_min when the sweep ends above it; a missing phase margin (no
/// crossover) fails phase_margin_min_deg. An unstable trial fails every spec it has, with
/// the reason "unstable", and fails all() even without specs.
/// A missing noise rms (unstable, or no solution) fails output_noise_max and snr_min_db.
struct SpecCheck
{
    bool gain = true, bandwidth = true, phaseMargin = true;
    bool outputNoise = true, snr = true;
    bool stable = true;
    /// "unstable" (or "stability unknown") when every spec fails for that; else empty
    std::string reason;
    bool all() const { return stable && gain && bandwidth && phaseMargin && outputNoise && snr; }
    /// The number of the design's specs met (0 .. specCount()).
    int met(const Specs &specs) const;
    /// This check and `other` together: a spec passes only where it passes in both.
    SpecCheck &operator&=(const SpecCheck &other);
};

/// The number of specs the design states (gain window, bandwidth, phase margin, output
/// noise, SNR).
int specCount(const Specs &specs);

/// True when the design has output_noise_max or snr_min_db.
bool hasNoiseSpec(const Specs &specs);
SpecCheck checkSpecs(const Specs &specs, const Sweep &sweep, const TrialMetrics &metrics);

/// The verdict of every spec the design states, in the order gain, bandwidth, phase margin,
/// output noise, SNR.
/// `gainUnit` is the unit of the closed-loop gain ("V/V", "V/A" ...).
std::vector<SpecVerdict> specVerdicts(const Specs &specs, const Sweep &sweep,
                                      const TrialMetrics &metrics, std::string_view gainUnit);

/// The labels of the failing specs joined by ", " ("gain, phase margin"); empty when all pass.
std::string failingSpecLabels(const std::vector<SpecVerdict> &verdicts);

/// True when the design has at least one spec.
bool hasSpecs(const Specs &specs);

} // namespace loopsketch
