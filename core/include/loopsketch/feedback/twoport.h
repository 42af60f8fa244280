#pragma once

// Two-port parameters (z, y, h, g) of a feedback network built from any arrangement of
// resistors, capacitors and inductors, computed from the network itself with port
// terminations: port 1 is (port1, ground), port 2 is (port2, ground); port currents flow
// into the network at each port's + terminal.

#include "loopsketch/base/result.h"
#include "loopsketch/circuit/reducedsystem.h"
#include "loopsketch/design/design.h"
#include "loopsketch/feedback/topology.h"

#include <Eigen/Core>

#include <complex>
#include <optional>
#include <span>
#include <string>
#include <vector>

namespace loopsketch {

using TwoPortMatrix = Eigen::Matrix2cd;

/// The network's parameters of one set as a function of s.
class TwoPortNetwork
{
public:
    /// Builds the terminated network for `set`. Fails with a message naming the set when
    /// the terminations leave the network without a solution at every frequency (z of a
    /// network with no path to ground, y of a network with a direct short, ...).
    static Result<TwoPortNetwork> build(const std::vector<Part> &parts, const std::string &port1,
                                        const std::string &port2, ParameterSet set);

    ParameterSet set() const { return m_set; }

    /// [[x11, x12], [x21, x22]] at s (rad/s); NaN where the set does not exist at s.
    TwoPortMatrix at(std::complex<double> s) const;

    /// at() for every s of a list (rad/s), in one sweep of the network's system.
    std::vector<TwoPortMatrix> sweep(std::span<const std::complex<double>> s) const;

    /// Checks the four parameters at `probes` (rad/s) against a careful solve of the whole
    /// network (ReducedSystem::checkAccuracy, to `tolerance`, relative); where the fast path
    /// misses, the network is solved carefully at every frequency from then on. Warns of
    /// nothing: the parameters feed an estimate. True when it switched.
    bool checkAccuracy(std::span<const std::complex<double>> probes, double tolerance);

private:
    ParameterSet m_set = ParameterSet::Z;
    std::optional<ReducedSystem> m_system;
};

/// Converts a parameter matrix between sets; nullopt where the target set does not exist
/// (the matrix to invert is singular, e.g. z of a network that is a direct short).
std::optional<TwoPortMatrix> convertTwoPort(const TwoPortMatrix &m, ParameterSet from,
                                            ParameterSet to);

} // namespace loopsketch
