#pragma once

// The unit-step response of one transfer entry of a ReducedSystem as a proper state space
//   w' = A w + b u,  y = c w + d u,
// with the algebraic (index-1) part of the pencil eliminated. Every value is exact for the
// linear model at any time (matrix exponential with scaling and squaring), so rise,
// overshoot and settling are located by root finding on it rather than read off a grid.

#include "loopsketch/base/result.h"
#include "loopsketch/circuit/reducedsystem.h"

#include <Eigen/Core>

#include <complex>
#include <vector>

namespace loopsketch {

class StepModel
{
public:
    /// The response of `output` to a unit step of `input`. Fails for a non-proper
    /// (impulsive, higher-index) response.
    static Result<StepModel> build(const ReducedSystem &system, int output, int input);

    /// Number of dynamic states.
    int order() const { return static_cast<int>(m_a.rows()); }

    /// y(t) for a unit step at t = 0 (t in s, >= 0).
    double valueAt(double t) const;

    /// dy/dt at t > 0 (1/s times the output unit).
    double slopeAt(double t) const;

    /// y(t) at each of `times` (s, ascending, >= 0). Steps between successive times reuse
    /// the propagator when the step repeats and square it when the step doubles, so a grid
    /// of uniform runs with doubling steps costs one k x k product per point.
    std::vector<double> sample(const std::vector<double> &times) const;

    /// The modes: eigenvalues of A (rad/s), the poles of this response.
    std::vector<std::complex<double>> modes() const;

    /// d - c A^-1 b: the value the response tends to when every mode decays; NaN when A is
    /// singular.
    double finalValue() const;

private:
    Eigen::MatrixXd m_a;
    Eigen::VectorXd m_b;
    Eigen::RowVectorXd m_c;
    double m_d = 0.0;
};

} // namespace loopsketch
