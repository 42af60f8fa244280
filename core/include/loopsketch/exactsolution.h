#pragma once

// The exact solution: the full circuit solved as it stands (DESIGN.md §5).

#include "loopsketch/design.h"
#include "loopsketch/result.h"

#include <complex>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

/// "V/V", "V/A", "A/A" or "A/V": output over the signal source's value.
std::string gainUnit(const Design &design);

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

/// Solves the design at DC and at each frequency (Hz). The design must be valid. Fails,
/// naming the nodes involved, when the circuit has no unique solution.
Result<ExactSolution> computeExactSolution(const Design &design,
                                           const std::vector<double> &frequenciesHz);

/// A DC value that exists only when finite.
std::optional<double> finiteOrNone(double value);

} // namespace loopsketch
