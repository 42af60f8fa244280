#pragma once

// Modified nodal analysis as a descriptor system  G x + C dx/dt = B u,  y = L x.
// Unknowns are node voltages (ground "0" excluded), branch currents of inductors and voltage
// sources, and the internal states of the gain block (one per pole, and one more for the
// last zero when there are as many zeros as poles), so the same system
// serves AC sweeps ((G + sC) x = B u), natural frequencies and time response.

#include "loopsketch/base/result.h"
#include "loopsketch/circuit/netlist.h"

#include <Eigen/Core>

#include <complex>
#include <string>
#include <vector>

namespace loopsketch {

/// The user's part and field behind some matrix entries ("RF", "value"; "U1", "gain").
/// Part empty: a test source or port of the analysis itself.
struct StampOrigin
{
    std::string part;
    std::string field;
};

/// One entry written into G (reactive = false) or C (reactive = true) by an origin.
struct StampEntry
{
    int origin = 0; ///< index into DescriptorSystem::origins
    int row = 0;
    int col = 0;
    double value = 0;
    bool reactive = false;
    /// The entry is proportional to its origin's field value raised to this power: 1 for a
    /// gain, a capacitance, an inductance or a resistance stamped in impedance form, -1 for
    /// a conductance or a 1/wp, 0 for the fixed +-1 of an element's connections. So
    /// p * d(value)/dp = power * value, what the adjoint sensitivity needs.
    int power = 0;
};

/// What an unknown is, for naming it in the user's words (see unknownLabel()).
struct UnknownOrigin
{
    /// State: one per pole of a gain block; ZeroOutput: the output of its last zero, an
    /// unknown of its own when the block has as many zeros as poles.
    enum class Kind { Node, Current, SourceCurrent, State, ZeroOutput };
    Kind kind = Kind::Node;
    int origin = -1; ///< index into DescriptorSystem::origins; -1 for nodes
    int pole = 0; ///< State: which pole of the gain block, from 1
};

/// Resistors below this many ohms are stamped in impedance form (their current is an
/// unknown, v(a) - v(b) - R i = 0) instead of as a conductance: a near-short then keeps
/// entries of order 1 instead of 1/R, which would swamp every other conductance at its
/// nodes (1e-15 ohm beside 1 Mohm leaves nothing of the 1 Mohm in double precision).
inline constexpr double kImpedanceFormBelowOhms = 1.0;

struct DescriptorSystem
{
    Eigen::MatrixXd G; ///< n x n, siemens / dimensionless rows
    Eigen::MatrixXd C; ///< n x n, farad / henry / seconds
    Eigen::MatrixXd B; ///< n x inputs
    Eigen::MatrixXd L; ///< outputs x n
    std::vector<std::string> unknowns; ///< "v(in)", "i(RF)", "x(U1.p1)" ...
    std::vector<std::string> nodes; ///< node names, index = unknown index for voltages
    std::vector<UnknownOrigin> unknownOrigins; ///< per unknown, for unknownLabel()
    std::vector<StampOrigin> origins;
    std::vector<StampEntry> stamps; ///< every entry of G and C with its origin

    int size() const { return static_cast<int>(G.rows()); }
};

/// Stamps a netlist. Fails (with the element named) on unknown output references or
/// non-finite values; a structurally valid netlist always assembles.
Result<DescriptorSystem> assembleSystem(const Netlist &netlist);

/// How many internal unknowns assembleSystem() gives gain block `cs` of `netlist`: one
/// state per pole, and one more for its last zero when it has as many zeros as poles and
/// an input node without a capacitor (with capacitors on both, that zero is stamped on the
/// input nodes, whose columns of C are not empty anyway, and the reduced order stays).
std::size_t gainBlockStates(const Netlist &netlist, const ControlledSourceElement &cs);

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

/// Unknown `index` in the user's words: "node in", "the output of U1 inside its r_out",
/// "the current of RX", "pole 2 of U1".
std::string unknownLabel(const DescriptorSystem &system, std::size_t index);

/// Names, in the user's words, the unknowns and parts that take part in a singularity of
/// (G + sC) at s, e.g. "the circuit has no unique solution at DC: node mid, node x not
/// determined (a floating node or subnetwork, ...); parts involved: R5, R6" (" at DC" only
/// for s = 0). Empty when the matrix is regular.
std::string describeSingularity(const DescriptorSystem &system, std::complex<double> s);

/// The same as a diagnostic; when a single part is involved, it is named in `part`.
/// Message empty when the matrix is regular.
Diagnostic singularityDiagnostic(const DescriptorSystem &system, std::complex<double> s);

} // namespace loopsketch
