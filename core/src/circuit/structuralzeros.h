#pragma once

// Transfer entries that are zero whatever the values: an output that no path through the
// circuit's equations connects to an input (the voltage at an output held by an ideal
// source, seen from a current injected there; a feedthrough that does not exist). The
// elimination of the fast path is backward stable only normwise, so it may leave rounding
// in place of such a zero (the test current is routed through a pivot row and cancelled
// again), and the rounding varies with the pivots from one frequency to the next; the
// careful solve usually gets 0. The entries this finds are set to an exact 0 on every path.
//
// Rule. With a perfect matching M of the pattern of A = G + sC (a nonzero determinant for
// generic values), (A^-1)_{ji} is the cofactor of a_{ij} over det A, and that cofactor is
// zero for every value of the entries exactly when the pattern without row i and column j
// has no perfect matching. Removing row i frees column M(i), removing column j frees row
// M^-1(j); a matching of the rest exists when an alternating path leads from column M(i)
// to column j: column c -> a row r with a_{rc} != 0 -> column M(r) -> ... (Duff, Erisman
// and Reid, Direct Methods for Sparse Matrices, 2nd ed., chapter on structural rank and
// block triangular form, from memory). An entry l_o^T A^-1 b_c is then zero for every value
// when no column in the support of l_o is reachable from any column M(i), i in the support
// of b_c. Only the pattern of G and C is read (an entry stored as an exact 0 is absent),
// so the claim holds for these values exactly, at every s where A is regular.

#include "loopsketch/circuit/circuit.h"

#include <vector>

namespace loopsketch::detail {

/// zero[output * inputs + input] is true where the entry (output, input) of
/// L (G + sC)^-1 B is zero for every s at which G + sC is regular. All false when the
/// pattern of G + C has no perfect matching (then nothing is claimed).
struct StructuralZeros
{
    int outputs = 0, inputs = 0;
    std::vector<bool> zero;

    bool at(int output, int input) const
    {
        return !zero.empty()
            && zero[static_cast<std::size_t>(output) * static_cast<std::size_t>(inputs)
                    + static_cast<std::size_t>(input)];
    }
    bool any() const;
};

StructuralZeros findStructuralZeros(const DescriptorSystem &system);

} // namespace loopsketch::detail
