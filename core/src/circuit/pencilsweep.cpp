#include "circuit/pencilsweep.h"

#include "circuit/lanes.h"
#include "circuit/pencilpoint.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <new>
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
using namespace lanes;

/// Which vectors each point solves for: columns of B (direct) or rows of L (transposed),
/// and for each entry the solved vector it reads and the index it pairs it with.
struct Plan
{
    bool transposed = false;
    std::vector<int> vectors; ///< column (direct) or row (transposed) of each solve
    std::vector<int> slot; ///< per entry: index into `vectors`
    std::vector<int> other; ///< per entry: its row (direct) or column (transposed)
    std::vector<int> rows, cols; ///< scratch, kept to avoid allocating per call
    /// Per point, set to 1 where the point's error estimate is above
    /// kDoubtfulRelativeError (or it took the careful solve), else 0; null: no estimate.
    std::uint8_t *doubtful = nullptr;
    double doubtfulFloor = 0.0; ///< the level a value below it is held to
};

void makePlan(std::span<const TransferEntry> entries, Plan &plan)
{
    std::vector<int> &rows = plan.rows, &cols = plan.cols;
    distinctPorts(entries, rows, cols);
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

/// The sweep for order K (0: any order, given by `kAny`), several points at a time (L).
/// One point's elimination is a chain of dependent divisions and products that leaves the
/// core waiting on latency; independent points side by side in vector registers fill it.
/// Partial pivoting stays per point. Neighbouring frequencies nearly always choose the same
/// pivot row, so that case is a plain row swap (`uniform`), and only lanes that disagree
/// pay for lane-wise selects. Compile-time K lets the compiler unroll the elimination.
template<int K, typename L>
[[gnu::always_inline]] inline void
sweepLanes(const PencilView &p, int kAny, std::span<const cd> points,
           std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    std::uint8_t *const doubtful = plan.doubtful;
    using LC = LaneComplex<L>;
    constexpr int W = laneCount<L>;
    const Index k = K > 0 ? K : kAny;
    const Index outputs = p.l.rows();
    const auto nPoints = static_cast<Index>(points.size());
    const auto nVectors = static_cast<Index>(plan.vectors.size());
    // Element (r, c) at [r k + c], overwritten by the factors; fixed orders on the stack.
    constexpr Index cap = K > 0 ? K : 1;
    alignas(kLaneAlignment) LC aStack[cap * cap], invStack[cap], yStack[cap], resStack[cap],
        keptStack[cap], dualStack[cap];
    alignas(kLaneAlignment) L pivStack[cap], weightStack[cap], sizeStack[cap];
    Index uniformStack[cap];
    LC *a = aStack, *invDiag = invStack, *y = yStack, *res = resStack, *kept = keptStack;
    LC *dual = dualStack; // the adjoint of an output (see forwardError)
    L *rowSize = sizeStack; // (|A| |y| + |b|) per row, from backwardError
    L *piv = pivStack; // row swapped with row j, per lane (a small integer as a double)
    L *weight = weightStack; // 1 / the largest squared modulus of each row, per lane
    Index *uniform = uniformStack; // that row when every lane chose it, else -1
    if constexpr (K == 0) {
        thread_local LaneVector<LC> work;
        thread_local LaneVector<L> pivots;
        thread_local std::vector<Index> same;
        work.resize(static_cast<std::size_t>(k * k + 5 * k));
        pivots.resize(static_cast<std::size_t>(3 * k));
        same.resize(static_cast<std::size_t>(k));
        a = work.data();
        invDiag = a + k * k;
        y = invDiag + k;
        res = y + k;
        kept = res + k;
        dual = kept + k;
        piv = pivots.data();
        weight = piv + k;
        rowSize = weight + k;
        uniform = same.data();
    }
    const double *g = p.g.data(), *c = p.c.data(), *b = p.b.data(), *l = p.l.data();
    const double *d = p.d.data();
    const cd nan(std::numeric_limits<double>::quiet_NaN(),
                 std::numeric_limits<double>::quiet_NaN());
    // Every lambda below is inlined always and takes lanes by reference: without
    // optimisation a lambda is a function of its own, compiled for the baseline processor,
    // and lanes passed by value from the AVX-2 or AVX-512 caller arrive by another calling
    // convention (in the -O0 sanitizer build isUniform() saw garbage, so lanes 1 to 3 took
    // lane 0's pivot rows and gave wrong numbers with no warning: fuzz seeds 7, 8 and 19).
    const auto isUniform = [](const L &v) __attribute__((always_inline))
    {
        for (int w = 1; w < W; ++w)
            if (v[w] != v[0])
                return false;
        return true;
    };
    // Row swaps of the right-hand side, in the order of the factorisation or reversed.
    const auto swapRhs = [&](LC * x, Index j) __attribute__((always_inline))
    {
        if (uniform[j] >= 0) {
            if (uniform[j] != j)
                std::swap(x[j], x[uniform[j]]);
            return;
        }
        for (Index r = j + 1; r < k; ++r)
            swapLanes<L>(piv[j] == static_cast<double>(r), x + j, x + r, 1);
    };
    const auto anyLane = [](const L &v) __attribute__((always_inline))
    {
        for (int w = 0; w < W; ++w)
            if (v[w] != 0.0)
                return true;
        return false;
    };

    // Which entries of each row can be non-zero (bit c for column c), from G and C, then
    // followed through swaps and fill-in: the reduced pencils are sparse (the gain block's
    // states form a chain, a test-driven block does not feed back), and skipping products
    // with exact zeros changes no result.
    using Pattern = std::uint32_t;
    Pattern patternStack[cap], startStack[cap];
    Pattern *nz = patternStack, *start = startStack;
    thread_local std::vector<Pattern> patterns;
    if (K == 0 || k > 32) {
        patterns.assign(static_cast<std::size_t>(2 * k), 0);
        nz = patterns.data();
        start = nz + k;
    }
    const bool sparse = k <= 32;
    for (Index r = 0; r < k; ++r) {
        start[r] = 0;
        for (Index col = 0; col < k && sparse; ++col)
            if (g[col * k + r] != 0.0 || c[col * k + r] != 0.0)
                start[r] |= Pattern(1) << col;
        if (!sparse)
            start[r] = ~Pattern(0);
    }
    const auto has = [&](Index r, Index col) __attribute__((always_inline))
    {
        return !sparse || ((nz[r] >> col) & 1u) != 0;
    };

    for (Index i0 = 0; i0 < nPoints; i0 += W) {
        const Index lanes = std::min<Index>(W, nPoints - i0);
        for (Index r = 0; r < k; ++r)
            nz[r] = start[r];
        L sr, si;
        for (int w = 0; w < W; ++w) {
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
        // Scaled partial pivoting: each row's candidate weighed against that row's largest
        // entry (implicit row equilibration). The rows of the pencil are in different units
        // (siemens, farads times s, dimensionless) and the plain largest modulus may pick a
        // row that is large only in its units; with 1e-3..1e12 ohm beside picofarads the
        // plain choice lost up to 1e-5 of a gain whose system is conditioned to 1e3. The
        // weights follow their rows through the swaps.
        for (Index r = 0; r < k; ++r) {
            L largest = magnitude2(a[r * k]);
            for (Index col = 1; col < k; ++col) {
                const L m = magnitude2(a[r * k + col]);
                largest = m > largest ? m : largest;
            }
            const auto usable = (largest > 1e-290) & (largest < 1e290);
            weight[r] = usable ? 1.0 / largest : L{} + 1.0;
        }
        L retry = {}; // non-zero in a lane that needs the careful solve
        L unsure = {}; // non-zero in a lane whose forward error estimate is too large
        for (Index j = 0; j < k; ++j) {
            // Pivot by squared modulus (which the reciprocal needs anyway) times the weight.
            L bestMag = magnitude2(a[j * k + j]);
            L bestScore = bestMag * weight[j];
            L best = L{} + static_cast<double>(j);
            for (Index r = j + 1; r < k; ++r) {
                const L m = magnitude2(a[r * k + j]);
                const L score = m * weight[r];
                const auto better = score > bestScore;
                bestScore = better ? score : bestScore;
                bestMag = better ? m : bestMag;
                best = better ? L{} + static_cast<double>(r) : best;
            }
            piv[j] = best;
            if (isUniform(best)) {
                const auto row = static_cast<Index>(best[0]);
                uniform[j] = row;
                if (row != j) {
                    for (Index cc = 0; cc < k; ++cc)
                        std::swap(a[j * k + cc], a[row * k + cc]);
                    std::swap(nz[j], nz[row]);
                    std::swap(weight[j], weight[row]);
                }
            } else {
                uniform[j] = -1;
                for (Index r = j + 1; r < k; ++r) {
                    const auto take = best == static_cast<double>(r);
                    swapLanes<L>(take, a + j * k, a + r * k, k);
                    const L top = weight[j];
                    weight[j] = take ? weight[r] : top;
                    weight[r] = take ? top : weight[r];
                    nz[j] = nz[r] = nz[j] | nz[r]; // either row's entries, lane by lane
                }
            }
            // A zero, tiny or huge pivot: that point is solved again carefully at the end.
            retry = (bestMag < 1e-290) | (bestMag > 1e290) ? L{} + 1.0 : retry;
            const LC inv = reciprocal(a[j * k + j], bestMag);
            invDiag[j] = inv;
            const Pattern right = sparse ? nz[j] & ~((Pattern(2) << j) - 1) : 0;
            for (Index r = j + 1; r < k; ++r) {
                if (!has(r, j))
                    continue;
                const LC f = mul(a[r * k + j], inv);
                a[r * k + j] = f;
                for (Index cc = j + 1; cc < k; ++cc)
                    if (has(j, cc))
                        subMul(a[r * k + cc], f, a[j * k + cc]);
                nz[r] |= right;
            }
        }
        // x = A^-1 x (direct) or A^-T x (transposed) in place, from the factors.
        const auto solveWith = [&](LC * x, bool transposed) __attribute__((always_inline))
        {
            if (!transposed) {
                // P A = L U with whole rows swapped (multipliers included): swaps first.
                for (Index j = 0; j < k; ++j)
                    swapRhs(x, j);
                for (Index j = 0; j < k; ++j)
                    for (Index r = j + 1; r < k; ++r)
                        if (has(r, j))
                            subMul(x[r], a[r * k + j], x[j]);
                for (Index r = k - 1; r >= 0; --r) {
                    LC acc = x[r];
                    for (Index cc = r + 1; cc < k; ++cc)
                        if (has(r, cc))
                            subMul(acc, a[r * k + cc], x[cc]);
                    x[r] = mul(acc, invDiag[r]);
                }
            } else {
                // A^T = U^T L^T P: solve U^T w = x, then L^T v = w, then undo the swaps.
                for (Index r = 0; r < k; ++r) {
                    LC acc = x[r];
                    for (Index m = 0; m < r; ++m)
                        if (has(m, r))
                            subMul(acc, a[m * k + r], x[m]);
                    x[r] = mul(acc, invDiag[r]);
                }
                for (Index r = k - 2; r >= 0; --r)
                    for (Index m = r + 1; m < k; ++m)
                        if (has(m, r))
                            subMul(x[r], a[m * k + r], x[m]);
                for (Index j = k - 1; j >= 0; --j)
                    swapRhs(x, j);
            }
        };
        const auto solveInPlace = [&](LC * x) __attribute__((always_inline))
        {
            solveWith(x, plan.transposed);
        };
        // The residual of y against the pencil itself (the factors overwrote it; G + sC is
        // rebuilt row by row) into `res`, and the componentwise backward error of y per lane
        // (Oettli-Prager: the largest |r_i| / (|A| |y| + |b|)_i; a row whose sizes are all
        // zero counts 1 if it misses at all).
        const auto backwardError = [&](int which) __attribute__((always_inline))
        {
            L omega = L{};
            for (Index r = 0; r < k; ++r) {
                const double rhs = plan.transposed ? l[r * outputs + which] : b[which * k + r];
                LC acc{L{} + rhs, L{}};
                L size = L{} + std::abs(rhs);
                for (Index cc = 0; cc < k; ++cc) {
                    // Row r of A (direct) or of A^T (transposed); g and c are column-major.
                    const Index at = plan.transposed ? r * k + cc : cc * k + r;
                    const double gv = g[at], cv = c[at];
                    if (gv == 0.0 && cv == 0.0)
                        continue;
                    const L re = gv + sr * cv, im = si * cv;
                    acc.re -= re * y[cc].re - im * y[cc].im;
                    acc.im -= re * y[cc].im + im * y[cc].re;
                    size += (absLanes(re) + absLanes(im))
                        * (absLanes(y[cc].re) + absLanes(y[cc].im));
                }
                res[r] = acc;
                rowSize[r] = size;
                const L miss = absLanes(acc.re) + absLanes(acc.im);
                const L positive = size > 0.0 ? size : L{} + 1.0;
                const L row = size > 0.0 ? miss / positive : (miss > 0.0 ? L{} + 1.0 : L{});
                // Not finite (an overflow) counts as too large, so the lane is tried again.
                omega = row > omega || row != row ? row : omega;
            }
            return omega;
        };
        // First-order error of the entry that pairs the solved vector `which` with `other`,
        // acc its value: a small backward error bounds the error of y only as far as the
        // pencil is well conditioned, and the reduced pencil can be far worse conditioned
        // than the circuit (fuzz seed 14: backward error 5e-16, the gain off by 2.6e-7 at
        // some points, 1e-11 at their neighbours). With w the adjoint of the entry (the
        // output's row of L solved with A^T for a direct solve; B's column solved with A for
        // a transposed one), the error is w^T r for the residual r, plus one rounding of every
        // term of A y and b weighed by |w|, plus one rounding of every term of the output's
        // sum (as RefinedSolver::errorBound() for the full system). Needs the residual and
        // row sizes of the solution in hand (backwardError()).
        const auto forwardError = [&](int which, int other) __attribute__((always_inline))
        {
            constexpr double u = std::numeric_limits<double>::epsilon() / 2;
            L sum = absLanes(
                L{} + (plan.transposed ? d[other * outputs + which] : d[which * outputs + other]));
            for (Index m = 0; m < k; ++m) {
                const double q = plan.transposed ? b[other * k + m] : l[m * outputs + other];
                dual[m] = {L{} + q, L{}};
                sum += std::abs(q) * (absLanes(y[m].re) + absLanes(y[m].im));
            }
            solveWith(dual, !plan.transposed);
            LC wr{};
            L weighed = L{};
            for (Index m = 0; m < k; ++m) {
                wr.re += dual[m].re * res[m].re - dual[m].im * res[m].im;
                wr.im += dual[m].re * res[m].im + dual[m].im * res[m].re;
                weighed += (absLanes(dual[m].re) + absLanes(dual[m].im)) * rowSize[m];
            }
            const L bound = absLanes(wr.re) + absLanes(wr.im) + u * (weighed + sum);
            return bound;
        };
        for (Index v = 0; v < nVectors; ++v) {
            const int which = plan.vectors[static_cast<std::size_t>(v)];
            for (Index r = 0; r < k; ++r)
                y[r] = {L{} + (plan.transposed ? l[r * outputs + which] : b[which * k + r]), L{}};
            solveInPlace(y);
            // Partial pivoting is backward stable normwise only (kRefineBackwardError): where
            // a lane's componentwise backward error is too large, one step of refinement
            // with the same factors, applied in that lane only, so that a point's value does
            // not depend on the points beside it (every width gives the same numbers). One
            // step is what componentwise stability needs; a row whose terms are all rounding
            // (an unknown that is zero in exact arithmetic) keeps a backward error near 1
            // however often it is refined, so no more are taken. Where the factors are too
            // unstable for the correction to help (it can make a solution worse, as on a
            // 6e11-ohm series inductor beside ohms: fuzz seed 487), a lane keeps the solution
            // with the smaller backward error.
            const L before = backwardError(which);
            const L worse = before > kRefineBackwardError || before != before ? L{} + 1.0 : L{};
            if (anyLane(worse)) {
                const auto refine = worse != 0.0;
                for (Index r = 0; r < k; ++r)
                    kept[r] = y[r];
                solveInPlace(res);
                for (Index r = 0; r < k; ++r) {
                    y[r].re = refine ? y[r].re + res[r].re : y[r].re;
                    y[r].im = refine ? y[r].im + res[r].im : y[r].im;
                }
                const L after = backwardError(which);
                // Back to the first solution where the step did not lower the error (a lane
                // whose first error was not finite keeps the step).
                const auto improved = (after < before) | (before != before);
                const auto back = refine & ~improved;
                for (Index r = 0; r < k; ++r) {
                    y[r].re = back ? kept[r].re : y[r].re;
                    y[r].im = back ? kept[r].im : y[r].im;
                }
                if (doubtful && anyLane(back ? L{} + 1.0 : L{}))
                    backwardError(which); // the residual of the solution kept
            }
            for (std::size_t e = 0; e < entries.size(); ++e) {
                if (plan.slot[e] != v)
                    continue;
                const int other = plan.other[e];
                LC acc;
                if (!plan.transposed) {
                    acc = {L{} + d[which * outputs + other], L{}};
                    for (Index m = 0; m < k; ++m) {
                        acc.re += l[m * outputs + other] * y[m].re;
                        acc.im += l[m * outputs + other] * y[m].im;
                    }
                } else {
                    acc = {L{} + d[other * outputs + which], L{}};
                    for (Index m = 0; m < k; ++m) {
                        acc.re += b[other * k + m] * y[m].re;
                        acc.im += b[other * k + m] * y[m].im;
                    }
                }
                // Non-finite results go the careful way too (x * 0 is NaN for inf and NaN).
                const L probe = acc.re * 0.0 + acc.im * 0.0;
                retry = probe != 0.0 ? L{} + 1.0 : retry;
                if (doubtful) {
                    const L size = absLanes(acc.re) + absLanes(acc.im);
                    const L level = size > plan.doubtfulFloor ? size : L{} + plan.doubtfulFloor;
                    unsure = forwardError(which, other) > kDoubtfulRelativeError * level ? L{} + 1.0
                                                                                         : unsure;
                }
                cd *dst = out + static_cast<Index>(e) * nPoints + i0;
                for (Index w = 0; w < lanes; ++w)
                    dst[w] = cd(acc.re[w], acc.im[w]);
            }
        }
        for (Index w = 0; w < lanes; ++w) {
            if (retry[w] != 0.0)
                solvePointCarefully(p, points[static_cast<std::size_t>(i0 + w)], entries,
                                    out + i0 + w, nPoints);
            if (doubtful)
                doubtful[i0 + w] = retry[w] != 0.0 || unsure[w] != 0.0 ? 1 : 0;
        }
    }
}

template<int K>
void sweepOrder(const PencilView &p, int k, std::span<const cd> points,
                std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    sweepLanes<K, Lanes2>(p, k, points, entries, plan, out);
}

#if defined(__x86_64__) && defined(__GNUC__)
#define LOOPSKETCH_HAVE_WIDE_SWEEP 1
// The same four or eight points at a time, for processors with AVX2 or AVX-512, chosen at
// run time. The arithmetic per point is the same (this file is compiled without
// contraction into fused multiply-adds), so are the results.
template<int K>
__attribute__((target("avx2"))) void
sweepOrderAvx2(const PencilView &p, int k, std::span<const cd> points,
               std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    sweepLanes<K, Lanes4>(p, k, points, entries, plan, out);
}

template<int K>
__attribute__((target("avx512f"))) void
sweepOrderAvx512(const PencilView &p, int k, std::span<const cd> points,
                 std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    sweepLanes<K, Lanes8>(p, k, points, entries, plan, out);
}
#endif

template<int K> struct Baseline
{
    static void run(const PencilView &p, int k, std::span<const cd> points,
                    std::span<const TransferEntry> entries, const Plan &plan, cd *out)
    {
        sweepOrder<K>(p, k, points, entries, plan, out);
    }
};

#ifdef LOOPSKETCH_HAVE_WIDE_SWEEP
template<int K> struct WithAvx2
{
    static void run(const PencilView &p, int k, std::span<const cd> points,
                    std::span<const TransferEntry> entries, const Plan &plan, cd *out)
    {
        sweepOrderAvx2<K>(p, k, points, entries, plan, out);
    }
};

template<int K> struct WithAvx512
{
    static void run(const PencilView &p, int k, std::span<const cd> points,
                    std::span<const TransferEntry> entries, const Plan &plan, cd *out)
    {
        sweepOrderAvx512<K>(p, k, points, entries, plan, out);
    }
};
#endif

template<template<int> typename Sweep>
void sweepAnyOrder(const PencilView &pencil, int k, std::span<const cd> points,
                   std::span<const TransferEntry> entries, const Plan &plan, cd *out)
{
    switch (k) {
    case 1:
        return Sweep<1>::run(pencil, k, points, entries, plan, out);
    case 2:
        return Sweep<2>::run(pencil, k, points, entries, plan, out);
    case 3:
        return Sweep<3>::run(pencil, k, points, entries, plan, out);
    case 4:
        return Sweep<4>::run(pencil, k, points, entries, plan, out);
    case 5:
        return Sweep<5>::run(pencil, k, points, entries, plan, out);
    case 6:
        return Sweep<6>::run(pencil, k, points, entries, plan, out);
    case 7:
        return Sweep<7>::run(pencil, k, points, entries, plan, out);
    case 8:
        return Sweep<8>::run(pencil, k, points, entries, plan, out);
    default:
        return Sweep<0>::run(pencil, k, points, entries, plan, out);
    }
}

} // namespace

void sweepPencil(const PencilView &pencil, std::span<const std::complex<double>> points,
                 std::span<const TransferEntry> entries, std::complex<double> *out,
                 [[maybe_unused]] SweepWidth width, std::span<std::uint8_t> doubtful,
                 double doubtfulFloor)
{
    const auto k = static_cast<int>(pencil.g.rows());
    const auto nPoints = static_cast<Index>(points.size());
    if (k == 0) {
        for (std::size_t e = 0; e < entries.size(); ++e)
            for (Index i = 0; i < nPoints; ++i)
                out[static_cast<Index>(e) * nPoints + i]
                    = pencil.d(entries[e].output, entries[e].input);
        std::fill(doubtful.begin(), doubtful.end(), std::uint8_t(0));
        return;
    }
    thread_local Plan plan;
    makePlan(entries, plan);
    plan.doubtful = doubtful.empty() ? nullptr : doubtful.data();
    plan.doubtfulFloor = doubtfulFloor;
#ifdef LOOPSKETCH_HAVE_WIDE_SWEEP
    if (width == SweepWidth::Automatic) // a single point (root finding) costs a whole group
        width = sweepWidthAvailable(SweepWidth::Eight) && points.size() > 4 ? SweepWidth::Eight
            : sweepWidthAvailable(SweepWidth::Four)                         ? SweepWidth::Four
                                                                            : SweepWidth::Two;
    if (width == SweepWidth::Eight && sweepWidthAvailable(SweepWidth::Eight))
        return sweepAnyOrder<WithAvx512>(pencil, k, points, entries, plan, out);
    if (width != SweepWidth::Two && sweepWidthAvailable(SweepWidth::Four))
        return sweepAnyOrder<WithAvx2>(pencil, k, points, entries, plan, out);
#endif
    sweepAnyOrder<Baseline>(pencil, k, points, entries, plan, out);
}

bool sweepWidthAvailable(SweepWidth width)
{
#ifdef LOOPSKETCH_HAVE_WIDE_SWEEP
    static const bool avx512 = __builtin_cpu_supports("avx512f");
    static const bool avx2 = __builtin_cpu_supports("avx2");
    switch (width) {
    case SweepWidth::Eight:
        return avx512;
    case SweepWidth::Four:
        return avx2;
    default:
        return true;
    }
#else
    return width == SweepWidth::Automatic || width == SweepWidth::Two;
#endif
}

} // namespace loopsketch::detail
