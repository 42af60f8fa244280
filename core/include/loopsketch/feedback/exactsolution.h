#pragma once

// The exact solution: the full circuit solved as it stands (core/README.md §4). LoopModel
// computes it; this holds its DC values (its curves are LoopCurves::gainExact, zInExact and
// zOutExact).

#include <optional>

namespace loopsketch {

struct ExactSolution
{
    std::optional<double> gain; ///< DC, output / source value (gainUnit); nullopt if none
    std::optional<double> zIn; ///< DC, ohm, seen by the source without its own impedance
    std::optional<double> zOut; ///< DC, ohm, seen by the load with the source zeroed
};

} // namespace loopsketch
