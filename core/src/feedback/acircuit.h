#pragma once

// The A circuit's netlists for the two-port estimate (core/README.md, section 4): copies of
// the feedback network that load the gain block at each port, and what the signal source sees
// through the parts on its side of the gain block.

#include "loopsketch/circuit/netlist.h"
#include "loopsketch/design/design.h"
#include "loopsketch/feedback/twoport.h"

#include <set>
#include <string>
#include <vector>

namespace loopsketch {

/// How a copy of the feedback network is attached in the A circuit.
enum class PortEnd { Attached, Shorted, Open };

/// Appends a copy of the network. Port nodes are attached to `port1At` / `port2At`,
/// shorted to ground, or left open on a private node; internal nodes are private. Parts
/// left dangling on an open node carry no current and are dropped.
void addNetworkCopy(Netlist &n, const std::vector<Part> &parts, const std::string &prefix,
                    const std::string &port1, PortEnd end1, const std::string &port1At,
                    const std::string &port2, PortEnd end2, const std::string &port2At);

/// The h parameters of what lies between the source's terminals (port 1) and the gain-block
/// input it drives (port 2, node `sourceInput`); with no parts there it is a plain wire.
Result<TwoPortNetwork> sourceSideNetwork(const Design &design, const std::vector<Part> &sourceParts,
                                         const std::string &sourceInput);

/// True when the source-side parts join `node` (the gain-block input the source drives) to
/// ground by some path of their own; false with no parts there (a plain wire).
bool sourceSideGrounds(const std::vector<Part> &sourceParts, const std::string &node);

/// Why series mixing has no estimate for the current source `sourceId` that has no
/// r_parallel or c_parallel and nothing from `sourceInput` to ground on its side.
std::string floatingCurrentSourceProblem(const std::string &sourceId,
                                         const std::string &sourceInput);

/// The loop the source drives under series mixing, seen from `sourceInput`: `n` (the A
/// circuit with the source removed) without the source-side parts (`sourceIds`) and the port
/// elements, driven by a test current at `sourceInput`, its voltage the one output.
Netlist sourceLoopNetlist(Netlist n, const std::set<std::string> &sourceIds,
                          const std::string &sourceInput);

/// True when nothing but the test source touches `node` in `n`.
bool onlyTestSourceAt(const Netlist &n, const std::string &node);

} // namespace loopsketch
