#pragma once

// The row scaling shared by the pole computation (reducedsystem.cpp) and the step model
// (stepmodel.cpp): one rule, so that both split a pencil into its dynamic and algebraic
// parts alike.

#include <Eigen/Core>

namespace loopsketch::detail {

/// Factors (1 / unit of the row) that scale each row of the pencil (g, c) so that its
/// largest reactive entry is 1 (rows without one: the largest static entry; an empty row
/// keeps 1), so rank and eigenvalue tolerances mean the same in every row whatever its
/// units (siemens, farads, seconds).
inline Eigen::VectorXd rowScales(const Eigen::MatrixXd &g, const Eigen::MatrixXd &c)
{
    Eigen::VectorXd scale(g.rows());
    for (Eigen::Index i = 0; i < g.rows(); ++i) {
        double m = c.row(i).cwiseAbs().maxCoeff();
        if (!(m > 0))
            m = g.row(i).cwiseAbs().maxCoeff();
        scale(i) = m > 0 ? 1.0 / m : 1.0;
    }
    return scale;
}

} // namespace loopsketch::detail
