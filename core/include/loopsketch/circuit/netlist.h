#pragma once

// A flat list of primitive linear elements between named nodes: the level below the design
// model at which every analysis (exact solution, A circuit, return ratio, two-port network)
// is assembled into a descriptor system.

#include <string>
#include <vector>

namespace loopsketch {

/// The gain block's controlled source as an element: e = gain * H(s) * (v(inP) - v(inN)),
/// H(s) = prod(1 + s/2pi z) / prod(1 + s/2pi p), driving node `out` against ground.
struct ControlledSourceElement
{
    enum class Mode {
        Normal, ///< e follows the input difference
        TestDriven, ///< e is an independent source (return-ratio test); H(s)*vd is an output
    };
    std::string part; ///< the user's gain block (its id), for messages; empty when internal
    std::string inP;
    std::string inN;
    std::string out;
    double gain = 1.0; ///< V/V at DC, sign included
    std::vector<double> polesHz; ///< > 0
    std::vector<double> zerosHz; ///< > 0, no more than poles
    Mode mode = Mode::Normal;
    int testInput = -1; ///< input column driving e in TestDriven mode
};

struct NetlistElement
{
    enum class Kind { Resistor, Capacitor, Inductor, VoltageSource, CurrentSource };
    Kind kind = Kind::Resistor;
    std::string name; ///< internal, unique: branch-current outputs and noise refer to it
    /// The user's part and field whose value this element carries ("RF", "value"; "U1",
    /// "r_out"), so that messages speak of them; part empty for test sources and ports.
    std::string part;
    std::string field;
    std::string a; ///< resistor/capacitor/inductor: a; voltage source: +; current source: into
    std::string b; ///< resistor/capacitor/inductor: b; voltage source: -; current source: out of
    double value = 0; ///< ohm, farad, henry; ignored for sources
    int input = -1; ///< sources: input column (unit value), -1 = zero value (short / open)
    /// Why the element is there: a part of the circuit (a user's part, one of its fields, a
    /// wire), an impedance port's drive (buildLoopNetlist()'s input and load ports), or a
    /// method's test source (the two-port estimate's port drives).
    enum class Role { Circuit, Port, Test };
    Role role = Role::Circuit;
};

/// What an output row measures.
struct NetlistOutput
{
    enum class Kind {
        VoltageBetween, ///< v(a) - v(b)
        BranchCurrent, ///< current through element `a` (inductor or voltage source), + to -
        ControlledReturn, ///< gain * H(s) * vd of the controlled source (return ratio)
    };
    Kind kind = Kind::VoltageBetween;
    std::string a;
    std::string b;
};

struct Netlist
{
    std::vector<NetlistElement> elements;
    std::vector<ControlledSourceElement> controlled;
    int inputCount = 0;
    std::vector<NetlistOutput> outputs;

    NetlistElement &addResistor(std::string name, std::string a, std::string b, double ohms);
    NetlistElement &addCapacitor(std::string name, std::string a, std::string b, double farads);
    NetlistElement &addInductor(std::string name, std::string a, std::string b, double henries);
    NetlistElement &addVoltageSource(std::string name, std::string pos, std::string neg, int input);
    NetlistElement &addCurrentSource(std::string name, std::string into, std::string outOf,
                                     int input);
    /// Allocates a new input column and returns its index.
    int addInput() { return inputCount++; }
    /// Appends an output row and returns its index.
    int addOutput(NetlistOutput output);
};

/// Nodes with no path to ground through the elements that carry current between their
/// terminals (resistors, nonzero capacitors, inductors, voltage sources, a controlled
/// source's output), sorted. Such a node's voltage is not determined at any frequency: its
/// subnetwork meets the rest only through current sources and controlled-source inputs,
/// which carry no current between them, so the circuit has no solution anywhere.
std::vector<std::string> nodesWithoutGround(const Netlist &netlist);

} // namespace loopsketch
