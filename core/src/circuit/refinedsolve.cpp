#include "circuit/refinedsolve.h"

#include <cmath>
#include <limits>
#include <map>
#include <tuple>
#include <utility>

namespace loopsketch::detail {

namespace {

using cd = std::complex<double>;
using cld = std::complex<long double>;
using Index = Eigen::Index;

constexpr int kMaxRefinements = 4;

} // namespace

bool RefinedSolver::factor(cd s)
{
    m_s = s;
    const Index n = m_system.G.rows();
    m_a = m_system.G.cast<cd>() + s * m_system.C;
    // Powers of two, so the scaling itself rounds nothing.
    const auto power2 = [](double v) {
        return v > 0 && std::isfinite(v) ? std::exp2(std::round(-std::log2(v))) : 1.0;
    };
    // The moduli of the non-zero entries only (the nodal matrix is sparse: a modulus is a
    // hypot call, and the n^2 of them were a tenth of a large circuit's analysis).
    m_rowScale.setZero(n);
    m_colScale.resize(n);
    m_modulus.setZero(n, n);
    for (Index j = 0; j < n; ++j)
        for (Index i = 0; i < n; ++i)
            if (m_a(i, j) != cd(0.0)) {
                m_modulus(i, j) = std::abs(m_a(i, j));
                m_rowScale(i) = std::max(m_rowScale(i), m_modulus(i, j));
            }
    for (Index i = 0; i < n; ++i)
        m_rowScale(i) = power2(m_rowScale(i));
    for (Index j = 0; j < n; ++j) {
        double largest = 0.0;
        for (Index i = 0; i < n; ++i)
            largest = std::max(largest, m_rowScale(i) * m_modulus(i, j));
        m_colScale(j) = power2(largest);
    }
    m_lu.compute(m_rowScale.asDiagonal() * m_a * m_colScale.asDiagonal());
    // Singular only where a pivot of the equilibrated matrix is zero (or too small to take the
    // reciprocal of) or one is not finite. A tiny pivot alone proves nothing: a gain of 1e37
    // beside ohms leaves pivots near 1e-35 in a regular matrix (fuzz seed 9426, which a floor
    // of 1e-30 made NaN at 8 points between finite neighbours). How far such a solve can be
    // trusted is what errorBound() measures, point by point.
    const Eigen::VectorXd pivots = m_lu.matrixLU().diagonal().cwiseAbs();
    return n == 0
        || (pivots.minCoeff() >= std::numeric_limits<double>::min()
            && std::isfinite(pivots.maxCoeff()));
}

Eigen::VectorXcd RefinedSolver::applyInverse(const Eigen::VectorXcd &rhs) const
{
    return m_colScale.asDiagonal() * m_lu.solve(m_rowScale.asDiagonal() * rhs);
}

Eigen::VectorXcd RefinedSolver::solve(int input, Eigen::VectorXcd *residual) const
{
    const Index n = m_a.rows();
    const Eigen::VectorXcd b = m_system.B.col(input).cast<cd>();
    Eigen::VectorXcd x = applyInverse(b);
    Eigen::VectorXcd r(n), bestR(n);
    double best = std::numeric_limits<double>::infinity();
    Eigen::VectorXcd bestX = x;
    for (int step = 0; step <= kMaxRefinements; ++step) {
        // Residual b - A x with each row's sum in extended precision; its size measured in
        // the equilibrated rows, where every row counts alike.
        double size = 0.0, terms = 0.0;
        for (Index i = 0; i < n; ++i) {
            cld acc = b(i);
            double rowTerms = 0.0;
            for (Index j = 0; j < n; ++j) {
                if (m_a(i, j) != cd(0.0)) {
                    acc -= cld(m_a(i, j)) * cld(x(j));
                    rowTerms += m_modulus(i, j) * std::abs(x(j));
                }
            }
            r(i) = cd(static_cast<double>(acc.real()), static_cast<double>(acc.imag()));
            size = std::max(size, m_rowScale(i) * std::abs(r(i)));
            terms = std::max(terms, m_rowScale(i) * rowTerms);
        }
        if (!(size < best)) // no longer improving (or not finite)
            break;
        // Stagnating, or at the rounding of the terms themselves: as good as it gets.
        const bool enough
            = size > 0.5 * best || size <= 4.0 * std::numeric_limits<double>::epsilon() * terms;
        best = size;
        bestX = x;
        bestR = r;
        if (size == 0.0 || enough)
            break;
        x += applyInverse(r);
    }
    if (residual)
        *residual = bestR;
    return bestX;
}

cd RefinedSolver::output(int output, const Eigen::VectorXcd &x) const
{
    return m_system.L.row(output).cast<cd>() * x;
}

double RefinedSolver::errorBound(int output, int input, const Eigen::VectorXcd &x,
                                 const Eigen::VectorXcd &residual,
                                 std::vector<double> *originShares) const
{
    // z = A^-T l: how the output moves per unit residual in each row.
    const Eigen::VectorXcd l = m_system.L.row(output).transpose().cast<cd>();
    // P (S_r A S_c) = L U, so (S_r A S_c)^T = U^T L^T P and A^-T = S_r (U^T L^T P)^-1 S_c.
    const Eigen::MatrixXcd &lu = m_lu.matrixLU();
    Eigen::VectorXcd v
        = lu.triangularView<Eigen::Upper>().transpose().solve((m_colScale.asDiagonal() * l).eval());
    v = lu.triangularView<Eigen::UnitLower>().transpose().solve(v);
    const Eigen::VectorXcd z = m_rowScale.asDiagonal() * (m_lu.permutationP().transpose() * v);
    // The error left by the residual (x is off by A^-1 r, the output by z^T r), plus one
    // rounding of every value as stored. A part's value is rounded once (1/R, s C) and every
    // entry it stamps carries that same rounding: a perturbation of the part itself, which
    // moves the output by eps |z^T A_p x| (the adjoint sensitivity, Director and Rohrer,
    // IEEE Trans. Circuit Theory 16 (1969), from memory), with the signs of its entries kept
    // (a conductance's four entries cancel as Kirchhoff's current law does). Entries where
    // several stamps add up round once more, each on its own: eps |z_i| sum |a_ij| |x_j|
    // (on the jw axis only stamps of one kind, both conductances or both susceptances).
    // The fixed +-1 of a connection is exact. Summing every stamp's entry on its own instead
    // (each a perturbation no part makes, a current leaking from a node) over-stated the
    // error of fuzz designs with a series chain of teraohms by up to 1e5.
    const double eps = std::numeric_limits<double>::epsilon();
    if (originShares)
        originShares->assign(m_system.origins.size(), 0.0);
    std::map<std::pair<int, int>, cd> byPart; // (origin, power): sum of z_r a_rc x_c
    // How many stamps add up in entry (r, c). On the jw axis (and at DC) the conductances
    // make the real part and the susceptances the imaginary one: they never round together.
    const bool apart = m_s.real() == 0.0;
    std::map<std::tuple<int, int, bool>, int> stampsAt;
    const auto at = [&](const StampEntry &e) {
        return std::tuple<int, int, bool>{e.row, e.col, apart && e.reactive};
    };
    for (const StampEntry &e : m_system.stamps) {
        const cd entry = e.reactive ? e.value * m_s : cd(e.value);
        if (e.power != 0)
            byPart[{e.origin, e.power}] += z(e.row) * entry * x(e.col);
        ++stampsAt[at(e)];
    }
    double bound = 0.0;
    for (const auto &[key, sum] : byPart) {
        const double term = eps * std::abs(sum);
        bound += term;
        if (originShares)
            (*originShares)[static_cast<std::size_t>(key.first)] += term;
    }
    for (const StampEntry &e : m_system.stamps) {
        if (stampsAt[at(e)] < 2)
            continue;
        const double entry = e.reactive ? std::abs(e.value * m_s) : std::abs(e.value);
        const double term = eps * std::abs(z(e.row)) * entry * std::abs(x(e.col));
        bound += term;
        if (originShares)
            (*originShares)[static_cast<std::size_t>(e.origin)] += term;
    }
    // What the residual leaves is z^T r itself, signs kept: the change one more refinement
    // step would make to the output (the residual is exact to the rounding of its extended-
    // precision sums, eps_ld (|A| |x| + |b|) per row, and of its store to double). Summing
    // |z_i| |r_i| instead over-stated it where the refinement stopped at the residual's own
    // rounding, eps |A| |x|, whose signs cancel in z^T r as the true error's do.
    const double epsExtended = std::numeric_limits<long double>::epsilon();
    cd zr = 0.0;
    for (Index i = 0; i < z.size(); ++i) {
        double terms = std::abs(m_system.B(i, input));
        for (Index j = 0; j < x.size(); ++j)
            if (m_a(i, j) != cd(0.0))
                terms += m_modulus(i, j) * std::abs(x(j));
        zr += z(i) * residual(i);
        bound += (eps * std::abs(m_system.B(i, input)) + epsExtended * terms
                  + eps * std::abs(residual(i)))
            * std::abs(z(i));
    }
    return bound + std::abs(zr);
}

} // namespace loopsketch::detail
