#pragma once

// Stability and response metrics from a LoopModel: crossings are located on the sweep and
// refined by bisection on the model itself, not read off the grid.

#include "loopsketch/analysis.h"
#include "loopsketch/loopmodel.h"

#include <vector>

namespace loopsketch {

/// Unwraps phases (rad) so that successive values differ by less than pi, starting from
/// `start` (the phase at DC).
std::vector<double> unwrapPhase(const Curve &values, double start);

/// Loop crossover, phase margin and gain margin of T(s) = model.loopGainAt(s).
Margins computeMargins(const LoopModel &model, const std::vector<double> &frequenciesHz,
                       const Curve &loopGain, std::complex<double> loopGainDc);

/// Closed-loop -3 dB bandwidth (Hz) of the exact gain; nullopt when it never falls 3 dB.
OptionalNumber computeBandwidth(const LoopModel &model, const std::vector<double> &frequenciesHz,
                                const Curve &gain, double gainDc);

/// Peak of |G| over |G(0)| in dB, >= 0.
OptionalNumber computePeaking(const Curve &gain, double gainDc);

/// Poles with natural frequency, damping and Q.
std::vector<ClosedLoopPole> describePoles(const std::vector<std::complex<double>> &poles);

/// Step response on a time span chosen from bandwidth and poles, with its metrics.
StepResult computeStep(const LoopModel &model, const std::vector<ClosedLoopPole> &poles,
                       OptionalNumber bandwidthHz, double finalValue);

} // namespace loopsketch
