#pragma once

// Feedback topology from the connections alone (core/README.md §4, Topology): which passive
// parts form the feedback network, where its two ports sit, and how it mixes at the input and
// samples at the output.

#include "loopsketch/design/design.h"

#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

enum class Connection { Series, Shunt };
enum class ParameterSet { H, Y, Z, G };

struct Topology
{
    Connection mixing = Connection::Shunt;
    Connection sampling = Connection::Shunt;
    std::vector<std::string> networkParts; ///< part ids of the feedback network
    std::string port1Node; ///< port 1 is (port1Node, ground), at a gain-block input
    std::string port2Node; ///< port 2 is (port2Node, ground), at the output side
    std::string sourceInput; ///< the gain-block input the source drives (series mixing)
    std::vector<std::string> sourceSideParts; ///< passive parts between source and input

    ParameterSet parameters() const;
    /// "series-shunt", "shunt-shunt", "series-series", "shunt-series" (mixing first).
    std::string name() const;
    /// "voltage", "transresistance", "transconductance", "current".
    std::string gainType() const;
    /// Unit of A and the closed loop in this topology: "V/V", "V/A", "A/V", "A/A".
    std::string gainUnit() const;
    /// Unit of the feedback factor beta (x12 of the parameter set): "S" (y), "Ω" (z), "V/V"
    /// (h), "A/A" (g); the inverse of gainUnit(), so A*beta is a pure ratio.
    std::string feedbackUnit() const;
};

std::string toString(Connection c);
/// "h", "y", "z", "g".
std::string toString(ParameterSet p);

/// Either a topology or the reason the circuit has no single-loop two-port form.
struct TopologyResult
{
    std::optional<Topology> topology;
    std::string reason; ///< empty when topology is set
};

/// Identifies the topology of a valid design.
TopologyResult identifyTopology(const Design &design);

} // namespace loopsketch
