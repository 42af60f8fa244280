#pragma once

// Integrals of noise densities over a frequency band, computed on the circuit model rather
// than read off the sweep grid: adaptive Gauss-Kronrod (7/15 points) in ln f, and the march
// from a start frequency upward until the power left above has fallen under a share of the
// total.

#include <cstddef>
#include <functional>
#include <span>
#include <vector>

namespace loopsketch::detail {

/// Fills `values` with `columns` densities at each of `hz` (Hz), column-major:
/// values[c * hz.size() + i]; the units are the caller's (e.g. V^2/Hz per noise source).
/// Returns false when the model has no finite value at one of the frequencies.
using DensityColumns = std::function<bool(std::span<const double> hz, std::vector<double> &values)>;

struct BandIntegral
{
    bool ok = true; ///< false: a density was not finite at some frequency
    double failedAtHz = 0; ///< the frequency of that failure, Hz
    std::vector<double> columns; ///< integral of each column over the band (units times Hz)
    double total = 0; ///< sum of the columns
    double errorEstimate = 0; ///< |Kronrod - Gauss| summed over the panels, for the total
    std::size_t evaluations = 0; ///< frequencies evaluated
};

/// Integral over [lowHz, highHz] (0 < low < high) of every column, refined until the
/// estimated error of the columns' sum is under `relTol` of it (or an evaluation cap is
/// reached). `initialPanelsPerDecade` sets the first subdivision.
BandIntegral integrateBand(const DensityColumns &density, std::size_t columns, double lowHz,
                           double highHz, double relTol = 1e-6,
                           double initialPanelsPerDecade = 2.0);

struct ConvergedBand
{
    bool ok = true; ///< false: a density was not finite (failedAtHz says where)
    double failedAtHz = 0;
    bool converged = false; ///< false: the cap was reached without convergence
    double highHz = 0; ///< where the march stopped, Hz
    BandIntegral integral; ///< over [lowHz, highHz]
};

/// Integrates from `lowHz` upward in steps of a quarter decade until the power left above
/// the step's end is under `remainingShare` of the whole, estimated from the local slope of
/// the columns' sum (a density falling as f^-a, a > 1, leaves p(f) f / (a - 1) above f), at
/// two consecutive step ends at or above `notBeforeHz`. Stops unconverged at `capHz`. The
/// estimated error of the whole stays under `relTol` of the columns' sum (each step is
/// refined to relTol of its own part plus what the steps before left of their share).
ConvergedBand integrateUntilConverged(const DensityColumns &density, std::size_t columns,
                                      double lowHz, double capHz, double notBeforeHz,
                                      double remainingShare = 1e-3, double relTol = 1e-6);

} // namespace loopsketch::detail
