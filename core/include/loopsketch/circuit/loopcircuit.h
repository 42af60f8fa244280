#pragma once

// From the design model to netlists: the whole loop, and the variants the analyses need
// (source zeroed or removed, load removed, the gain block's controlled source driven by a
// test source for the return ratio).

#include "loopsketch/circuit/netlist.h"
#include "loopsketch/design/design.h"

#include <functional>
#include <string>

namespace loopsketch {

/// Input columns and output rows every loop netlist has, at fixed indices.
namespace loopio {
inline constexpr int kSource = 0; ///< input: the signal source's value (1 V or 1 A)
inline constexpr int kInputPort = 1; ///< input: 1 A into the source's + terminal
inline constexpr int kLoadPort = 2; ///< input: 1 A into the load's terminal a
inline constexpr int kTest = 3; ///< input: the return-ratio test source (1 V)
inline constexpr int kInputCount = 4;

inline constexpr int kOutput = 0; ///< output: load voltage (a - b) or load current
inline constexpr int kInputVoltage = 1; ///< output: voltage across the source's terminals
inline constexpr int kLoadVoltage = 2; ///< output: voltage across the load's terminals
inline constexpr int kReturned = 3; ///< output: gain * H(s) * vd of the gain block
inline constexpr int kDifferential = 4; ///< output: v(in_p) - v(in_n)
inline constexpr int kLoadCurrent = 5; ///< output: load current a -> b (0 unless sensed)
} // namespace loopio

struct LoopCircuitOptions
{
    enum class Source {
        Active, ///< the source with its internal impedance, driven by input kSource
        Zeroed, ///< value zero, internal impedance kept (short / open with r_parallel)
        Removed, ///< taken out with its internal impedance (for z_in)
    };
    Source source = Source::Active;
    bool load = true; ///< false: load taken out (for z_out)
    bool testDriven = false; ///< gain block's controlled source driven by input kTest
    double gainScale = 1.0; ///< multiplies the gain block's gain (sensitivity)
    /// Passive parts for which this returns false are left out (the two-port A circuit
    /// adds its own copies of the feedback network).
    std::function<bool(const Part &)> includePart;
    /// Measure the load current (output kLoadCurrent) even for a voltage output.
    bool senseLoadCurrent = false;
    /// Gain-block input terminals on this node move to node "<node>#in": the A circuit of a
    /// network whose two ports share one node (a sense resistor in series-series) keeps the
    /// input loop and the output loop apart.
    std::string splitNode;
};

/// The gain block's DC gain (V/V, sign included) and pole list with gbw applied.
double gainBlockGain(const Part &gainBlock);
std::vector<double> gainBlockPolesHz(const Part &gainBlock);

/// Appends a resistor, capacitor or inductor part, mapping its nodes through `mapNode`.
void addPassivePart(Netlist &netlist, const Part &part, const std::string &namePrefix,
                    const std::function<std::string(const std::string &)> &mapNode);

/// The loop netlist. The design must be valid (validateDesign() empty).
Netlist buildLoopNetlist(const Design &design, const LoopCircuitOptions &options = {});

/// The terminals (plus, minus) of the signal source's port and of the load's port.
std::pair<std::string, std::string> inputPortNodes(const Design &design);
std::pair<std::string, std::string> loadPortNodes(const Design &design);

} // namespace loopsketch
