#include "pencilsweep.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

// Only functions of this file (internal linkage, inlined) pass the 32-byte lane vectors,
// so the note that their calling convention differs with AVX concerns no interface.
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic ignored "-Wpsabi"
#endif

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

constexpr int kLanes = 2;
/// Two points side by side (GCC/Clang vector extension): one value per point.
using Lanes = double __attribute__((vector_size(kLanes * sizeof(double))));
using LaneMask = long long __attribute__((vector_size(kLanes * sizeof(long long))));

inline Lanes absOf(Lanes x)
{
    return x < 0.0 ? -x : x;
}

/// A complex number per lane.
struct LaneComplex
{
    Lanes re, im;
};

inline LaneComplex mul(LaneComplex x, LaneComplex y)
{
    return {x.re * y.re - x.im * y.im, x.re * y.im + x.im * y.re};
}

inline void subMul(LaneComplex &acc, LaneComplex x, LaneComplex y)
{
    acc.re -= x.re * y.re - x.im * y.im;
    acc.im -= x.re * y.im + x.im * y.re;
}

inline LaneComplex select(LaneMask m, LaneComplex x, LaneComplex y)
{
    return {m ? x.re : y.re, m ? x.im : y.im};
}

/// 1 / x with one real division per lane; the library's scaled division in a lane whose
/// squared magnitude could overflow or underflow.
inline LaneComplex reciprocal(LaneComplex x)
{
    const Lanes scale = 1.0 / (x.re * x.re + x.im * x.im);
    LaneComplex r{x.re * scale, -x.im * scale};
    const Lanes ar = absOf(x.re), ai = absOf(x.im);
    const Lanes m = ar > ai ? ar : ai;
    const LaneMask ok = (m > 1e-150) & (m < 1e150);
    for (int w = 0; w < kLanes; ++w) {
        if (!ok[w]) {
            const cd inv = 1.0 / cd(x.re[w], x.im[w]);
            r.re[w] = inv.real();
            r.im[w] = inv.imag();
        }
    }
    return r;
}

