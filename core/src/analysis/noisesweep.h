#pragma once

// The noise analysis over a frequency grid its caller already holds: analyze() computes the
// design's sweep and its points s = j 2 pi f once for the loop model and passes them here.

#include "analysis/noisemodel.h"
#include "loopsketch/analysis/noise.h"

#include <complex>
#include <span>
#include <vector>

namespace loopsketch::detail {

/// analyzeNoise() on `model` (built from `design`) over `frequenciesHz` (the design's sweep,
/// Hz) with `points` the matching s = j 2 pi f, rad/s. `naturalFrequencies` (rad/s), when
/// given, are the circuit's closed-loop poles the caller found already (the noise model is the
/// same circuit with en as a 0 V source in series with in_p, so its natural frequencies are
/// those); otherwise the model's own are computed.
Result<NoiseAnalysis>
analyzeNoiseOver(const NoiseModel &model, const Design &design, const NoiseOptions &options,
                 const std::vector<double> &frequenciesHz,
                 std::span<const std::complex<double>> points,
                 const std::vector<std::complex<double>> *naturalFrequencies = nullptr);

} // namespace loopsketch::detail
