#pragma once

// The per-frequency solves of a small reduced pencil, done for a whole list of complex
// frequencies in one tight loop: (G + sC) z = B u, y = L z + D u, only the entries asked for.
// Gaussian elimination with partial pivoting, unrolled for the usual orders (k = 1..8) and
// allocation-free per point. Every solve's componentwise backward error is checked against
// the pencil, and a point where it is too large is refined once with the same factors, kept
// where that lowers it (partial pivoting is backward stable normwise only; see
// kRefineBackwardError in pencilpoint.h). With fewer output
// rows than input columns asked for, each point solves the transposed system once per row
// (y_r = D_r + (A^-T L_r^T)^T B) from the same factors, instead of once per column: the noise
// system's one output row against a column per noise source is then a single solve.

#include "loopsketch/circuit/reducedsystem.h"

#include <Eigen/Core>

#include <complex>
#include <cstdint>
#include <span>

namespace loopsketch::detail {

/// The pencil's matrices (column-major, k x k, k x inputs, outputs x k, outputs x inputs).
struct PencilView
{
    const Eigen::MatrixXd &g, &c, &b, &l, &d;
};

/// Relative first-order error of an entry above which its point is doubtful: the pencil
/// is too ill-conditioned there for the fast solve, and the caller solves the point again
/// from the full system (ReducedSystem). A tenth of the accuracy the outputs assure (1e-8).
inline constexpr double kDoubtfulRelativeError = 1e-9;

/// out[e * points.size() + i] = entry e at points[i] (s in rad/s). Every entry of a point is
/// NaN where the pencil is singular there; an entry that overflows is NaN. With `doubtful`
/// (one per point), each entry's error is estimated from its adjoint (one more solve with
/// the same factors) and doubtful[i] is 1 where an entry of point i may be off by more
/// than kDoubtfulRelativeError of its value (of `doubtfulFloor`, an absolute level, where
/// the value is below it), or the point took the careful solve, else 0.
void sweepPencil(const PencilView &pencil, std::span<const std::complex<double>> points,
                 std::span<const TransferEntry> entries, std::complex<double> *out,
                 SweepWidth width = SweepWidth::Automatic, std::span<std::uint8_t> doubtful = {},
                 double doubtfulFloor = 0.0);

/// True when the processor can run the sweep at `width`.
bool sweepWidthAvailable(SweepWidth width);

} // namespace loopsketch::detail
