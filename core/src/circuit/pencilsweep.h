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
#include <span>

namespace loopsketch::detail {

/// The pencil's matrices (column-major, k x k, k x inputs, outputs x k, outputs x inputs).
struct PencilView
{
    const Eigen::MatrixXd &g, &c, &b, &l, &d;
};

/// out[e * points.size() + i] = entry e at points[i] (s in rad/s). Every entry of a point is
/// NaN where the pencil is singular there; an entry that overflows is NaN.
void sweepPencil(const PencilView &pencil, std::span<const std::complex<double>> points,
                 std::span<const TransferEntry> entries, std::complex<double> *out,
                 SweepWidth width = SweepWidth::Automatic);

/// True when the processor can run the sweep at `width`.
bool sweepWidthAvailable(SweepWidth width);

} // namespace loopsketch::detail
