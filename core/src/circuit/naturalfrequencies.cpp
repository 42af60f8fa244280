// ReducedSystem's natural frequencies: the finite eigenvalues of the reduced pencil
// (balanced QZ), each confirmed by Newton steps on det(G + sC), the count inside a circle
// checked by the argument principle, and the ones QZ missed found by deflation.
#include "loopsketch/circuit/reducedsystem.h"

#include "circuit/rowscales.h"

#include "loopsketch/base/value.h"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <optional>
#include <string>

namespace loopsketch {

namespace {

using Index = Eigen::Index;

/// Power-of-two row and column balancing of the pencil (a few sweeps): neither changes
/// the eigenvalues, and QZ's errors follow the balanced entries instead of the units.
void balance(Eigen::MatrixXd &g, Eigen::MatrixXd &c)
{
    for (int sweep = 0; sweep < 4; ++sweep) {
        for (Index i = 0; i < g.rows(); ++i) {
            const double m
                = std::max(g.row(i).cwiseAbs().maxCoeff(), c.row(i).cwiseAbs().maxCoeff());
            if (m > 0 && std::isfinite(m)) {
                const double f = std::exp2(-std::round(std::log2(m)));
                g.row(i) *= f;
                c.row(i) *= f;
            }
        }
        for (Index j = 0; j < g.cols(); ++j) {
            const double m
                = std::max(g.col(j).cwiseAbs().maxCoeff(), c.col(j).cwiseAbs().maxCoeff());
            if (m > 0 && std::isfinite(m)) {
                const double f = std::exp2(-std::round(std::log2(m)));
                g.col(j) *= f;
                c.col(j) *= f;
            }
        }
    }
}

/// Finite generalized eigenvalues s of (g + s c) v = 0, the pencil scaled by w0 first
/// (s = w0 s'). `relativeToAlpha`: the finite test compares |beta| with |alpha| instead of
/// with the largest entry of the balanced C.
std::vector<std::complex<double>> finiteEigenvalues(Eigen::MatrixXd g, Eigen::MatrixXd c, double w0,
                                                    bool relativeToAlpha = false)
{
    std::vector<std::complex<double>> poles;
    g /= w0;
    balance(g, c);
    // Eigen's info() asserts (in builds with assertions) where QZ did not converge, instead
    // of saying so; the solver's own flags say it either way.
    // One solver per thread: compute() starts afresh from (g, c) and keeps only the storage.
    struct Solver : Eigen::GeneralizedEigenSolver<Eigen::MatrixXd>
    {
        bool converged() const { return m_valuesOkay && m_realQZ.info() == Eigen::Success; }
    };
    thread_local Solver ges;
    ges.compute(g, c, false);
    if (!ges.converged())
        return poles;
    const Eigen::VectorXcd alphas = ges.alphas();
    const Eigen::VectorXd betas = ges.betas();
    const double cNorm = c.cwiseAbs().maxCoeff();
    for (Index i = 0; i < alphas.size(); ++i) {
        const double b = betas(i);
        const double floor = relativeToAlpha ? 1e-13 * std::abs(alphas(i)) : 1e-13 * cNorm;
        if (std::abs(b) > floor && b != 0.0 && std::isfinite(std::abs(alphas(i)))) {
            const std::complex<double> s = -w0 * (alphas(i) / b);
            if (std::isfinite(std::abs(s)))
                poles.push_back(s);
        }
    }
    return poles;
}

/// The pencil brought to comparable entries: frequency scaled (s = w0 s', c' = w0 c, w0 a
/// power of two near |g| / |c|) and balanced by powers of two on rows and columns until the
/// sums of |g| + |c'| in every row and column are near 1. Same eigenvalues (times w0).
struct ScaledPencil
{
    Eigen::MatrixXd g, c;
    double w0 = 1.0;
    Eigen::MatrixXcd cComplex; ///< c as complex numbers, the right-hand side of every solve
};

/// The matrices of one pencil solve, kept per thread: the Newton steps and the contour of
/// the argument principle solve the same small pencil hundreds of times per call, and
/// allocating a matrix, a factorisation and a solution for each would cost more than the
/// arithmetic.
struct PencilSolve
{
    Eigen::MatrixXcd a, x;
    Eigen::PartialPivLU<Eigen::MatrixXcd> lu;

