#pragma once

// The sweep of a large reduced pencil through its Hessenberg-triangular form. The pencil is
// reduced once, G = Dr^-1 Q H Z Dc^-1 and C = Dr^-1 Q T Z Dc^-1 (Dr, Dc diagonal powers of
// two, Q and Z orthogonal, H upper Hessenberg, T upper triangular; Golub and Van Loan, Matrix
// Computations, 4th ed., section 7.7.4, from memory), so that each frequency factors the
// Hessenberg matrix H + sT by Gaussian elimination with adjacent-row pivoting: O(k^2) per
// point instead of the O(k^3) of a dense LU (Laub, "Efficient multivariable frequency
// response computations", IEEE Trans. Automatic Control 26 (1981), from memory).
//
// Orthogonal transformations mix the pencil's rows, which are in different units, so the
// form is backward stable only normwise. Every point's solution is therefore checked against
// the pencil itself, as the vector kernel checks its own (componentwise backward error),
// refined once through the form, and kept only at one eps (kFormBackwardError in
// hessenbergpencil.cpp, tighter than the kernel's kRefineBackwardError); any other point is
// solved by the vector kernel
// (core/src/circuit/pencilsweep.h), with its own refinement and careful solve.

#include "circuit/pencilsweep.h"

#include <Eigen/Core>

#include <atomic>
#include <complex>
#include <cstdint>
#include <span>
#include <vector>

namespace loopsketch::detail {

/// The order from which the reduced sweeps go through the Hessenberg-triangular form: the
/// first order the vector kernel does not unroll. Measured (full sweep of 901 points, two
/// entries, AVX-512, best of 15): dense pencils of order 12 / 28 / 48 take 0.14 / 0.57 / 2.0 ms
/// through the form against 0.23 / 1.8 / 10.9 ms by the kernel's LU, and the 50-part RC
/// ladder's nearly tridiagonal pencil of order 28, whose pattern the kernel follows, 0.52
/// against 0.76 ms.
inline constexpr int kHessenbergMinOrder = 9;

class HessenbergPencil
{
public:
    /// Reduces the pencil's G and C once (O(k^3)) and keeps the maps of B, L and the
    /// solutions through the form.
    explicit HessenbergPencil(const PencilView &pencil);

    /// True when the form is worth its O(k^2) per point for `pencil` (order at least
    /// kHessenbergMinOrder).
    static bool pays(const PencilView &pencil);

    /// As sweepPencil(): out[e * points.size() + i] = entry e at points[i] (s in rad/s), NaN
    /// where the pencil is singular. `pencil` is the one this form was built from. Returns
    /// how many points the form could not solve within kFormBackwardError (after one
    /// refinement) and handed to the vector kernel at `width` (every point once a chunk of 64
    /// handed over more than half of its points, in this sweep or an earlier one). With
    /// `doubtful` (one per point), each entry's first-order error is estimated as by
    /// sweepPencil() (the adjoint solved through the form, or by the kernel for the points it
    /// takes) and doubtful[i] says whether point i may be off by more than
    /// kDoubtfulRelativeError of its value (of `doubtfulFloor` below it).
    int sweep(const PencilView &pencil, std::span<const std::complex<double>> points,
              std::span<const TransferEntry> entries, std::complex<double> *out,
              SweepWidth width = SweepWidth::Automatic, std::span<std::uint8_t> doubtful = {},
              double doubtfulFloor = 0.0) const;

    int order() const { return static_cast<int>(m_form.h.rows()); }

    /// How many irreducible diagonal blocks the form has (the pencil's strongly connected
    /// components; 1 where it is irreducible or its diagonal has a zero).
    int blocks() const { return m_blocks; }

    /// The form's matrices (column-major).
    struct Form
    {
        Eigen::MatrixXd h; ///< k x k, upper Hessenberg
        Eigen::MatrixXd t; ///< k x k, upper triangular
        Eigen::MatrixXd inB; ///< Q^T Dr B: the right-hand sides of the direct solves
        Eigen::MatrixXd inL; ///< Z Dc L^T: the right-hand sides of the transposed solves
        Eigen::MatrixXd toX; ///< Dc Z^T: a direct solution of the form to one of the pencil
        Eigen::MatrixXd toV; ///< Dr Q: a transposed solution of the form to one of the pencil
        Eigen::MatrixXd fromR; ///< Q^T Dr: a residual of the pencil to a right-hand side
        Eigen::MatrixXd fromRt; ///< Z Dc: the same for the transposed solves
    };

private:
    Form m_form;
    int m_blocks = 1;
    /// Set once a whole chunk of a sweep went mostly to the kernel: from then on every point
    /// does (the form would only add its own cost to the kernel's).
    mutable std::atomic<bool> m_handsOver{false};
};

} // namespace loopsketch::detail
