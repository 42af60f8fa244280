#pragma once

// The exact solution: the full circuit solved as it stands (core/README.md §4). LoopModel
// computes it; this holds its DC values and curves.

#include <complex>
#include <optional>
#include <vector>

namespace loopsketch {

struct ExactSolution
{
    std::optional<double> gain; ///< DC, output / source value (gainUnit); nullopt if none
    std::optional<double> zIn; ///< DC, ohm, seen by the source without its own impedance
    std::optional<double> zOut; ///< DC, ohm, seen by the load with the source zeroed
    /// Over the sweep; NaN marks a frequency where the quantity does not exist.
    std::vector<std::complex<double>> gainSweep;
    std::vector<std::complex<double>> zInSweep;
    std::vector<std::complex<double>> zOutSweep;
};

} // namespace loopsketch
