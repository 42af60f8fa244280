#include "loopsketch/circuit/stepmodel.h"

#include "loopsketch/circuit/circuit.h"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>
#include <Eigen/SVD>
#include <unsupported/Eigen/MatrixFunctions>

#include <cmath>

namespace loopsketch {

namespace {

using Index = Eigen::Index;

/// The same row scaling as the pole computation: each row's largest reactive entry to 1.
Eigen::VectorXd rowScales(const Eigen::MatrixXd &g, const Eigen::MatrixXd &c)
{
    Eigen::VectorXd scale(g.rows());
    for (Index i = 0; i < g.rows(); ++i) {
        double m = c.row(i).cwiseAbs().maxCoeff();
        if (!(m > 0))
            m = g.row(i).cwiseAbs().maxCoeff();
        scale(i) = m > 0 ? 1.0 / m : 1.0;
    }
    return scale;
}

} // namespace

Result<StepModel> StepModel::build(const ReducedSystem &system, int output, int input)
{
    StepModel m;
    const Index k = system.order();
    m.m_d = system.dr()(output, input);
    if (k == 0)
        return m;
    // Split Cr = U S V^T into its dynamic (rank r) and algebraic parts; eliminating the
    // algebraic part (index 1) leaves the proper state space.
    const Eigen::VectorXd scale = rowScales(system.gr(), system.cr());
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
                              "the step response is not defined: the circuit has "
                              "an impulsive (higher-index) mode"};
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
    m.m_b = sInv.asDiagonal() * b;
    m.m_c = c;
    return m;
}

double StepModel::valueAt(double t) const
{
    const Index r = m_a.rows();
    if (r == 0 || !(t > 0))
        return m_d;
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
    const Eigen::MatrixXd phi = (m_a * t).exp();
    return m_c.dot(phi * m_b);
}

std::vector<double> StepModel::sample(const std::vector<double> &times) const
{
    const Index rank = m_a.rows();
    std::vector<double> y(times.size(), m_d);
    if (rank == 0)
        return y;
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
