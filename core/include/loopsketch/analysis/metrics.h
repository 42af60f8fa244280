#pragma once

// Stability and response metrics from a LoopModel: crossings are located on the sweep and
// refined by bisection on the model itself, not read off the grid.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/feedback/loopmodel.h"

#include <span>
#include <vector>

namespace loopsketch {

/// Unwraps phases (rad) so that successive values differ by less than pi, starting from
/// `start` (the phase at DC).
std::vector<double> unwrapPhase(const Curve &values, double start);

/// Frequencies (Hz, ascending) beyond the sweep where the loop still acts: below its start
/// down to a hundredth of the slowest of `poles` (rad/s), above its stop up to a hundred
/// times the fastest, ten per decade, at most six decades beyond either end.
struct BeyondSweep
{
    std::vector<double> below, above;
};
BeyondSweep frequenciesBeyondSweep(const std::vector<double> &sweepHz,
                                   const std::vector<std::complex<double>> &poles);

/// Loop crossover, phase margin and every gain margin of T(s) = model.loopGainAt(s), from
/// T sampled at `frequenciesHz` (ascending; the sweep, extended beyond it where crossings
/// may lie) and refined on the model. The phase is unwrapped from DC (a loop gain negative
/// at DC, positive feedback, starts at -180 deg). What it finds besides the crossover and
/// phase margin, each left out where not asked for (a scan row that reads neither):
struct MarginParts
{
    bool gainMargins = true; ///< every phase crossing and its gain margin
    bool nearCrossover = true; ///< Margins::nearCrossover, the review sheet's table
};
Margins computeMargins(const LoopModel &model, const std::vector<double> &frequenciesHz,
                       const Curve &loopGain, std::complex<double> loopGainDc,
                       MarginParts parts = {});

/// The rate of closure (dB/decade) at the crossover `crossoverHz`: minus the slope of
/// 20 log10 |T| over log10 f there, from the model by a central difference of 1e-4 decade.
/// nullopt without a crossover or where T is not finite there.
OptionalNumber rateOfClosure(const LoopModel &model, OptionalNumber crossoverHz);

/// The closed-loop verdict from the poles: unstable with a pole in the right half-plane or
/// on the imaginary axis.
struct Stability
{
    bool stable = true;
    int rhpPoles = 0; ///< Re s > 0
    int axisPoles = 0; ///< on the imaginary axis (within 1e-9 of |s|)
    std::string reason; ///< empty when stable
};
Stability assessStability(const std::vector<ClosedLoopPole> &poles);

/// Closed-loop -3 dB bandwidth (Hz) of the exact gain; nullopt when it never falls 3 dB.
OptionalNumber computeBandwidth(const LoopModel &model, const std::vector<double> &frequenciesHz,
                                const Curve &gain, double gainDc);
/// The same with the gain swept on the model at `points` (s = j 2 pi f of each of
/// `frequenciesHz`) only as far as the fall: for a scan row that reads no more of the curve.
OptionalNumber bandwidthSweptToFall(const LoopModel &model,
                                    const std::vector<double> &frequenciesHz,
                                    std::span<const std::complex<double>> points, double gainDc);

/// Peaking and the feedthrough rise of the closed-loop gain.
struct Peaking
{
    OptionalNumber db, hz; ///< the passband peak; hz absent when there is none
    OptionalNumber feedthroughDb, feedthroughHz; ///< see Analysis
};
/// The refined maximum of |G| over |G(0)| within the passband (up to the first fall below
/// -3 dB) from `gain` sampled at `frequenciesHz` (ascending); beyond the fall, a rise of
/// more than 1 dB after the dip is reported as feedthrough.
Peaking computePeaking(const LoopModel &model, const std::vector<double> &frequenciesHz,
                       const Curve &gain, double gainDc);

/// Poles with natural frequency, damping and Q.
std::vector<ClosedLoopPole> describePoles(const std::vector<std::complex<double>> &poles);

/// Step response with its metrics. The curve spans a time chosen from bandwidth and poles
/// (or the settling time, when longer); the metrics are located by root finding on `step`
/// over a grid that runs on until the slowest mode has decayed. `finalValue` is the DC
/// gain; `settlingBand` a fraction of it.
StepResult computeStep(const StepModel &step, const std::vector<ClosedLoopPole> &poles,
                       OptionalNumber bandwidthHz, double finalValue,
                       double settlingBand = kDefaultSettlingBand);

} // namespace loopsketch
