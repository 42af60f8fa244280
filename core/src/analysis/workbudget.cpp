#include "loopsketch/analysis/workbudget.h"

#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/circuit/netlist.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <set>

namespace loopsketch {

namespace {

// The same role as analyze()'s sensitivityField(): parts with a value that acts at DC.
bool hasSensitivity(const Part &p)
{
    switch (p.type) {
    case PartType::GainBlock:
        return true;
    case PartType::VSource:
        return p.number("r_series") > 0;
    case PartType::ISource:
        return p.has("r_parallel");
    default:
        return !p.primaryField().empty();
    }
}

double cube(std::size_t n)
{
    const double x = static_cast<double>(n);
    return x * x * x;
}

// Assembling one part into a netlist and matrices, in multiply-add equivalents: every
// evaluation (a nudged DC solve, a trial) builds the circuit afresh from the design; measured
// about 230 ns per part and evaluation with 10,000 parallel resistors.
constexpr double kAssemblyPerPart = 1000;

double assembly(const CircuitSize &size)
{
    return kAssemblyPerPart * static_cast<double>(size.parts);
}

// Reduced systems analyze() builds (exact, input, output; return ratio full, input, output).
constexpr double kReducedSystems = 6;

Diagnostics unknownsOver(const CircuitSize &size, const std::string &file)
{
    if (size.unknowns <= kMaxUnknowns)
        return {};
    return {{file, "", "parts",
             "the circuit has " + std::to_string(size.unknowns)
                 + " unknowns (node voltages, branch currents and gain-block states); at most "
                 + std::to_string(kMaxUnknowns)
                 + " can be analysed: reduce the number of parts or nodes"}};
}

} // namespace

CircuitSize circuitSize(const Design &design)
{
    CircuitSize s;
    const Netlist netlist = buildLoopNetlist(design);
    std::set<std::string> nodes;
    std::size_t dynamic = 0;
    const auto node = [&](const std::string &n) {
        if (!n.empty() && n != "0")
            nodes.insert(n);
    };
    for (const NetlistElement &e : netlist.elements) {
        node(e.a);
        node(e.b);
        if (e.kind == NetlistElement::Kind::Inductor
            || e.kind == NetlistElement::Kind::VoltageSource)
            ++s.unknowns;
        if (e.kind == NetlistElement::Kind::Capacitor || e.kind == NetlistElement::Kind::Inductor)
            ++dynamic;
    }
    for (const ControlledSourceElement &c : netlist.controlled) {
        node(c.inP);
        node(c.inN);
        node(c.out);
        const std::size_t states = gainBlockStates(netlist, c);
        s.unknowns += 1 + states;
        dynamic += states;
    }
    s.unknowns += nodes.size();
    s.reducedOrder = std::min(s.unknowns, dynamic);
    s.sweepPoints = design.sweep.frequencies().size();
    s.parts = design.parts.size();
    s.sensitivities = static_cast<std::size_t>(
        std::count_if(design.parts.begin(), design.parts.end(), hasSensitivity));
    return s;
}

double dcGainOperations(const CircuitSize &size)
{
    // one real LU for the solve, one for the singularity test
    return 2.0 * cube(size.unknowns) / 3.0 + assembly(size);
}

double analysisOperations(const CircuitSize &size, bool sensitivity)
{
    const double build = kReducedSystems * (cube(size.unknowns) / 3.0 + assembly(size));
    // complex LU (4 real multiply-adds each) per system and point, noise about as much again
    const double sweep = 2.0 * kReducedSystems * static_cast<double>(size.sweepPoints) * 4.0
        * cube(size.reducedOrder) / 3.0;
    const double poles = 30.0 * cube(size.reducedOrder);
    // adjoint: one DC gain's LUs, one transposed solve and a few refinement residuals
    const double sens = sensitivity ? dcGainOperations(size)
            + 4.0 * static_cast<double>(size.unknowns) * static_cast<double>(size.unknowns)
                                    : 0;
    return build + sweep + poles + sens;
}

double trialOperations(const CircuitSize &size, std::size_t gridPoints)
{
    // two reduced systems, each solved on the grid and about 60 refinement points
    return 2.0
        * (cube(size.unknowns) / 3.0 + assembly(size)
           + (static_cast<double>(gridPoints) + 60.0) * 4.0 * cube(size.reducedOrder) / 3.0);
}

std::string operationsText(double operations)
{
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.1e", operations);
    std::string s = buf;
    // 2.0e+10 -> 2e10, 3.5e+10 -> 3.5e10
    if (const auto e = s.find("e+"); e != std::string::npos) {
        std::string mantissa = s.substr(0, e), exponent = s.substr(e + 2);
        if (mantissa.ends_with(".0"))
            mantissa.resize(mantissa.size() - 2);
        exponent.erase(0, std::min(exponent.find_first_not_of('0'), exponent.size() - 1));
        s = mantissa + "e" + exponent;
    }
    return s;
}

Diagnostics checkUnknownsBudget(const Design &design, std::string_view file)
{
    return unknownsOver(circuitSize(design), std::string(file));
}

Diagnostics checkAnalysisBudget(const Design &design, std::string_view file, bool sensitivity)
{
    const CircuitSize size = circuitSize(design);
    const std::string f(file);
    if (Diagnostics over = unknownsOver(size, f); !over.empty())
        return over;
    const double total = analysisOperations(size, sensitivity);
    if (total <= kMaxWorkOperations)
        return {};
    const double sweep = analysisOperations(size, false)
        - kReducedSystems * (cube(size.unknowns) / 3.0 + assembly(size));
    std::string cause, field;
    // The sensitivities (adjoint: one more DC solve) never dominate.
    if (sweep >= total / 3) {
        cause = "the sweep of " + std::to_string(size.sweepPoints) + " points at reduced order "
            + std::to_string(size.reducedOrder)
            + " takes most of it: reduce the sweep's points_per_decade or its range, or the "
              "number of capacitors";
        field = "sweep.points_per_decade";
    } else {
        cause = "reducing " + std::to_string(size.unknowns)
            + " unknowns takes most of it: reduce the number of parts or nodes";
        field = "parts";
    }
    return {{f, "", field,
             "the analysis would take about " + operationsText(total)
                 + " operations, over the budget of " + operationsText(kMaxWorkOperations) + "; "
                 + cause}};
}

Diagnostics checkRepeatedBudget(const Design &design, std::string_view file,
                                std::size_t evaluations, double operationsEach,
                                std::string_view what, std::string_view reduce,
                                std::string_view field, bool reduceCountsEvaluations)
{
    const CircuitSize size = circuitSize(design);
    const std::string f(file);
    if (Diagnostics over = unknownsOver(size, f); !over.empty())
        return over;
    const double total = static_cast<double>(evaluations) * operationsEach;
    if (total <= kMaxWorkOperations)
        return {};
    const double fit = std::floor(kMaxWorkOperations / std::max(operationsEach, 1.0));
    const std::string head = std::string(what) + " would take about " + operationsText(total)
        + " operations (" + std::to_string(evaluations) + " evaluations of "
        + std::to_string(size.unknowns) + " unknowns and reduced order "
        + std::to_string(size.reducedOrder) + "), over the budget of "
        + operationsText(kMaxWorkOperations);
    if (fit < 1) {
        return {{f, "", "parts",
                 head
                     + ": even one evaluation is over it; reduce the number of parts or "
                       "capacitors"}};
    }
    const std::string count = std::to_string(static_cast<std::size_t>(fit));
    return {{f, "", std::string(field),
             head + ": " + std::string(reduce)
                 + (reduceCountsEvaluations ? " to at most " + count
                                            : " (at most " + count + " evaluations fit)")}};
}

} // namespace loopsketch