    /// Factors g + sp c (sp = s / w0); false when a pivot is exactly zero.
    bool factor(const ScaledPencil &p, std::complex<double> sp)
    {
        a = p.g.cast<std::complex<double>>() + sp * p.c.cast<std::complex<double>>();
        lu.compute(a);
        return !(lu.matrixLU().diagonal().array() == std::complex<double>(0.0)).any();
    }
    /// (g + sp c)^-1 c after factor().
    const Eigen::MatrixXcd &solveC(const ScaledPencil &p)
    {
        x = lu.solve(p.cComplex);
        return x;
    }
};

PencilSolve &pencilSolve()
{
    thread_local PencilSolve solve;
    return solve;
}

ScaledPencil scaledPencil(const Eigen::MatrixXd &gr, const Eigen::MatrixXd &cr)
{
    ScaledPencil p;
    const double gNorm = gr.cwiseAbs().sum(), cNorm = cr.cwiseAbs().sum();
    p.w0 = gNorm > 0 && cNorm > 0 && std::isfinite(gNorm / cNorm)
        ? std::exp2(std::round(std::log2(gNorm / cNorm)))
        : 1.0;
    p.g = gr;
    p.c = cr * p.w0;
    const auto power2 = [](double v) {
        return v > 0 && std::isfinite(v) ? std::exp2(std::round(-std::log2(v))) : 1.0;
    };
    const Index k = gr.rows();
    for (int sweep = 0; sweep < 30; ++sweep) {
        bool changed = false;
        for (Index i = 0; i < k; ++i) {
            const double f = power2(p.g.row(i).cwiseAbs().sum() + p.c.row(i).cwiseAbs().sum());
            p.g.row(i) *= f;
            p.c.row(i) *= f;
            changed = changed || std::abs(std::log2(f)) > 1.0;
        }
        for (Index j = 0; j < k; ++j) {
            const double f = power2(p.g.col(j).cwiseAbs().sum() + p.c.col(j).cwiseAbs().sum());
            p.g.col(j) *= f;
            p.c.col(j) *= f;
            changed = changed || std::abs(std::log2(f)) > 1.0;
        }
        if (!changed)
            break;
    }
    p.cComplex = p.c.cast<std::complex<double>>();
    return p;
}

/// The Newton step towards a root of det(G + sC) from s (rad/s): det / det' =
/// 1 / trace((G + sC)^-1 C), computed on the scaled pencil (diagonal scaling leaves the
/// trace unchanged). 0 where G + sC is exactly singular; NaN where it cannot be computed.
std::complex<double> newtonStep(const ScaledPencil &p, std::complex<double> s)
{
    using cd = std::complex<double>;
    const cd sp = s / p.w0;
    PencilSolve &solve = pencilSolve();
    if (!solve.factor(p, sp))
        return 0.0;
    const cd trace = solve.solveC(p).trace();
    if (!(std::abs(trace) > 0) || !std::isfinite(std::abs(trace)))
        return {std::numeric_limits<double>::quiet_NaN(), 0.0}; // overflow: no verdict
    return p.w0 / trace;
}

/// A candidate eigenvalue confirmed by Newton's method on det(G + sC): the root it
/// converges to (the steps shrinking to rounding level within a quarter of |s|), or
/// nothing. A spurious eigenvalue (rounding of a badly scaled pencil, an infinite mode
/// that QZ left finite) is far from every root in the relative sense, and its first step
/// is of the order of |s| itself.
std::optional<std::complex<double>> confirmedRoot(const ScaledPencil &p, std::complex<double> s)
{
    double travelled = 0;
    double lastStep = std::numeric_limits<double>::infinity();
    for (int iteration = 0; iteration < 40; ++iteration) {
        const std::complex<double> d = newtonStep(p, s);
        const double step = std::abs(d);
        if (!std::isfinite(step))
            return std::nullopt;
        const double size = std::abs(s);
        if (step <= 1e-13 * size || step == 0.0)
            return s - d;
        // Steps that stop shrinking at a level the rounding of the pencil explains (a
        // multiple root, or a root known to about 1e-10 of its size) also confirm it.
        if (step >= lastStep && step <= 1e-9 * size)
            return s;
        if (step >= 0.5 * lastStep && iteration > 3 && step > 1e-9 * size)
            return std::nullopt; // not converging
        s -= d;
        travelled += step;
        if (travelled > 0.25 * size)
            return std::nullopt; // wandered off: the candidate was no root
        lastStep = step;
    }
    return std::nullopt;
}

/// The number of roots of det(G + sC) with |s| < radius (rad/s) by the argument
/// principle, (1/2 pi i) times the contour integral of trace((G + sC)^-1 C) ds, on 64
/// points of the circle; -1 where the sum is not near an integer (a root near the circle,
/// or rounding).
int rootsInside(const ScaledPencil &p, double radius)
{
    using cd = std::complex<double>;
    constexpr int kPoints = 64;
    cd sum = 0;
    for (int i = 0; i < kPoints; ++i) {
        const cd s = std::polar(radius, 2.0 * std::numbers::pi * (i + 0.5) / kPoints);
        const cd sp = s / p.w0;
        PencilSolve &solve = pencilSolve();
        solve.factor(p, sp);
        const Eigen::MatrixXcd &x = solve.solveC(p);
        if (!x.allFinite())
            return -1;
        sum += sp * x.trace();
    }
    sum /= static_cast<double>(kPoints);
    const double count = std::round(sum.real());
    if (!(std::abs(sum - cd(count)) < 0.1) || count < 0)
        return -1;
    return static_cast<int>(count);
}

/// Roots of det(G + sC) that `known` lacks, by Newton's method on det(G + sC) / prod(s -
/// known) (Maehly's deflation, so no start falls back into a root already found), from
/// starts spread over angles and radii up to `radius`; at most `missing` of them.
std::vector<std::complex<double>> deflatedRoots(const ScaledPencil &p,
                                                std::vector<std::complex<double>> known,
                                                double radius, int missing)
{
    using cd = std::complex<double>;
    std::vector<cd> found;
    double low = radius * 1e-6;
    for (const cd r : known)
        low = std::max(low, std::abs(r));
    for (double rho = low; rho <= radius && static_cast<int>(found.size()) < missing; rho *= 4.0) {
        for (const double angle : {0.6, 2.0, 2.9}) {
            if (static_cast<int>(found.size()) >= missing)
                break;
            cd s = std::polar(rho, angle);
            bool converged = false;
            for (int iteration = 0; iteration < 80 && !converged; ++iteration) {
                const cd step = newtonStep(p, s);
                if (!std::isfinite(std::abs(step)))
                    break;
                cd deflation = 0;
                for (const cd r : known)
                    deflation += 1.0 / (s - r);
                const cd d = step == cd(0.0) ? cd(0.0) : 1.0 / (1.0 / step - deflation);
                if (!std::isfinite(std::abs(d)))
                    break;
                s -= d;
                converged = std::abs(d) <= 1e-13 * std::abs(s);
            }
            if (!converged || !std::isfinite(std::abs(s)))
                continue;
            const std::optional<cd> root = confirmedRoot(p, s);
            if (!root)
                continue;
            found.push_back(*root);
            known.push_back(*root);
        }
    }
    return found;
}

} // namespace

std::vector<std::complex<double>> ReducedSystem::naturalFrequencies() const
{
    using cd = std::complex<double>;
    if (order() == 0)
        return {};
    // (Gr + s Cr) v = 0  <=>  Gr v = lambda Cr v with lambda = -s. No one scaling of the
    // pencil suits every circuit: a very high gain puts entries of 1e12 beside 1e-6, where
    // QZ, backward stable only relative to the largest entry, loses small ones and may
    // return eigenvalues that are rounding (or infinite modes left finite). So several
    // scalings give candidates (rows with their reactive entries at 1, balanced, with and
    // without frequency scaling by the largest entry; frequency scaling by |G| / |C| and
    // balancing to unit row and column sums), and each candidate is kept only where
    // Newton's method on det(G + sC) confirms it as a root (and polishes it). The scaling
    // whose candidates give the most confirmed roots comes first; the other scalings add
    // roots it missed.
    const Eigen::VectorXd scale = detail::rowScales(m_gr, m_cr);
    Eigen::MatrixXd g = scale.asDiagonal() * m_gr;
    Eigen::MatrixXd c = scale.asDiagonal() * m_cr;
    if (!g.allFinite()) { // a gain near the largest double: no row scaling
        g = m_gr;
        c = m_cr;
    }
    const ScaledPencil pencil = scaledPencil(m_gr, m_cr);
    const auto near = [](cd a, cd b, double tolerance) {
        return std::abs(a - b) <= tolerance * std::max(std::abs(a), std::abs(b));
    };
    const auto confirm = [&](const std::vector<cd> &candidates) {
        std::vector<cd> roots, from;
        for (const cd candidate : candidates) {
            const std::optional<cd> root = confirmedRoot(pencil, candidate);
            if (!root)
                continue;
            // Two candidates far apart that converge to one root: one of them was no
            // root of its own (a multiple root shows as candidates close together).
            bool duplicate = false;
            for (std::size_t i = 0; i < roots.size(); ++i)
                duplicate
                    = duplicate || (near(roots[i], *root, 1e-8) && !near(from[i], candidate, 1e-4));
            if (!duplicate) {
                roots.push_back(*root);
                from.push_back(candidate);
            }
        }
        return roots;
    };
    std::vector<std::vector<cd>> confirmed;
    confirmed.push_back(confirm(finiteEigenvalues(g, c, 1.0)));
    // The first scaling well conditioned: as many distinct roots, each confirmed by Newton's
    // method, as det(G + sC) (a polynomial of degree at most the order) can have. They are
    // all of its roots, so no other scaling can add one, the argument principle would count
    // exactly these, and deflation would find nothing more.
    const auto allDistinct = [&](const std::vector<cd> &roots) {
        for (std::size_t i = 0; i < roots.size(); ++i)
            for (std::size_t j = 0; j < i; ++j)
                if (near(roots[i], roots[j], 1e-6))
                    return false;
        return true;
    };
    std::vector<cd> poles;
    if (static_cast<int>(confirmed.front().size()) == order() && allDistinct(confirmed.front())) {
        poles = confirmed.front();
        m_unconfirmedPoles = 0;
    } else {
        const double wMax = g.cwiseAbs().maxCoeff();
        if (wMax > 0 && std::isfinite(wMax) && wMax != 1.0)
            confirmed.push_back(confirm(finiteEigenvalues(g, c, wMax)));
        std::vector<cd> balanced = finiteEigenvalues(pencil.g, pencil.c, 1.0, true);
        for (cd &s : balanced)
            s *= pencil.w0;
        confirmed.push_back(confirm(balanced));
        // The full pencil before the static elimination: there a very high gain sits in one
        // entry that balancing can offset, where the Schur complement spreads it over many.
        if (m_system && m_system->size() > order()) {
            const ScaledPencil full = scaledPencil(m_system->G, m_system->C);
            std::vector<cd> fromFull = finiteEigenvalues(full.g, full.c, 1.0, true);
            for (cd &s : fromFull)
                s *= full.w0;
            confirmed.push_back(confirm(fromFull));
        }
        std::stable_sort(confirmed.begin(), confirmed.end(),
                         [](const auto &a, const auto &b) { return a.size() > b.size(); });
        poles = confirmed.front();
        for (std::size_t a = 1; a < confirmed.size(); ++a)
            for (const cd root : confirmed[a])
                if (poles.size() < static_cast<std::size_t>(order())
                    && std::none_of(poles.begin(), poles.end(),
                                    [&](cd p) { return near(p, root, 1e-6); }))
                    poles.push_back(root);
        // How many roots there are within a radius well beyond those found (argument
        // principle); where some are missing, Newton's method with deflation looks for them.
        double largest = pencil.w0;
        for (const cd s : poles)
            largest = std::max(largest, std::abs(s));
        const double radius = 1e3 * largest;
        const int inside = rootsInside(pencil, radius);
        const int found = static_cast<int>(poles.size());
        if (inside > found && inside <= order()) {
            const std::vector<cd> more = deflatedRoots(pencil, poles, radius, inside - found);
            poles.insert(poles.end(), more.begin(), more.end());
        }
        m_unconfirmedPoles = inside < 0 ? 0 : std::max(0, inside - static_cast<int>(poles.size()));
    }
    for (cd &s : poles)
        if (std::abs(s.imag()) < 1e-12 * std::abs(s))
            s = {s.real(), 0.0};
    std::sort(poles.begin(), poles.end(), [](auto x, auto y) {
        return std::abs(x) != std::abs(y) ? std::abs(x) < std::abs(y) : x.imag() < y.imag();
    });
    return poles;
}

std::optional<Diagnostic> ReducedSystem::unconfirmedPolesWarning() const
{
    if (m_unconfirmedPoles <= 0 || !m_system)
        return std::nullopt;
    const StampEntry *largest = nullptr;
    for (const StampEntry &e : m_system->stamps) {
        const StampOrigin &o = m_system->origins[static_cast<std::size_t>(e.origin)];
        if (!o.part.empty() && !e.reactive
            && (!largest || std::abs(e.value) > std::abs(largest->value)))
            largest = &e;
    }
    Diagnostic d;
    if (largest) {
        d.part = m_system->origins[static_cast<std::size_t>(largest->origin)].part;
        d.field = m_system->origins[static_cast<std::size_t>(largest->origin)].field;
    }
    d.message = "accuracy cannot be assured: " + std::to_string(m_unconfirmedPoles)
        + (m_unconfirmedPoles == 1 ? " natural frequency" : " natural frequencies")
        + " of the circuit counted but not located, so the poles listed are not all of "
          "them (rounding in the circuit equations, whose largest entry comes from this "
          "value)";
    return d;
}

} // namespace loopsketch
