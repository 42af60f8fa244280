#pragma once

// Modified nodal analysis as a descriptor system  G x + C dx/dt = B u,  y = L x.
// Unknowns are node voltages (ground "0" excluded), branch currents of inductors and voltage
// sources, and the internal states of the gain block (one per pole), so the same system
// serves AC sweeps ((G + sC) x = B u), natural frequencies and time response.

#include "loopsketch/netlist.h"
#include "loopsketch/result.h"

#include <Eigen/Core>

#include <complex>
#include <string>
#include <vector>

namespace loopsketch {

struct DescriptorSystem
{
    Eigen::MatrixXd G; ///< n x n, siemens / dimensionless rows
    Eigen::MatrixXd C; ///< n x n, farad / henry / seconds
    Eigen::MatrixXd B; ///< n x inputs
    Eigen::MatrixXd L; ///< outputs x n
    std::vector<std::string> unknowns; ///< "v(in)", "i(RF)", "x(U1.p1)" ...
    std::vector<std::string> nodes; ///< node names, index = unknown index for voltages

    int size() const { return static_cast<int>(G.rows()); }
};

/// Stamps a netlist. Fails (with the element named) on unknown output references or
/// non-finite values; a structurally valid netlist always assembles.
Result<DescriptorSystem> assembleSystem(const Netlist &netlist);

/// The straightforward reference: dense LU of (G + sC) at each frequency, H = L x.
/// Returns outputs x inputs per frequency; used by tests and the benchmark as the
/// accuracy and speed reference. Fails, naming the nodes involved, when G + sC is singular.
Result<std::vector<Eigen::MatrixXcd>> solveDense(const DescriptorSystem &system,
                                                 const std::vector<double> &frequenciesHz);

/// Row and column equilibration (each row, then each column, scaled to a largest entry of
/// 1), so that condition and rank tests mean the same whatever the units of a row
/// (siemens, dimensionless, farads) or the size of a gain.
Eigen::MatrixXcd equilibrated(const Eigen::MatrixXcd &a);

/// True when the matrix is numerically singular after equilibration.
bool isSingular(const Eigen::MatrixXcd &a);
/// The same for a real matrix (a static block, G at DC), in real arithmetic.
bool isSingular(const Eigen::MatrixXd &a);

/// Names the unknowns that take part in a singularity of (G + sC) at s, e.g.
/// "nodes mid, x are floating". Empty when the matrix is regular.
std::string describeSingularity(const DescriptorSystem &system, std::complex<double> s);

} // namespace loopsketch
