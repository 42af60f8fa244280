#pragma once

// The figures a designer holds against the data and the specs, from a noise analysis: the
// cumulative rms over the sweep, spot noise, the 0.1-10 Hz peak-to-peak noise, SNR, noise
// figure, the output peak of a full-scale sine and the slew rate it needs.

#include "analysis/noisemodel.h"
#include "loopsketch/analysis/noise.h"

namespace loopsketch::detail {

/// Fills the figures of `noise` (computed for `design` on its noise `model`) past its densities and
/// band rms: cumulativeRms, spot, lowFrequency, signalLevel, outputPeak, slewRate, snrDb and
/// noiseFigureDb. With `stable` false only the spot densities are filled (a noise power does
/// not exist). Figures whose circuit has no solution stay absent.
void addNoiseFigures(const NoiseModel &model, const Design &design, NoiseAnalysis &noise,
                     bool stable = true);

/// Only the figures checkSpecs() needs (snrDb), without further solves.
void addSignalFigures(const Design &design, NoiseAnalysis &noise);

} // namespace loopsketch::detail
