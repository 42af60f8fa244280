#include "circuit/pencilpoint.h"

#include <cmath>
#include <utility>
#include <vector>

namespace loopsketch::detail {

namespace {

using cd = std::complex<double>;
using Index = Eigen::Index;

/// Refinement steps of the careful solve at most; each must lower the backward error.
inline constexpr int kMaxRefinements = 3;

} // namespace

void solvePointCarefully(const PencilView &p, cd s, std::span<const TransferEntry> entries, cd *out,
                         Index stride)
{
    const Index k = p.g.rows();
    const cd nan(std::numeric_limits<double>::quiet_NaN(),
                 std::numeric_limits<double>::quiet_NaN());
    std::vector<cd> a(static_cast<std::size_t>(k * k)), y(static_cast<std::size_t>(k));
    std::vector<cd> x(static_cast<std::size_t>(k)), res(static_cast<std::size_t>(k));
    std::vector<Index> piv(static_cast<std::size_t>(k));
    std::vector<double> weight(static_cast<std::size_t>(k));
    for (Index col = 0; col < k; ++col)
        for (Index r = 0; r < k; ++r)
            a[r * k + col] = cd(p.g(r, col), 0.0) + s * p.c(r, col);
    // Scaled partial pivoting, as sweepLanes() (there the reason).
    for (Index r = 0; r < k; ++r) {
        double largest = 0.0;
        for (Index col = 0; col < k; ++col)
            largest = std::max(largest,
                               std::abs(a[r * k + col].real()) + std::abs(a[r * k + col].imag()));
        weight[r] = largest > 1e-290 && largest < 1e290 ? 1.0 / largest : 1.0;
    }
    for (Index j = 0; j < k; ++j) {
        Index best = j;
        double bestMag = std::abs(a[j * k + j].real()) + std::abs(a[j * k + j].imag());
        double bestScore = bestMag * weight[j];
        for (Index r = j + 1; r < k; ++r) {
            const double m = std::abs(a[r * k + j].real()) + std::abs(a[r * k + j].imag());
            if (m * weight[r] > bestScore) {
                best = r;
                bestMag = m;
                bestScore = m * weight[r];
            }
        }
        piv[j] = best;
        if (!(bestMag > 0.0)) {
            for (std::size_t e = 0; e < entries.size(); ++e)
                out[static_cast<Index>(e) * stride] = nan;
            return;
        }
        for (Index cc = 0; cc < k; ++cc)
            std::swap(a[j * k + cc], a[best * k + cc]);
        std::swap(weight[j], weight[best]);
        for (Index r = j + 1; r < k; ++r) {
            const cd f = a[r * k + j] / a[j * k + j];
            a[r * k + j] = f;
            for (Index cc = j + 1; cc < k; ++cc)
                a[r * k + cc] -= f * a[j * k + cc];
        }
    }
    // y = A^-1 y in place, from the factors.
    const auto solveInPlace = [&] {
        for (Index j = 0; j < k; ++j)
            std::swap(y[j], y[piv[j]]);
        for (Index j = 0; j < k; ++j)
            for (Index i = j + 1; i < k; ++i)
                y[i] -= a[i * k + j] * y[j];
        for (Index i = k - 1; i >= 0; --i) {
            cd acc = y[i];
            for (Index cc = i + 1; cc < k; ++cc)
                acc -= a[i * k + cc] * y[cc];
            y[i] = acc / a[i * k + i];
        }
    };
    const auto l1 = [](cd v) {
        return std::abs(v.real()) + std::abs(v.imag());
    };
    // r = b - A x for column `col` of B, and the componentwise backward error of x.
    const auto residual = [&](int col) {
        double omega = 0.0;
        for (Index i = 0; i < k; ++i) {
            cd acc = p.b(i, col);
            double size = std::abs(p.b(i, col));
            for (Index j = 0; j < k; ++j) {
                const cd entry = cd(p.g(i, j), 0.0) + s * p.c(i, j);
                acc -= entry * x[j];
                size += l1(entry) * l1(x[j]);
            }
            res[i] = acc;
            omega = std::max(omega, size > 0.0 ? l1(acc) / size : (l1(acc) > 0.0 ? 1.0 : 0.0));
        }
        return omega;
    };
    for (std::size_t e = 0; e < entries.size(); ++e) {
        const int col = entries[e].input, row = entries[e].output;
        for (Index i = 0; i < k; ++i)
            y[i] = p.b(i, col);
        solveInPlace();
        x = y;
        double omega = residual(col);
        for (int step = 0; step < kMaxRefinements && omega > kRefineBackwardError; ++step) {
            const std::vector<cd> previous = x;
            y = res;
            solveInPlace();
            for (Index i = 0; i < k; ++i)
                x[i] += y[i];
            const double refined = residual(col);
            if (!(refined < omega)) {
                x = previous; // no better: keep what was
                break;
            }
            omega = refined;
        }
        cd acc = p.d(row, col);
        for (Index m = 0; m < k; ++m)
            acc += p.l(row, m) * x[m];
        const bool finite = std::isfinite(acc.real()) && std::isfinite(acc.imag());
        out[static_cast<Index>(e) * stride] = finite ? acc : nan;
    }
}

} // namespace loopsketch::detail
