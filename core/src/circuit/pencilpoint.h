#pragma once

// One point of a small reduced pencil solved carefully: the sweep kernel's fallback
// (core/src/circuit/pencilsweep.cpp) for a point whose fast lanes met a pivot too small or
// too large to square, or a result that is not finite.

#include "circuit/pencilsweep.h"

#include <complex>
#include <limits>
#include <span>

namespace loopsketch::detail {

/// Componentwise backward error (Oettli-Prager: max_i |r_i| / (|A| |z| + |b|)_i, moduli
/// taken as |re| + |im|) above which a point's solve is refined. Partial pivoting, scaled or
/// not, is backward stable only normwise: on a 22-state pencil whose output is 1e-20 of the
/// solution's largest component (a notch of the gain, fuzz seed 2928) it left a backward
/// error of 1e-5 in the rows that make that output, and the output off by 1e-5 of its
/// value, between the accuracy check's probes. One step of iterative refinement with the
/// same factors brings it to round-off (Higham, Accuracy and Stability of Numerical
/// Algorithms, 2nd ed., section 12.2, from memory: one step of fixed-precision refinement
/// makes the solve componentwise backward stable). A stable solve stays at a few eps.
inline constexpr double kRefineBackwardError = 64 * std::numeric_limits<double>::epsilon();

/// One point by the textbook elimination in std::complex arithmetic (pivots by |re| + |im|,
/// the library's scaled division), refined while its componentwise backward error is above
/// kRefineBackwardError and falling. Writes entry e to out[e * stride]; every entry NaN when
/// the pencil is singular at s (rad/s).
void solvePointCarefully(const PencilView &p, std::complex<double> s,
                         std::span<const TransferEntry> entries, std::complex<double> *out,
                         Eigen::Index stride);

} // namespace loopsketch::detail
