#include "loopsketch/circuit/stepmodel.h"

#include "loopsketch/circuit/circuit.h"

#include "circuit/rowscales.h"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>
#include <Eigen/SVD>
#include <unsupported/Eigen/MatrixFunctions>

#include <cmath>

namespace loopsketch {

namespace {

using Index = Eigen::Index;

/// Balances A by a diagonal similarity of powers of two (Osborne's iteration, as in
/// Parlett and Reinsch, "Balancing a matrix for calculation of eigenvalues and
/// eigenvectors", Numer. Math. 13, 1969): each state's row and column get comparable norms.
/// Returns the scale of each state (state = scale x balanced state). A stiff loop's state
/// space comes out of the reduction with entries from 1e-20 to 1e20; balanced, its norm
/// falls by many orders, and the matrix exponential and the eigenvalues, whose errors
/// grow with that norm, keep their accuracy.
Eigen::VectorXd balance(Eigen::MatrixXd &a)
{
    const Index n = a.rows();
    Eigen::VectorXd d = Eigen::VectorXd::Ones(n);
    bool done = false;
    for (int sweep = 0; sweep < 100 && !done; ++sweep) {
        done = true;
        for (Index i = 0; i < n; ++i) {
            double c = a.col(i).cwiseAbs().sum() - std::abs(a(i, i));
            double r = a.row(i).cwiseAbs().sum() - std::abs(a(i, i));
            if (!(c > 0) || !(r > 0) || !std::isfinite(c) || !std::isfinite(r))
                continue;
            const double total = c + r;
            double f = 1.0;
            while (c < r / 2.0) {
                f *= 2.0;
                c *= 4.0;
            }
            while (c >= r * 2.0) {
                f /= 2.0;
                c /= 4.0;
            }
            if ((c + r) / f < 0.95 * total) {
                done = false;
                d(i) *= f;
                a.row(i) /= f;
                a.col(i) *= f;
            }
        }
    }
    return d;
}

/// The proper state space by a permutation alone: the states are the unknowns with a
/// reactive entry in their column, the differential equations the rows with one in their
/// row; the rest (index 1) is eliminated. No rotation mixes a node voltage with a
/// gain-block state of another scale, so nothing cancels. False when those rows and
/// columns do not form a well-conditioned square block (a loop of capacitors, for one).
bool splitByPermutation(const Eigen::MatrixXd &g, const Eigen::MatrixXd &c,
                        const Eigen::MatrixXd &b, const Eigen::MatrixXd &l, double d0,
                        Eigen::MatrixXd &a, Eigen::VectorXd &bOut, Eigen::RowVectorXd &cOut,
                        double &dOut)
{
    const Index k = g.rows();
    std::vector<Index> rows, cols, restRows, restCols;
    for (Index i = 0; i < k; ++i) {
        (c.row(i).cwiseAbs().maxCoeff() > 0 ? rows : restRows).push_back(i);
        (c.col(i).cwiseAbs().maxCoeff() > 0 ? cols : restCols).push_back(i);
    }
    if (rows.size() != cols.size() || rows.empty())
        return false;
    const auto n = static_cast<Index>(rows.size()), q = k - n;
    const auto pick = [](const Eigen::MatrixXd &m, const std::vector<Index> &r,
                         const std::vector<Index> &cc) {
        Eigen::MatrixXd out(static_cast<Index>(r.size()), static_cast<Index>(cc.size()));
        for (Index i = 0; i < out.rows(); ++i)
            for (Index j = 0; j < out.cols(); ++j)
                out(i, j) = m(r[static_cast<std::size_t>(i)], cc[static_cast<std::size_t>(j)]);
        return out;
    };
    const Eigen::MatrixXd c11 = pick(c, rows, cols);
    if (isSingular(c11))
        return false;
    Eigen::MatrixXd g11 = pick(g, rows, cols);
    Eigen::VectorXd b1 = pick(b, rows, {0});
    Eigen::RowVectorXd l1 = pick(l, {0}, cols);
    dOut = d0;
    if (q > 0) {
        const Eigen::MatrixXd g22 = pick(g, restRows, restCols);
        if (isSingular(g22))
            return false;
        Eigen::PartialPivLU<Eigen::MatrixXd> lu(g22);
        const Eigen::MatrixXd g12 = pick(g, rows, restCols);
        const Eigen::MatrixXd x21 = lu.solve(pick(g, restRows, cols));
        const Eigen::VectorXd xb2 = lu.solve(pick(b, restRows, {0}));
        const Eigen::RowVectorXd l2 = pick(l, {0}, restCols);
        g11 -= g12 * x21;
        b1 -= g12 * xb2;
        dOut += l2.dot(xb2);
        l1 -= l2 * x21;
    }
    Eigen::PartialPivLU<Eigen::MatrixXd> lu(c11);
    a = -lu.solve(g11);
    bOut = lu.solve(b1);
    cOut = l1;
    return a.allFinite() && bOut.allFinite() && cOut.allFinite() && std::isfinite(dOut);
}

} // namespace

Result<StepModel> StepModel::build(const ReducedSystem &system, int output, int input)
{
    StepModel m;
    const Index k = system.order();
    m.m_d = system.dr()(output, input);
    if (k == 0)
        return m;
    {
        Eigen::MatrixXd a;
        Eigen::VectorXd b;
        Eigen::RowVectorXd c;
        double d = 0;
        if (splitByPermutation(system.gr(), system.cr(), system.br().col(input),
                               system.lr().row(output), m.m_d, a, b, c, d)) {
            const Eigen::VectorXd scale = balance(a);
            m.m_a = a;
            m.m_b = scale.cwiseInverse().asDiagonal() * b;
            m.m_c = c * scale.asDiagonal();
            m.m_d = d;
            m.prepareModes();
            return m;
        }
    }
    // Split Cr = U S V^T into its dynamic (rank r) and algebraic parts; eliminating the
    // algebraic part (index 1) leaves the proper state space.
    const Eigen::VectorXd scale = detail::rowScales(system.gr(), system.cr());
    const Eigen::MatrixXd gs = scale.asDiagonal() * system.gr();
    const Eigen::MatrixXd cs = scale.asDiagonal() * system.cr();
    const Eigen::MatrixXd bs = scale.asDiagonal() * system.br();
    Eigen::JacobiSVD<Eigen::MatrixXd> svd(cs, Eigen::ComputeFullU | Eigen::ComputeFullV);
    const Eigen::VectorXd sv = svd.singularValues();
    Index rank = 0;
    while (rank < sv.size() && sv(rank) > 1e-10 * sv(0))
        ++rank;
    const Eigen::MatrixXd gh = svd.matrixU().transpose() * gs * svd.matrixV();
    const Eigen::VectorXd bh = svd.matrixU().transpose() * bs.col(input);
    const Eigen::RowVectorXd lh = system.lr().row(output) * svd.matrixV();
    const Index q = k - rank;
    Eigen::MatrixXd a = gh.topLeftCorner(rank, rank);
    Eigen::VectorXd b = bh.head(rank);
    Eigen::RowVectorXd c = lh.head(rank);
    if (q > 0) {
        const Eigen::MatrixXd g22 = gh.bottomRightCorner(q, q);
        Eigen::PartialPivLU<Eigen::MatrixXd> lu(g22);
        if (isSingular(g22))
            return Diagnostic{{},
                              {},
                              {},
                              "the step response is not computed: the circuit has a "
                              "higher-index mode (a capacitance straight across an ideal "
                              "source, for one), which this time-domain model does not "
                              "handle"};
        const Eigen::VectorXd xb2 = lu.solve(bh.tail(q));
        m.m_d += lh.tail(q).dot(xb2);
        if (rank > 0) { // Eigen's solve must not see an empty right-hand side (UBSan)
            const Eigen::MatrixXd x21 = lu.solve(gh.bottomLeftCorner(q, rank));
            a -= gh.topRightCorner(rank, q) * x21;
            b -= gh.topRightCorner(rank, q) * xb2;
            c -= lh.tail(q) * x21;
        }
    }
    const Eigen::VectorXd sInv = sv.head(rank).cwiseInverse();
    m.m_a = -(sInv.asDiagonal() * a);
    const Eigen::VectorXd d = balance(m.m_a);
    m.m_b = d.cwiseInverse().asDiagonal() * (sInv.asDiagonal() * b);
    m.m_c = c * d.asDiagonal();
    m.prepareModes();
    return m;
}

void StepModel::prepareModes()
{
    using Complex = std::complex<double>;
    const Index r = m_a.rows();
    if (r == 0 || !m_a.allFinite())
        return;
    Eigen::EigenSolver<Eigen::MatrixXd> es(m_a, true);
    if (es.info() != Eigen::Success)
        return;
    const Eigen::VectorXcd lambda = es.eigenvalues();
    const Eigen::MatrixXcd v = es.eigenvectors();
    const double largest = lambda.cwiseAbs().maxCoeff();
    if (!(lambda.cwiseAbs().minCoeff() > 1e-13 * largest))
        return; // a mode at the origin: the exponential handles it
    Eigen::PartialPivLU<Eigen::MatrixXcd> lu(v);
    // Residues through V^-1 lose about 1/rcond(V) of their accuracy: keep the modal form
    // only where that stays near 1e-8.
    if (!(lu.rcond() > 1e-8))
        return;
    const Eigen::VectorXcd vb = lu.solve(m_b.cast<Complex>());
    const Eigen::RowVectorXcd cv = m_c.cast<Complex>() * v;
    const double final = finalValue();
    if (!std::isfinite(final) || !vb.allFinite() || !cv.allFinite())
        return;
    std::vector<Complex> weight(static_cast<std::size_t>(r));
    Complex atZero = final;
    double scale = std::abs(final) + std::abs(m_d);
    for (Index i = 0; i < r; ++i) {
        weight[static_cast<std::size_t>(i)] = cv(i) * vb(i) / lambda(i);
        atZero += weight[static_cast<std::size_t>(i)];
        scale += std::abs(weight[static_cast<std::size_t>(i)]);
    }
    // y(0+) = d: the residues and the final value must agree with the state space.
    if (!(std::abs(atZero.real() - m_d) <= 1e-8 * scale))
        return;
    m_modal = true;
    m_final = final;
    m_lambda.assign(lambda.data(), lambda.data() + r);
    m_weight = std::move(weight);
}

double StepModel::valueAt(double t) const
{
    const Index r = m_a.rows();
    if (r == 0 || !(t > 0))
        return m_d;
    if (m_modal) {
        double y = m_final;
        std::complex<double> last; // the exponential of mode i - 1, when `pairable`
        bool pairable = false;
        for (std::size_t i = 0; i < m_lambda.size(); ++i) {
            const std::complex<double> x = m_lambda[i] * t;
            if (x.real() < -746.0) {
                // exp(x) underflows to exactly 0 (below half the least subnormal, e^-745.13):
                // the mode adds a zero, and its conjugate, with the same real part, as well.
                // Skipped, it costs nothing instead of the library's underflow path.
                pairable = false;
                continue;
            }
            if (x.imag() == 0.0 && x.real() < 708.0) {
                // A real mode: the complex exponential's own arithmetic (exp(re) times
                // cos 0 = 1 and sin 0 = im) without its sine and cosine, the same value.
                const double e = std::exp(x.real());
                y += m_weight[i].real() * e - m_weight[i].imag() * (e * x.imag());
                pairable = false;
            } else if (pairable && m_lambda[i] == std::conj(m_lambda[i - 1])) {
                // The second of a conjugate pair: exp(conj z) is conj(exp(z)), bit for bit
                // (the sine is odd, the cosine even), so one exponential serves both.
                y += (m_weight[i] * std::conj(last)).real();
                pairable = false;
            } else {
                last = std::exp(x);
                y += (m_weight[i] * last).real();
                pairable = true;
            }
        }
        return y;
    }
    // exp([[A, b], [0, 0]] t) = [[Phi, Gamma], [0, 1]]: Gamma is the state at t.
    Eigen::MatrixXd aug = Eigen::MatrixXd::Zero(r + 1, r + 1);
    aug.topLeftCorner(r, r) = m_a * t;
    aug.topRightCorner(r, 1) = m_b * t;
    const Eigen::MatrixXd e = aug.exp();
    return m_d + m_c.dot(e.topRightCorner(r, 1).col(0));
}

double StepModel::slopeAt(double t) const
{
    const Index r = m_a.rows();
    if (r == 0)
        return 0.0;
    if (m_modal) {
        double slope = 0.0;
        for (std::size_t i = 0; i < m_lambda.size(); ++i)
            slope += (m_weight[i] * m_lambda[i] * std::exp(m_lambda[i] * t)).real();
        return slope;
    }
    const Eigen::MatrixXd phi = (m_a * t).exp();
    return m_c.dot(phi * m_b);
}

std::vector<double> StepModel::sample(const std::vector<double> &times) const
{
    const Index rank = m_a.rows();
    std::vector<double> y(times.size(), m_d);
    if (rank == 0)
        return y;
    if (m_modal) {
        for (std::size_t i = 0; i < times.size(); ++i)
            y[i] = valueAt(times[i]);
        return y;
    }
    Eigen::MatrixXd aug = Eigen::MatrixXd::Zero(rank + 1, rank + 1);
    Eigen::VectorXd w = Eigen::VectorXd::Zero(rank), next(rank);
    double last = 0.0;
    double lastDt = -1.0;
    Eigen::MatrixXd phi, gamma;
    for (std::size_t i = 0; i < times.size(); ++i) {
        const double dt = times[i] - last;
        if (dt > 0) {
            if (lastDt > 0 && std::abs(dt - 2.0 * lastDt) <= 1e-12 * dt) {
                // [[Phi, Gamma], [0, 1]]^2 = [[Phi^2, Phi Gamma + Gamma], [0, 1]]
                gamma = (phi * gamma + gamma).eval();
                phi = (phi * phi).eval();
                lastDt = dt;
            } else if (std::abs(dt - lastDt) > 1e-12 * dt) {
                aug.topLeftCorner(rank, rank) = m_a * dt;
                aug.topRightCorner(rank, 1) = m_b * dt;
                const Eigen::MatrixXd e = aug.exp();
                phi = e.topLeftCorner(rank, rank);
                gamma = e.topRightCorner(rank, 1);
                lastDt = dt;
            }
            // Plain loops: at rank 2..8 the library's product costs more in set-up (and a
            // temporary per step) than in arithmetic, over thousands of steps.
            const double *ph = phi.data(), *wv = w.data();
            double *nx = next.data();
            for (Index r = 0; r < rank; ++r)
                nx[r] = gamma(r);
            for (Index m = 0; m < rank; ++m) {
                const double wm = wv[m];
                const double *column = ph + m * rank;
                for (Index r = 0; r < rank; ++r)
                    nx[r] += column[r] * wm;
            }
            w.swap(next);
            last = times[i];
        }
        double out = m_d;
        for (Index m = 0; m < rank; ++m)
            out += m_c(m) * w(m);
        y[i] = out;
    }
    return y;
}

std::vector<std::complex<double>> StepModel::modes() const
{
    std::vector<std::complex<double>> out;
    if (m_a.rows() == 0)
        return out;
    if (m_modal)
        return m_lambda;
    Eigen::EigenSolver<Eigen::MatrixXd> es(m_a, false);
    if (es.info() != Eigen::Success)
        return out;
    for (Index i = 0; i < es.eigenvalues().size(); ++i)
        out.push_back(es.eigenvalues()(i));
    return out;
}

double StepModel::finalValue() const
{
    if (m_a.rows() == 0)
        return m_d;
    Eigen::PartialPivLU<Eigen::MatrixXd> lu(m_a);
    if (isSingular(m_a))
        return std::nan("");
    return m_d - m_c.dot(lu.solve(m_b));
}

} // namespace loopsketch
