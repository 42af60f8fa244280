#include "circuit/hessenbergpencil.h"

#include "circuit/lanes.h"
#include "circuit/pencilpoint.h"

#include <Eigen/Householder>
#include <Eigen/Jacobi>
#include <Eigen/QR>

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

namespace loopsketch::detail {

namespace {

using cd = std::complex<double>;
using Index = Eigen::Index;
using namespace lanes;

/// A power of two near 1 / v (1 for 0 or not finite), so that scaling by it rounds nothing.
double power2Reciprocal(double v)
{
    return v > 0 && std::isfinite(v) ? std::exp2(std::round(-std::log2(v))) : 1.0;
}

/// Which vectors each point solves for (columns of B, or rows of L when fewer), as the vector
/// kernel chooses them.
struct Plan
{
    bool transposed = false;
    std::vector<int> vectors;
    /// Per point, set to 1 where an entry's first-order error estimate is above
    /// kDoubtfulRelativeError of its value (or of `doubtfulFloor`), else 0; null: no estimate.
    std::uint8_t *doubtful = nullptr;
    double doubtfulFloor = 0.0;
};

Plan makePlan(std::span<const TransferEntry> entries)
{
    std::vector<int> rows, cols;
    distinctPorts(entries, rows, cols);
    Plan plan;
    plan.transposed = rows.size() < cols.size();
    plan.vectors = plan.transposed ? rows : cols;
    return plan;
}

/// The non-zero entries of G and C by row (direct) or by column (transposed), for the
/// residual against the pencil itself in O(non-zeros).
struct Sparse
{
    std::vector<Index> start; ///< k + 1 offsets into `index`, `g`, `c`
    std::vector<Index> index;
    std::vector<double> g, c;
};

Sparse sparseRows(const PencilView &p, bool transposed)
{
    const Index k = p.g.rows();
    Sparse s;
    s.start.push_back(0);
    for (Index r = 0; r < k; ++r) {
        for (Index col = 0; col < k; ++col) {
            const double gv = transposed ? p.g(col, r) : p.g(r, col);
            const double cv = transposed ? p.c(col, r) : p.c(r, col);
            if (gv == 0.0 && cv == 0.0)
                continue;
            s.index.push_back(col);
            s.g.push_back(gv);
            s.c.push_back(cv);
        }
        s.start.push_back(static_cast<Index>(s.index.size()));
    }
    return s;
}

/// The pencil's unknowns in an order that makes G + sC block upper triangular with
/// irreducible diagonal blocks: order[i] is the unknown at position i, block j spans positions
/// starts[j] .. starts[j + 1] - 1.
struct BlockOrder
{
    std::vector<Index> order;
    std::vector<Index> starts;
};

/// The strongly connected components of the pencil's graph (row i reads unknown j where
/// G or C has an entry (i, j)), by Tarjan's algorithm (Tarjan, "Depth-first search and
/// linear graph algorithms", SIAM J. Computing 1 (1972), from memory), iteratively. A
/// component is completed after every component it reads, so the reverse of that order
/// puts what a block reads after it. Row i owns unknown i only where the diagonal has an
/// entry: with a zero on it the whole pencil stays one block.
BlockOrder blockTriangularOrder(const PencilView &p)
{
    const Index k = p.g.rows();
    BlockOrder single;
    for (Index i = 0; i < k; ++i)
        single.order.push_back(i);
    single.starts = {0, k};
    std::vector<std::vector<Index>> reads(static_cast<std::size_t>(k));
    for (Index i = 0; i < k; ++i) {
        if (p.g(i, i) == 0.0 && p.c(i, i) == 0.0)
            return single;
        for (Index j = 0; j < k; ++j)
            if (j != i && (p.g(i, j) != 0.0 || p.c(i, j) != 0.0))
                reads[static_cast<std::size_t>(i)].push_back(j);
    }
    const auto at = [](Index i) {
        return static_cast<std::size_t>(i);
    };
    constexpr Index kUnseen = -1;
    std::vector<Index> index(at(k), kUnseen), low(at(k), 0), stack;
    std::vector<bool> onStack(at(k), false);
    std::vector<std::pair<Index, std::size_t>> path; // node, next of its reads to visit
    std::vector<std::vector<Index>> components;
    Index counter = 0;
    for (Index root = 0; root < k; ++root) {
        if (index[at(root)] != kUnseen)
            continue;
        path.emplace_back(root, 0);
        index[at(root)] = low[at(root)] = counter++;
        stack.push_back(root);
        onStack[at(root)] = true;
        while (!path.empty()) {
            auto &[v, next] = path.back();
            if (next < reads[at(v)].size()) {
                const Index w = reads[at(v)][next++];
                if (index[at(w)] == kUnseen) {
                    index[at(w)] = low[at(w)] = counter++;
                    stack.push_back(w);
                    onStack[at(w)] = true;
                    path.emplace_back(w, 0);
                } else if (onStack[at(w)]) {
                    low[at(v)] = std::min(low[at(v)], index[at(w)]);
                }
                continue;
            }
            const Index done = v;
            path.pop_back();
            if (!path.empty())
                low[at(path.back().first)] = std::min(low[at(path.back().first)], low[at(done)]);
            if (low[at(done)] != index[at(done)])
                continue;
            std::vector<Index> component;
            Index w = kUnseen;
            do {
                w = stack.back();
                stack.pop_back();
                onStack[at(w)] = false;
                component.push_back(w);
            } while (w != done);
            std::sort(component.begin(), component.end());
            components.push_back(std::move(component));
        }
    }
    BlockOrder out;
    for (auto c = components.rbegin(); c != components.rend(); ++c) {
        out.starts.push_back(static_cast<Index>(out.order.size()));
        out.order.insert(out.order.end(), c->begin(), c->end());
    }
    out.starts.push_back(k);
    return out;
}

/// Hessenberg-triangular reduction of the pencil (a, b) in place: QR of b, then Givens
/// rotations that take a to upper Hessenberg form from the left, each followed by one from
/// the right that restores b's triangle; on return the original a = q a z, b = q b z.
void reduceToHessenbergTriangular(Eigen::MatrixXd &a, Eigen::MatrixXd &b, Eigen::MatrixXd &q,
                                  Eigen::MatrixXd &z)
{
    const Index k = a.rows();
    Eigen::HouseholderQR<Eigen::MatrixXd> qr(b);
    q = qr.householderQ();
    b = qr.matrixQR().triangularView<Eigen::Upper>();
    a = q.transpose() * a;
    z = Eigen::MatrixXd::Identity(k, k);
    for (Index j = 0; j + 2 < k; ++j) {
        for (Index i = k - 1; i >= j + 2; --i) {
            Eigen::JacobiRotation<double> rot;
            if (a(i, j) != 0.0) {
                rot.makeGivens(a(i - 1, j), a(i, j), &a(i - 1, j));
                a(i, j) = 0.0;
                a.rightCols(k - j - 1).applyOnTheLeft(i - 1, i, rot.adjoint());
                b.rightCols(k - i + 1).applyOnTheLeft(i - 1, i, rot.adjoint());
                q.applyOnTheRight(i - 1, i, rot);
            }
            if (b(i, i - 1) != 0.0) {
                rot.makeGivens(b(i, i), b(i, i - 1), &b(i, i));
                b(i, i - 1) = 0.0;
                a.applyOnTheRight(i, i - 1, rot);
                b.topRows(i).applyOnTheRight(i, i - 1, rot);
                z.applyOnTheLeft(i, i - 1, rot.adjoint());
            }
        }
    }
    Eigen::MatrixXd h = a.triangularView<Eigen::Upper>();
    h.diagonal(-1) = a.diagonal(-1);
    Eigen::MatrixXd t = b.triangularView<Eigen::Upper>();
    a = std::move(h);
    b = std::move(t);
}

/// The componentwise backward error a solution through the form must reach to be kept:
/// tighter than the kernel's kRefineBackwardError, since the kernel's scaled pivoting nearly
/// always lands at a few eps, and identities that subtract nearly equal entries (Blackman's
/// z_in of fuzz seed 383, off by 1e4 of 4e8 ohm) see the difference between a few eps and 64.
inline constexpr double kFormBackwardError = std::numeric_limits<double>::epsilon();

/// Per lane: x and y exchanged where `take` holds.
template<typename L, typename M>
[[gnu::always_inline]] inline void swapWhere(M take, LaneComplex<L> &x, LaneComplex<L> &y)
{
    const LaneComplex<L> top = x;
    x = select(take, y, top);
    y = select(take, top, y);
}

/// The sweep, several points at a time (L), as the vector kernel does it: per group, H + sT
/// factored with adjacent-row pivoting chosen per lane (only two rows can trade places, so a
/// lane-wise select costs little), each vector solved through the form, mapped back to the
/// pencil's unknowns, checked against the pencil itself and refined once where needed; with
/// plan.doubtful, each entry's first-order error estimated from its adjoint as the vector
/// kernel does (pencilsweep.cpp, forwardError), the adjoint solved through the form. Points
/// whose lanes fail go to `fallback`.
template<typename L>
[[gnu::always_inline]] inline void
sweepLanes(const HessenbergPencil::Form &f, const PencilView &p, std::span<const cd> points,
           std::span<const TransferEntry> entries, const Plan &plan, const Sparse &pencilRows,
           cd *out, std::vector<Index> &fallback)
{
    using LC = LaneComplex<L>;
    constexpr int W = laneCount<L>;
    const Index k = f.h.rows();
    const Index outputs = p.l.rows();
    const auto nPoints = static_cast<Index>(points.size());
    thread_local LaneVector<LC> work;
    thread_local LaneVector<L> swapWork;
    work.resize(static_cast<std::size_t>(k * k + 7 * k));
    swapWork.resize(static_cast<std::size_t>(2 * k));
    LC *m = work.data(); // element (r, c) at [c k + r], overwritten by the factors
    LC *invDiag = m + k * k, *w = invDiag + k, *x = w + k, *res = x + k, *step = res + k;
    LC *adjoint = step + k, *dual = adjoint + k; // an entry's adjoint: in the form, the pencil's
    L *swapped = swapWork.data(); // non-zero in the lanes where step j swapped rows j, j + 1
    L *rowSize = swapped + k; // (|A| |x| + |b|) per row, from backwardError
    const double *h = f.h.data(), *t = f.t.data();
    const double *rhs = (plan.transposed ? f.inL : f.inB).data();
    const double *back = (plan.transposed ? f.toV : f.toX).data();
    // The adjoint of an entry is solved the other way: its right-hand side and map back.
    const double *adjointRhs = (plan.transposed ? f.inB : f.inL).data();
    const double *adjointBack = (plan.transposed ? f.toX : f.toV).data();
    const double *fromResidual = (plan.transposed ? f.fromRt : f.fromR).data();
    const double *b = p.b.data(), *l = p.l.data(), *d = p.d.data();
    // Inlined always, pointers and lanes by reference only (see pencilsweep.cpp: without
    // optimisation a lambda compiled for the baseline must never receive a wide lane).
    const auto anyLane = [](const L &v) __attribute__((always_inline))
    {
        for (int lane = 0; lane < W; ++lane)
            if (v[lane] != 0.0)
                return true;
        return false;
    };
    // v = (H + sT)^-1 v, or ^-T when transposed, from the factors.
    const auto solveForm = [&](LC * v, bool transposed) __attribute__((always_inline))
    {
        if (!transposed) {
            for (Index j = 0; j + 1 < k; ++j) {
                swapWhere<L>(swapped[j] != 0.0, v[j], v[j + 1]);
                subMul(v[j + 1], m[j * k + j + 1], v[j]);
            }
            for (Index r = k - 1; r >= 0; --r) {
                LC acc = v[r];
                for (Index c = r + 1; c < k; ++c)
                    subMul(acc, m[c * k + r], v[c]);
                v[r] = mul(acc, invDiag[r]);
            }
            return;
        }
        // (E P ... U)^T: U^T first, then each step's elimination and swap, the last first.
        for (Index r = 0; r < k; ++r) {
            LC acc = v[r];
            for (Index q = 0; q < r; ++q)
                subMul(acc, m[r * k + q], v[q]);
            v[r] = mul(acc, invDiag[r]);
        }
        for (Index j = k - 2; j >= 0; --j) {
            subMul(v[j], m[j * k + j + 1], v[j + 1]);
            swapWhere<L>(swapped[j] != 0.0, v[j], v[j + 1]);
        }
    };
    // to = map * from: a solution of the form to one of the pencil (map: back or
    // adjointBack). The maps are block diagonal in the form's order: zeros are skipped.
    const auto toPencil
        = [&](const LC *from, LC *to, const double *map) __attribute__((always_inline))
    {
        for (Index r = 0; r < k; ++r)
            to[r] = LC{L{}, L{}};
        for (Index c = 0; c < k; ++c)
            for (Index r = 0; r < k; ++r) {
                const double factor = map[c * k + r];
                if (factor == 0.0)
                    continue;
                to[r].re += factor * from[c].re;
                to[r].im += factor * from[c].im;
            }
    };
    for (Index i0 = 0; i0 < nPoints; i0 += W) {
        const Index lanes = std::min<Index>(W, nPoints - i0);
        L sr, si;
        for (int lane = 0; lane < W; ++lane) {
            // A short last group repeats its last point.
            const cd s = points[static_cast<std::size_t>(i0 + std::min<Index>(lane, lanes - 1))];
            sr[lane] = s.real();
            si[lane] = s.imag();
        }
        for (Index c = 0; c < k; ++c)
            for (Index r = 0; r <= std::min(c + 1, k - 1); ++r) {
                const double hv = h[c * k + r], tv = t[c * k + r];
                m[c * k + r] = {hv + sr * tv, si * tv};
            }
        L retry = {}; // non-zero in a lane the vector kernel solves instead
        for (Index j = 0; j < k; ++j) {
            if (j + 1 < k) {
                const auto take = magnitude2(m[j * k + j + 1]) > magnitude2(m[j * k + j]);
                swapped[j] = take ? L{} + 1.0 : L{};
                if (anyLane(swapped[j]))
                    for (Index c = j; c < k; ++c)
                        swapWhere<L>(take, m[c * k + j], m[c * k + j + 1]);
            }
            const L pivot = magnitude2(m[j * k + j]);
            retry = (pivot < 1e-290) | (pivot > 1e290) | (pivot != pivot) ? L{} + 1.0 : retry;
            const LC inv = reciprocal(m[j * k + j], pivot);
            invDiag[j] = inv;
            if (j + 1 < k) {
                const LC factor = mul(m[j * k + j + 1], inv);
                m[j * k + j + 1] = factor;
                for (Index c = j + 1; c < k; ++c)
                    subMul(m[c * k + j + 1], factor, m[c * k + j]);
            }
        }
        // The residual of x against the pencil itself into `res`, and x's componentwise
        // backward error per lane (Oettli-Prager, moduli |re| + |im|, as the vector kernel).
        const auto backwardError = [&](int which) __attribute__((always_inline))
        {
            L omega = L{};
            for (Index r = 0; r < k; ++r) {
                const double bv = plan.transposed ? l[r * outputs + which] : b[which * k + r];
                LC acc{L{} + bv, L{}};
                L size = L{} + std::abs(bv);
                for (Index e = pencilRows.start[static_cast<std::size_t>(r)];
                     e < pencilRows.start[static_cast<std::size_t>(r + 1)]; ++e) {
                    const auto ue = static_cast<std::size_t>(e);
                    const double gv = pencilRows.g[ue], cv = pencilRows.c[ue];
                    const LC &xv = x[pencilRows.index[ue]];
                    const L re = gv + sr * cv, im = si * cv;
                    acc.re -= re * xv.re - im * xv.im;
                    acc.im -= re * xv.im + im * xv.re;
                    size += (absLanes(re) + absLanes(im)) * (absLanes(xv.re) + absLanes(xv.im));
                }
                res[r] = acc;
                rowSize[r] = size;
                const L miss = absLanes(acc.re) + absLanes(acc.im);
                const L positive = size > 0.0 ? size : L{} + 1.0;
                const L row = size > 0.0 ? miss / positive : (miss > 0.0 ? L{} + 1.0 : L{});
                omega = row > omega || row != row ? row : omega;
            }
            return omega;
        };
        // First-order error of the entry pairing the solved vector `which` with `other`, as
        // the vector kernel's forwardError() (pencilsweep.cpp, the reasons there): with w the
        // entry's adjoint, |w^T r| for the residual r, plus one rounding of every term of
        // A x and b weighed by |w|, plus one rounding of every term of the output's sum.
        // Needs the residual and row sizes of the solution kept (backwardError()).
        const auto forwardError = [&](int which, int other) __attribute__((always_inline))
        {
            constexpr double u = std::numeric_limits<double>::epsilon() / 2;
            L sum = L{}
                + std::abs(plan.transposed ? d[other * outputs + which]
                                           : d[which * outputs + other]);
            for (Index r = 0; r < k; ++r) {
                const double q = plan.transposed ? b[other * k + r] : l[r * outputs + other];
                sum += std::abs(q) * (absLanes(x[r].re) + absLanes(x[r].im));
                adjoint[r] = {L{} + adjointRhs[other * k + r], L{}};
            }
            solveForm(adjoint, !plan.transposed);
            toPencil(adjoint, dual, adjointBack);
            LC wr{L{}, L{}};
            L weighed = L{};
            for (Index r = 0; r < k; ++r) {
                wr.re += dual[r].re * res[r].re - dual[r].im * res[r].im;
                wr.im += dual[r].re * res[r].im + dual[r].im * res[r].re;
                weighed += (absLanes(dual[r].re) + absLanes(dual[r].im)) * rowSize[r];
            }
            return absLanes(wr.re) + absLanes(wr.im) + u * (weighed + sum);
        };
        L unsure = {}; // non-zero in a lane whose error estimate is too large
        for (std::size_t v = 0; v < plan.vectors.size(); ++v) {
            const int which = plan.vectors[v];
            for (Index r = 0; r < k; ++r)
                w[r] = {L{} + rhs[which * k + r], L{}};
            solveForm(w, plan.transposed);
            toPencil(w, x, back);
            const L before = backwardError(which);
            const auto refine = (before > kFormBackwardError) | (before != before);
            if (anyLane(refine ? L{} + 1.0 : L{})) {
                // One step of refinement through the form, in the lanes that need it.
                for (Index r = 0; r < k; ++r) {
                    LC acc{L{}, L{}};
                    for (Index c = 0; c < k; ++c) {
                        const double factor = fromResidual[c * k + r];
                        if (factor == 0.0)
                            continue;
                        acc.re += factor * res[c].re;
                        acc.im += factor * res[c].im;
                    }
                    w[r] = acc;
                }
                solveForm(w, plan.transposed);
                toPencil(w, step, back);
                for (Index r = 0; r < k; ++r) {
                    x[r].re = refine ? x[r].re + step[r].re : x[r].re;
                    x[r].im = refine ? x[r].im + step[r].im : x[r].im;
                }
                const L after = backwardError(which);
                retry = (after > kFormBackwardError) | (after != after) ? L{} + 1.0 : retry;
            }
            for (std::size_t e = 0; e < entries.size(); ++e) {
                const int key = plan.transposed ? entries[e].output : entries[e].input;
                if (key != which)
                    continue;
                const int other = plan.transposed ? entries[e].input : entries[e].output;
                LC acc{L{} + d[entries[e].input * outputs + entries[e].output], L{}};
                for (Index r = 0; r < k; ++r) {
                    const double factor
                        = plan.transposed ? b[other * k + r] : l[r * outputs + other];
                    acc.re += factor * x[r].re;
                    acc.im += factor * x[r].im;
                }
                // Not finite (x * 0 is NaN for inf and NaN): the vector kernel decides.
                const L probe = acc.re * 0.0 + acc.im * 0.0;
                retry = probe != 0.0 ? L{} + 1.0 : retry;
                if (plan.doubtful) {
                    const L size = absLanes(acc.re) + absLanes(acc.im);
                    const L level = size > plan.doubtfulFloor ? size : L{} + plan.doubtfulFloor;
                    unsure = forwardError(which, other) > kDoubtfulRelativeError * level ? L{} + 1.0
                                                                                         : unsure;
                }
                cd *dst = out + static_cast<Index>(e) * nPoints + i0;
                for (Index lane = 0; lane < lanes; ++lane)
                    dst[lane] = cd(acc.re[lane], acc.im[lane]);
            }
        }
        for (Index lane = 0; lane < lanes; ++lane) {
            if (retry[lane] != 0.0)
                fallback.push_back(i0 + lane); // the kernel gives its own estimate
            else if (plan.doubtful)
                plan.doubtful[i0 + lane] = unsure[lane] != 0.0 ? 1 : 0;
        }
    }
}

void sweepBaseline(const HessenbergPencil::Form &f, const PencilView &p, std::span<const cd> points,
                   std::span<const TransferEntry> entries, const Plan &plan, const Sparse &rows,
                   cd *out, std::vector<Index> &fallback)
{
    sweepLanes<Lanes2>(f, p, points, entries, plan, rows, out, fallback);
}

#if defined(__x86_64__) && defined(__GNUC__)
#define LOOPSKETCH_HAVE_WIDE_SWEEP 1
__attribute__((target("avx2"))) void sweepAvx2(const HessenbergPencil::Form &f, const PencilView &p,
                                               std::span<const cd> points,
                                               std::span<const TransferEntry> entries,
                                               const Plan &plan, const Sparse &rows, cd *out,
                                               std::vector<Index> &fallback)
{
    sweepLanes<Lanes4>(f, p, points, entries, plan, rows, out, fallback);
}

__attribute__((target("avx512f"))) void sweepAvx512(const HessenbergPencil::Form &f,
                                                    const PencilView &p, std::span<const cd> points,
                                                    std::span<const TransferEntry> entries,
                                                    const Plan &plan, const Sparse &rows, cd *out,
                                                    std::vector<Index> &fallback)
{
    sweepLanes<Lanes8>(f, p, points, entries, plan, rows, out, fallback);
}
#endif

} // namespace

HessenbergPencil::HessenbergPencil(const PencilView &p)
{
    const Index k = p.g.rows();
    // Equilibrate |G| + sigma |C| (sigma a power of two that brings C to G's size) by rows
    // and columns, a few sweeps of powers of two: the rows of the pencil are in different
    // units, and the orthogonal transformations below are backward stable relative to the
    // largest entries only.
    const double gMax = p.g.cwiseAbs().maxCoeff(), cMax = p.c.cwiseAbs().maxCoeff();
    const double sigma = cMax > 0.0 && gMax > 0.0 ? 1.0 / power2Reciprocal(gMax / cMax) : 1.0;
    const Eigen::MatrixXd size = p.g.cwiseAbs() + sigma * p.c.cwiseAbs();
    Eigen::VectorXd dr = Eigen::VectorXd::Ones(k), dc = Eigen::VectorXd::Ones(k);
    for (int pass = 0; pass < 4; ++pass) {
        for (Index r = 0; r < k; ++r)
            dr(r) *= power2Reciprocal(
                std::sqrt(dr(r) * size.row(r).transpose().cwiseProduct(dc).maxCoeff()));
        for (Index c = 0; c < k; ++c)
            dc(c) *= power2Reciprocal(std::sqrt(dc(c) * size.col(c).cwiseProduct(dr).maxCoeff()));
    }
    // The unknowns in block triangular order (P, a permutation: exact), each diagonal block
    // reduced on its own, so that Q and Z are block diagonal and H, T block upper triangular:
    // H stays upper Hessenberg as a whole (its subdiagonal is zero between blocks), and an
    // unknown that a right-hand side does not reach stays an exact zero through the solve.
    const BlockOrder blocks = blockTriangularOrder(p);
    Eigen::MatrixXd perm = Eigen::MatrixXd::Zero(k, k);
    for (Index i = 0; i < k; ++i)
        perm(i, blocks.order[static_cast<std::size_t>(i)]) = 1.0;
    const Eigen::MatrixXd a = perm * (dr.asDiagonal() * p.g * dc.asDiagonal()) * perm.transpose();
    const Eigen::MatrixXd b = perm * (dr.asDiagonal() * p.c * dc.asDiagonal()) * perm.transpose();
    Eigen::MatrixXd q = Eigen::MatrixXd::Zero(k, k), z = Eigen::MatrixXd::Zero(k, k);
    std::vector<std::pair<Eigen::MatrixXd, Eigen::MatrixXd>> reduced; // H, T of each block
    for (std::size_t blk = 0; blk + 1 < blocks.starts.size(); ++blk) {
        const Index at = blocks.starts[blk], n = blocks.starts[blk + 1] - at;
        Eigen::MatrixXd ab = a.block(at, at, n, n), bb = b.block(at, at, n, n), qb, zb;
        reduceToHessenbergTriangular(ab, bb, qb, zb);
        q.block(at, at, n, n) = qb;
        z.block(at, at, n, n) = zb;
        reduced.emplace_back(std::move(ab), std::move(bb));
    }
    // The blocks above the diagonal through the transformations; the diagonal blocks as
    // reduced (their exact zeros), and zeros below them.
    m_form.h = q.transpose() * a * z.transpose();
    m_form.t = q.transpose() * b * z.transpose();
    for (std::size_t blk = 0; blk + 1 < blocks.starts.size(); ++blk) {
        const Index at = blocks.starts[blk], n = blocks.starts[blk + 1] - at;
        m_form.h.block(at, at, n, n) = reduced[blk].first;
        m_form.t.block(at, at, n, n) = reduced[blk].second;
        m_form.h.block(at + n, at, k - at - n, n).setZero();
        m_form.t.block(at + n, at, k - at - n, n).setZero();
    }
    // G + sC = Dr^-1 P^T Q (H + sT) Z P Dc^-1.
    m_form.fromR = q.transpose() * perm * dr.asDiagonal();
    m_form.inB = m_form.fromR * p.b;
    m_form.toX = dc.asDiagonal() * perm.transpose() * z.transpose();
    m_form.fromRt = z * perm * dc.asDiagonal();
    m_form.inL = m_form.fromRt * p.l.transpose();
    m_form.toV = dr.asDiagonal() * perm.transpose() * q;
    m_blocks = static_cast<int>(blocks.starts.size()) - 1;
}

bool HessenbergPencil::pays(const PencilView &p)
{
    return p.g.rows() >= kHessenbergMinOrder;
}

int HessenbergPencil::sweep(const PencilView &p, std::span<const cd> points,
                            std::span<const TransferEntry> entries, cd *out, SweepWidth width,
                            std::span<std::uint8_t> doubtful, double doubtfulFloor) const
{
    if (points.empty() || entries.empty())
        return 0;
    if (m_handsOver.load(std::memory_order_relaxed)) {
        sweepPencil(p, points, entries, out, width, doubtful, doubtfulFloor);
        return static_cast<int>(points.size());
    }
    Plan plan = makePlan(entries);
    plan.doubtfulFloor = doubtfulFloor;
    const Sparse pencilRows = sparseRows(p, plan.transposed);
    std::vector<Index> fallback;
#ifdef LOOPSKETCH_HAVE_WIDE_SWEEP
    SweepWidth run = width;
    if (run == SweepWidth::Automatic) // a single point (root finding) costs a whole group
        run = sweepWidthAvailable(SweepWidth::Eight) && points.size() > 4 ? SweepWidth::Eight
            : sweepWidthAvailable(SweepWidth::Four)                       ? SweepWidth::Four
                                                                          : SweepWidth::Two;
#endif
    const auto sweepSome = [&](std::span<const cd> some, cd *someOut, std::vector<Index> &missed) {
#ifdef LOOPSKETCH_HAVE_WIDE_SWEEP
        if (run == SweepWidth::Eight && sweepWidthAvailable(SweepWidth::Eight))
            return sweepAvx512(m_form, p, some, entries, plan, pencilRows, someOut, missed);
        if (run != SweepWidth::Two && sweepWidthAvailable(SweepWidth::Four))
            return sweepAvx2(m_form, p, some, entries, plan, pencilRows, someOut, missed);
#endif
        sweepBaseline(m_form, p, some, entries, plan, pencilRows, someOut, missed);
    };
    // In chunks: where the form hands over most points (a pencil whose rows span so many
    // decades that the orthogonal transformations lose what matters), each point would cost
    // the form and the kernel, so once more than half of a chunk's points have gone over, the
    // rest of this sweep and every later one go to the kernel directly.
    constexpr Index kChunk = 64;
    const auto nPoints = static_cast<Index>(points.size());
    std::vector<cd> chunkOut;
    std::vector<Index> chunkMissed;
    Index done = 0;
    while (done < nPoints && !m_handsOver.load(std::memory_order_relaxed)) {
        const Index n = std::min(kChunk, nPoints - done);
        chunkOut.resize(entries.size() * static_cast<std::size_t>(n));
        chunkMissed.clear();
        plan.doubtful = doubtful.empty() ? nullptr : doubtful.data() + done;
        sweepSome(points.subspan(static_cast<std::size_t>(done), static_cast<std::size_t>(n)),
                  chunkOut.data(), chunkMissed);
        for (std::size_t e = 0; e < entries.size(); ++e)
            for (Index i = 0; i < n; ++i)
                out[static_cast<Index>(e) * nPoints + done + i]
                    = chunkOut[e * static_cast<std::size_t>(n) + static_cast<std::size_t>(i)];
        for (Index i : chunkMissed)
            fallback.push_back(done + i);
        done += n;
        if (n == kChunk && 2 * static_cast<Index>(chunkMissed.size()) > n)
            m_handsOver.store(true, std::memory_order_relaxed);
    }
    for (Index i = done; i < nPoints; ++i)
        fallback.push_back(i);
    if (fallback.empty())
        return 0;
    // The points the form could not vouch for, through the vector kernel (its own
    // refinement, and the careful solve where that is not enough).
    std::vector<cd> some(fallback.size());
    for (std::size_t i = 0; i < fallback.size(); ++i)
        some[i] = points[static_cast<std::size_t>(fallback[i])];
    std::vector<cd> values(entries.size() * fallback.size());
    std::vector<std::uint8_t> someDoubtful(doubtful.empty() ? 0 : fallback.size());
    sweepPencil(p, some, entries, values.data(), width, someDoubtful, doubtfulFloor);
    for (std::size_t e = 0; e < entries.size(); ++e)
        for (std::size_t i = 0; i < fallback.size(); ++i)
            out[static_cast<Index>(e) * nPoints + fallback[i]] = values[e * fallback.size() + i];
    for (std::size_t i = 0; i < someDoubtful.size(); ++i)
        doubtful[static_cast<std::size_t>(fallback[i])] = someDoubtful[i];
    return static_cast<int>(fallback.size());
}

} // namespace loopsketch::detail