/// The sweep for order K (0: any order, given by `kAny`), two points at a time. One
/// point's elimination is a chain of dependent divisions and products that leaves the core
/// waiting on latency; two independent points side by side fill it, in vector registers.
/// Partial pivoting stays per point: the row swaps are lane-wise selects. Compile-time K
/// lets the compiler unroll the elimination at the usual orders.
template<int K>
void sweepOrder(const PencilView &p, int kAny, std::span<const cd> points,
                std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    const Index k = K > 0 ? K : kAny;
    const Index outputs = p.l.rows();
    const auto nPoints = static_cast<Index>(points.size());
    const auto nVectors = static_cast<Index>(plan.vectors.size());
    // Element (r, c) at [r k + c], overwritten by the factors; fixed orders on the stack.
    constexpr Index cap = K > 0 ? K : 1;
    LaneComplex aStack[cap * cap], invStack[cap], yStack[cap];
    Lanes pivStack[cap];
    LaneComplex *a = aStack, *invDiag = invStack, *y = yStack;
    Lanes *piv = pivStack; // row swapped with row j, per lane (a small integer as double)
    if constexpr (K == 0) {
        thread_local std::vector<LaneComplex> work;
        thread_local std::vector<Lanes> pivots;
        work.resize(static_cast<std::size_t>(k * k + 2 * k));
        pivots.resize(static_cast<std::size_t>(k));
        a = work.data();
        invDiag = a + k * k;
        y = invDiag + k;
        piv = pivots.data();
    }
    const double *g = p.g.data(), *c = p.c.data(), *b = p.b.data(), *l = p.l.data();
    const double *d = p.d.data();
    const cd nan(std::numeric_limits<double>::quiet_NaN(),
                 std::numeric_limits<double>::quiet_NaN());

    for (Index i0 = 0; i0 < nPoints; i0 += kLanes) {
        const Index lanes = std::min<Index>(kLanes, nPoints - i0);
        Lanes sr, si;
        for (int w = 0; w < kLanes; ++w) {
            // A short last group repeats its last point.
            const cd s = points[static_cast<std::size_t>(i0 + std::min<Index>(w, lanes - 1))];
            sr[w] = s.real();
            si[w] = s.imag();
        }
        for (Index r = 0; r < k; ++r)
            for (Index col = 0; col < k; ++col) {
                const double gv = g[col * k + r], cv = c[col * k + r];
                a[r * k + col] = {gv + sr * cv, si * cv};
            }
        LaneMask singular = {};
        for (Index j = 0; j < k; ++j) {
            Lanes bestMag = absOf(a[j * k + j].re) + absOf(a[j * k + j].im);
            // Row numbers as doubles: double compares vectorise on every x86-64, 64-bit
            // integer ones need SSE4.1.
            Lanes best = Lanes{} + static_cast<double>(j);
            for (Index r = j + 1; r < k; ++r) {
                const Lanes m = absOf(a[r * k + j].re) + absOf(a[r * k + j].im);
                const LaneMask better = m > bestMag;
                bestMag = better ? m : bestMag;
                best = better ? Lanes{} + static_cast<double>(r) : best;
            }
            piv[j] = best;
            for (Index r = j + 1; r < k; ++r) {
                const LaneMask swap = best == static_cast<double>(r);
                for (Index cc = 0; cc < k; ++cc) {
                    const LaneComplex top = a[j * k + cc];
                    a[j * k + cc] = select(swap, a[r * k + cc], top);
                    a[r * k + cc] = select(swap, top, a[r * k + cc]);
                }
            }
            const LaneMask zero = !(bestMag > 0.0);
            singular |= zero;
            a[j * k + j].re = zero ? Lanes{} + 1.0 : a[j * k + j].re; // keeps the lane finite
            const LaneComplex inv = reciprocal(a[j * k + j]);
            invDiag[j] = inv;
            for (Index r = j + 1; r < k; ++r) {
                const LaneComplex f = mul(a[r * k + j], inv);
                a[r * k + j] = f;
                for (Index cc = j + 1; cc < k; ++cc)
                    subMul(a[r * k + cc], f, a[j * k + cc]);
            }
        }
        for (Index v = 0; v < nVectors; ++v) {
            const int which = plan.vectors[static_cast<std::size_t>(v)];
            if (!plan.transposed) {
                // P A = L U with whole rows swapped (multipliers included): swaps first.
                for (Index r = 0; r < k; ++r)
                    y[r] = {Lanes{} + b[which * k + r], Lanes{}};
                for (Index j = 0; j < k; ++j)
                    for (Index r = j + 1; r < k; ++r) {
                        const LaneMask swap = piv[j] == static_cast<double>(r);
                        const LaneComplex top = y[j];
                        y[j] = select(swap, y[r], top);
                        y[r] = select(swap, top, y[r]);
                    }
                for (Index j = 0; j < k; ++j)
                    for (Index r = j + 1; r < k; ++r)
                        subMul(y[r], a[r * k + j], y[j]);
                for (Index r = k - 1; r >= 0; --r) {
                    LaneComplex acc = y[r];
                    for (Index cc = r + 1; cc < k; ++cc)
                        subMul(acc, a[r * k + cc], y[cc]);
                    y[r] = mul(acc, invDiag[r]);
                }
            } else {
                // A^T = U^T L^T P: solve U^T x = l, then L^T y = x, then undo the swaps.
                for (Index r = 0; r < k; ++r) {
                    LaneComplex acc{Lanes{} + l[r * outputs + which], Lanes{}};
                    for (Index m = 0; m < r; ++m)
                        subMul(acc, a[m * k + r], y[m]);
                    y[r] = mul(acc, invDiag[r]);
                }
                for (Index r = k - 2; r >= 0; --r)
                    for (Index m = r + 1; m < k; ++m)
                        subMul(y[r], a[m * k + r], y[m]);
                for (Index j = k - 1; j >= 0; --j)
                    for (Index r = k - 1; r > j; --r) {
                        const LaneMask swap = piv[j] == static_cast<double>(r);
                        const LaneComplex top = y[j];
                        y[j] = select(swap, y[r], top);
                        y[r] = select(swap, top, y[r]);
                    }
            }
            for (std::size_t e = 0; e < entries.size(); ++e) {
                if (plan.slot[e] != v)
                    continue;
                const int other = plan.other[e];
                LaneComplex acc;
                if (!plan.transposed) {
                    acc = {Lanes{} + d[which * outputs + other], Lanes{}};
                    for (Index m = 0; m < k; ++m) {
                        acc.re += l[m * outputs + other] * y[m].re;
                        acc.im += l[m * outputs + other] * y[m].im;
                    }
                } else {
                    acc = {Lanes{} + d[other * outputs + which], Lanes{}};
                    for (Index m = 0; m < k; ++m) {
                        acc.re += b[other * k + m] * y[m].re;
                        acc.im += b[other * k + m] * y[m].im;
                    }
                }
                cd *dst = out + static_cast<Index>(e) * nPoints + i0;
                for (Index w = 0; w < lanes; ++w) {
                    const double re = acc.re[w], im = acc.im[w];
                    const bool finite = std::isfinite(re) && std::isfinite(im);
                    dst[w] = finite && !singular[w] ? cd(re, im) : nan;
                }
            }
        }
    }
}

void sweepAnyOrder(const PencilView &pencil, int k, std::span<const cd> points,
                   std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    switch (k) {
    case 1:
        return sweepOrder<1>(pencil, k, points, entries, plan, out);
    case 2:
        return sweepOrder<2>(pencil, k, points, entries, plan, out);
    case 3:
        return sweepOrder<3>(pencil, k, points, entries, plan, out);
    case 4:
        return sweepOrder<4>(pencil, k, points, entries, plan, out);
    case 5:
        return sweepOrder<5>(pencil, k, points, entries, plan, out);
    case 6:
        return sweepOrder<6>(pencil, k, points, entries, plan, out);
    case 7:
        return sweepOrder<7>(pencil, k, points, entries, plan, out);
    case 8:
        return sweepOrder<8>(pencil, k, points, entries, plan, out);
    default:
        return sweepOrder<0>(pencil, k, points, entries, plan, out);
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
    sweepAnyOrder(pencil, k, points, entries, plan, out);
}

} // namespace loopsketch::detail
