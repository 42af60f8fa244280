#pragma once

// The reference the sweep tests compare against: the careful solve of the whole nodal
// system (equilibrated LU with iterative refinement in extended precision,
// core/src/circuit/refinedsolve.h), each value with its own first-order error bound, so a
// test can first ask the reference to be accurate enough to prove anything.

#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/reducedsystem.h"

#include "circuit/refinedsolve.h"
#include "numeric.h"

#include <cmath>
#include <limits>
#include <span>
#include <vector>

namespace loopsketch::test {

struct CarefulValue
{
    cd value; ///< NaN where the full system is singular at the point
    double relativeBound = 0; ///< the careful solve's own error bound over |value| (or inf)
};

/// One entry of the full system at every point of `s`.
inline std::vector<CarefulValue> carefulEntry(const DescriptorSystem &full, std::span<const cd> s,
                                              TransferEntry entry)
{
    std::vector<CarefulValue> out(
        s.size(), {cd(std::nan(""), std::nan("")), std::numeric_limits<double>::infinity()});
    detail::RefinedSolver careful(full);
    for (std::size_t i = 0; i < s.size(); ++i) {
        if (!careful.factor(s[i]))
            continue;
        Eigen::VectorXcd r;
        const Eigen::VectorXcd x = careful.solve(entry.input, &r);
        out[i].value = careful.output(entry.output, x);
        out[i].relativeBound
            = careful.errorBound(entry.output, entry.input, x, r) / std::abs(out[i].value);
    }
    return out;
}

} // namespace loopsketch::test
