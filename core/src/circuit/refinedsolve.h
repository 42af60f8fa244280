#pragma once

// The careful solve of the full nodal system at one complex frequency: equilibrated LU,
// iterative refinement with residuals accumulated in extended precision, the componentwise
// backward error of the result (Oettli-Prager) and a first-order error bound of each output
// with the share of each part and field in it. Used to check the reduced fast path and to
// take over from it where that path is not accurate enough.

#include "loopsketch/circuit/circuit.h"

#include <Eigen/Core>
#include <Eigen/LU>

#include <complex>
#include <vector>

namespace loopsketch::detail {

class RefinedSolver
{
public:
    explicit RefinedSolver(const DescriptorSystem &system) : m_system(system) { }

    /// Factors G + sC (s in rad/s). False when it is singular at s.
    bool factor(std::complex<double> s);

    /// x for input column `input`, refined while the residual keeps falling; `residual`
    /// receives the last residual b - A x (computed in extended precision).
    Eigen::VectorXcd solve(int input, Eigen::VectorXcd *residual = nullptr) const;

    /// First-order bound of the absolute error of output `output` for the solution `x` of
    /// input `input` with residual `residual`: what the residual leaves (z^T r with
    /// z = A^-T l) plus one rounding of every entry and right-hand side term weighted by
    /// how much the output depends on it; and each origin's share of the rounding part
    /// (indices as DescriptorSystem::origins).
    double errorBound(int output, int input, const Eigen::VectorXcd &x,
                      const Eigen::VectorXcd &residual,
                      std::vector<double> *originShares = nullptr) const;

    /// Output `output` of the solution x: L.row(output) x.
    std::complex<double> output(int output, const Eigen::VectorXcd &x) const;

private:
    Eigen::VectorXcd applyInverse(const Eigen::VectorXcd &rhs) const;

    const DescriptorSystem &m_system;
    std::complex<double> m_s;
    Eigen::MatrixXcd m_a; ///< G + sC
    Eigen::MatrixXd m_modulus; ///< |G + sC|, entry by entry
    Eigen::VectorXd m_rowScale, m_colScale;
    Eigen::PartialPivLU<Eigen::MatrixXcd> m_lu;
};

} // namespace loopsketch::detail
