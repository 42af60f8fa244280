#include "pencilsweep.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

namespace loopsketch::detail {

namespace {

using cd = std::complex<double>;
using Index = Eigen::Index;

/// Which vectors each point solves for: columns of B (direct) or rows of L (transposed),
/// and for each entry the solved vector it reads and the index it pairs it with.
struct Plan
{
    bool transposed = false;
    std::vector<int> vectors; ///< column (direct) or row (transposed) of each solve
    std::vector<int> slot; ///< per entry: index into `vectors`
    std::vector<int> other; ///< per entry: its row (direct) or column (transposed)
    std::vector<int> rows, cols; ///< scratch, kept to avoid allocating per call
};

void makePlan(std::span<const TransferEntry> entries, Plan &plan)
{
    std::vector<int> &rows = plan.rows, &cols = plan.cols;
    rows.clear();
    cols.clear();
    const auto addUnique = [](std::vector<int> &v, int x) {
        for (int y : v)
            if (y == x)
                return;
        v.push_back(x);
    };
    for (const TransferEntry &e : entries) {
        addUnique(rows, e.output);
        addUnique(cols, e.input);
    }
    plan.transposed = rows.size() < cols.size();
    plan.vectors.assign(plan.transposed ? rows.begin() : cols.begin(),
                        plan.transposed ? rows.end() : cols.end());
    plan.slot.resize(entries.size());
    plan.other.resize(entries.size());
    for (std::size_t e = 0; e < entries.size(); ++e) {
        const int key = plan.transposed ? entries[e].output : entries[e].input;
        for (std::size_t v = 0; v < plan.vectors.size(); ++v)
            if (plan.vectors[v] == key)
                plan.slot[e] = static_cast<int>(v);
        plan.other[e] = plan.transposed ? entries[e].input : entries[e].output;
    }
}

/// The sweep for order K (0: any order, given by `kAny`), W points at a time, real and
/// imaginary parts in separate arrays with the W points innermost. One point's elimination
/// is a chain of dependent divisions and products that leaves the core waiting on latency;
/// W independent points side by side fill it, and the arithmetic on them vectorises.
/// Compile-time K lets the compiler unroll the elimination at the usual orders.
template<int K, int W>
void sweepOrder(const PencilView &p, int kAny, std::span<const cd> points,
                std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    const Index k = K > 0 ? K : kAny;
    const Index kk = k * k;
    const Index outputs = p.l.rows();
    const auto nPoints = static_cast<Index>(points.size());
    const auto nVectors = static_cast<Index>(plan.vectors.size());
    // Element (r, c) of point w of the group at [(r k + c) W + w]: the factors overwrite it.
    // Fixed orders keep everything in distinct stack arrays, which the compiler can prove
    // unaliased and so vectorise over the W points.
    constexpr Index cap = K > 0 ? K : 1;
    double arStack[cap * cap * W], aiStack[cap * cap * W], invRStack[cap * W], invIStack[cap * W],
        yRStack[cap * W], yIStack[cap * W];
    Index pivStack[cap * W];
    double *ar = arStack, *ai = aiStack, *invR = invRStack, *invI = invIStack, *yr = yRStack,
           *yi = yIStack;
    Index *piv = pivStack; // [w k + j]
    if constexpr (K == 0) {
        thread_local std::vector<double> work;
        thread_local std::vector<Index> pivots;
        work.resize(static_cast<std::size_t>(2 * W * (kk + 2 * k)));
        pivots.resize(static_cast<std::size_t>(W * k));
        ar = work.data();
        ai = ar + W * kk;
        invR = ai + W * kk;
        invI = invR + W * k;
        yr = invI + W * k;
        yi = yr + W * k;
        piv = pivots.data();
    }
    const double *g = p.g.data(), *c = p.c.data(), *b = p.b.data(), *l = p.l.data();
    const double *d = p.d.data();
    const cd nan(std::numeric_limits<double>::quiet_NaN(),
                 std::numeric_limits<double>::quiet_NaN());
    const auto at = [](Index index, int w) {
        return index * W + w;
    };

    for (Index i0 = 0; i0 < nPoints; i0 += W) {
        const Index lanes = std::min<Index>(W, nPoints - i0);
        double sr[W], si[W];
        bool singular[W];
        for (int w = 0; w < W; ++w) {
            // A short last group repeats its last point rather than branching per lane.
            const cd s = points[static_cast<std::size_t>(i0 + std::min<Index>(w, lanes - 1))];
            sr[w] = s.real();
            si[w] = s.imag();
            singular[w] = false;
        }
        for (Index r = 0; r < k; ++r)
            for (Index col = 0; col < k; ++col) {
                const double gv = g[col * k + r], cv = c[col * k + r];
                for (int w = 0; w < W; ++w) {
                    ar[at(r * k + col, w)] = gv + sr[w] * cv;
                    ai[at(r * k + col, w)] = si[w] * cv;
                }
            }
        for (Index j = 0; j < k; ++j) {
            for (int w = 0; w < W; ++w) {
                Index best = j;
                double bestMag = std::abs(ar[at(j * k + j, w)]) + std::abs(ai[at(j * k + j, w)]);
                for (Index r = j + 1; r < k; ++r) {
                    const double m
                        = std::abs(ar[at(r * k + j, w)]) + std::abs(ai[at(r * k + j, w)]);
                    if (m > bestMag) {
                        best = r;
                        bestMag = m;
                    }
                }
                piv[w * k + j] = best;
                if (best != j)
                    for (Index cc = 0; cc < k; ++cc) {
                        std::swap(ar[at(j * k + cc, w)], ar[at(best * k + cc, w)]);
                        std::swap(ai[at(j * k + cc, w)], ai[at(best * k + cc, w)]);
                    }
                if (!(bestMag > 0.0)) {
                    singular[w] = true;
                    ar[at(j * k + j, w)] = 1.0; // keeps the lane finite; its results are NaN
                }
            }
            // 1 / U(j, j) with one real division; the scaled library division where the
            // squared magnitude could overflow or underflow.
            for (int w = 0; w < W; ++w) {
                const double re = ar[at(j * k + j, w)], im = ai[at(j * k + j, w)];
                const double scale = 1.0 / (re * re + im * im);
                invR[at(j, w)] = re * scale;
                invI[at(j, w)] = -im * scale;
            }
            for (int w = 0; w < W; ++w) {
                const double re = ar[at(j * k + j, w)], im = ai[at(j * k + j, w)];
                const double m = std::max(std::abs(re), std::abs(im));
                if (!(m > 1e-150 && m < 1e150)) {
                    const cd inv = 1.0 / cd(re, im);
                    invR[at(j, w)] = inv.real();
                    invI[at(j, w)] = inv.imag();
                }
            }
            for (Index r = j + 1; r < k; ++r) {
                for (int w = 0; w < W; ++w) {
                    const double xr = ar[at(r * k + j, w)], xi = ai[at(r * k + j, w)];
                    const double vr = invR[at(j, w)], vi = invI[at(j, w)];
                    ar[at(r * k + j, w)] = xr * vr - xi * vi;
                    ai[at(r * k + j, w)] = xr * vi + xi * vr;
                }
                for (Index cc = j + 1; cc < k; ++cc)
                    for (int w = 0; w < W; ++w) {
                        const double fr = ar[at(r * k + j, w)], fi = ai[at(r * k + j, w)];
                        const double ur = ar[at(j * k + cc, w)], ui = ai[at(j * k + cc, w)];
                        ar[at(r * k + cc, w)] -= fr * ur - fi * ui;
                        ai[at(r * k + cc, w)] -= fr * ui + fi * ur;
                    }
            }
        }
        for (Index v = 0; v < nVectors; ++v) {
            const int which = plan.vectors[static_cast<std::size_t>(v)];
            if (!plan.transposed) {
                // P A = L U with whole rows swapped (multipliers included): swaps first.
                for (Index r = 0; r < k; ++r)
                    for (int w = 0; w < W; ++w) {
                        yr[at(r, w)] = b[which * k + r];
                        yi[at(r, w)] = 0.0;
                    }
                for (int w = 0; w < W; ++w)
                    for (Index j = 0; j < k; ++j)
                        std::swap(yr[at(j, w)], yr[at(piv[w * k + j], w)]);
                for (Index j = 0; j < k; ++j)
                    for (Index r = j + 1; r < k; ++r)
                        for (int w = 0; w < W; ++w) {
                            const double fr = ar[at(r * k + j, w)], fi = ai[at(r * k + j, w)];
                            const double xr = yr[at(j, w)], xi = yi[at(j, w)];
                            yr[at(r, w)] -= fr * xr - fi * xi;
                            yi[at(r, w)] -= fr * xi + fi * xr;
                        }
                for (Index r = k - 1; r >= 0; --r)
                    for (int w = 0; w < W; ++w) {
                        double accR = yr[at(r, w)], accI = yi[at(r, w)];
                        for (Index cc = r + 1; cc < k; ++cc) {
                            const double ur = ar[at(r * k + cc, w)], ui = ai[at(r * k + cc, w)];
                            accR -= ur * yr[at(cc, w)] - ui * yi[at(cc, w)];
                            accI -= ur * yi[at(cc, w)] + ui * yr[at(cc, w)];
                        }
                        const double vr = invR[at(r, w)], vi = invI[at(r, w)];
                        yr[at(r, w)] = accR * vr - accI * vi;
                        yi[at(r, w)] = accR * vi + accI * vr;
                    }
            } else {
                // A^T = U^T L^T P: solve U^T x = l, then L^T y = x, then undo the swaps.
                for (Index r = 0; r < k; ++r)
                    for (int w = 0; w < W; ++w) {
                        double accR = l[r * outputs + which], accI = 0.0;
                        for (Index m = 0; m < r; ++m) {
                            const double ur = ar[at(m * k + r, w)], ui = ai[at(m * k + r, w)];
                            accR -= ur * yr[at(m, w)] - ui * yi[at(m, w)];
                            accI -= ur * yi[at(m, w)] + ui * yr[at(m, w)];
                        }
                        const double vr = invR[at(r, w)], vi = invI[at(r, w)];
                        yr[at(r, w)] = accR * vr - accI * vi;
                        yi[at(r, w)] = accR * vi + accI * vr;
                    }
                for (Index r = k - 2; r >= 0; --r)
                    for (Index m = r + 1; m < k; ++m)
                        for (int w = 0; w < W; ++w) {
                            const double fr = ar[at(m * k + r, w)], fi = ai[at(m * k + r, w)];
                            const double xr = yr[at(m, w)], xi = yi[at(m, w)];
                            yr[at(r, w)] -= fr * xr - fi * xi;
                            yi[at(r, w)] -= fr * xi + fi * xr;
                        }
                for (int w = 0; w < W; ++w)
                    for (Index j = k - 1; j >= 0; --j) {
                        std::swap(yr[at(j, w)], yr[at(piv[w * k + j], w)]);
                        std::swap(yi[at(j, w)], yi[at(piv[w * k + j], w)]);
                    }
            }
            for (std::size_t e = 0; e < entries.size(); ++e) {
                if (plan.slot[e] != v)
                    continue;
                const int other = plan.other[e];
                double accR[W], accI[W];
                if (!plan.transposed) {
                    for (int w = 0; w < W; ++w) {
                        accR[w] = d[which * outputs + other];
                        accI[w] = 0.0;
                    }
                    for (Index m = 0; m < k; ++m)
                        for (int w = 0; w < W; ++w) {
                            accR[w] += l[m * outputs + other] * yr[at(m, w)];
                            accI[w] += l[m * outputs + other] * yi[at(m, w)];
                        }
                } else {
                    for (int w = 0; w < W; ++w) {
                        accR[w] = d[other * outputs + which];
                        accI[w] = 0.0;
                    }
                    for (Index m = 0; m < k; ++m)
                        for (int w = 0; w < W; ++w) {
                            accR[w] += b[other * k + m] * yr[at(m, w)];
                            accI[w] += b[other * k + m] * yi[at(m, w)];
                        }
                }
                cd *dst = out + static_cast<Index>(e) * nPoints + i0;
                for (Index w = 0; w < lanes; ++w) {
                    const bool finite = std::isfinite(accR[w]) && std::isfinite(accI[w]);
                    dst[w] = finite && !singular[w] ? cd(accR[w], accI[w]) : nan;
                }
            }
        }
    }
}

template<int W>
void sweepWidth(const PencilView &pencil, int k, std::span<const cd> points,
                std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    switch (k) {
    case 1:
        return sweepOrder<1, W>(pencil, k, points, entries, plan, out);
    case 2:
        return sweepOrder<2, W>(pencil, k, points, entries, plan, out);
    case 3:
        return sweepOrder<3, W>(pencil, k, points, entries, plan, out);
    case 4:
        return sweepOrder<4, W>(pencil, k, points, entries, plan, out);
    case 5:
        return sweepOrder<5, W>(pencil, k, points, entries, plan, out);
    case 6:
        return sweepOrder<6, W>(pencil, k, points, entries, plan, out);
    case 7:
        return sweepOrder<7, W>(pencil, k, points, entries, plan, out);
    case 8:
        return sweepOrder<8, W>(pencil, k, points, entries, plan, out);
    default:
        return sweepOrder<0, W>(pencil, k, points, entries, plan, out);
    }
}

} // namespace

void sweepPencil(const PencilView &pencil, std::span<const std::complex<double>> points,
                 std::span<const TransferEntry> entries, std::complex<double> *out)
{
    const auto k = static_cast<int>(pencil.g.rows());
    const auto nPoints = static_cast<Index>(points.size());
    if (k == 0) {
        for (std::size_t e = 0; e < entries.size(); ++e)
            for (Index i = 0; i < nPoints; ++i)
                out[static_cast<Index>(e) * nPoints + i]
                    = pencil.d(entries[e].output, entries[e].input);
        return;
    }
    thread_local Plan plan;
    makePlan(entries, plan);
    // Single points (root finding) skip the lanes.
    if (points.size() < 4)
        return sweepWidth<1>(pencil, k, points, entries, plan, out);
    return sweepWidth<4>(pencil, k, points, entries, plan, out);
}

} // namespace loopsketch::detail
