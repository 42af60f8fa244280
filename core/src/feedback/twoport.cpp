#include "loopsketch/feedback/twoport.h"

#include "loopsketch/circuit/loopcircuit.h"

#include <Eigen/LU>

#include <cmath>
#include <limits>
#include <vector>

namespace loopsketch {

namespace {

/// Which ports a set drives with a current (the others with a voltage).
std::pair<bool, bool> currentDriven(ParameterSet set)
{
    switch (set) {
    case ParameterSet::Z:
        return {true, true};
    case ParameterSet::Y:
        return {false, false};
    case ParameterSet::H:
        return {true, false};
    case ParameterSet::G:
        return {false, true};
    }
    return {true, true};
}

const std::complex<double> kNaN(std::numeric_limits<double>::quiet_NaN(),
                                std::numeric_limits<double>::quiet_NaN());

} // namespace

Result<TwoPortNetwork> TwoPortNetwork::build(const std::vector<Part> &parts,
                                             const std::string &port1, const std::string &port2,
                                             ParameterSet set)
{
    Netlist n;
    const auto identity = [](const std::string &node) {
        return node;
    };
    for (const Part &p : parts)
        addPassivePart(n, p, {}, identity);
    const auto [i1, i2] = currentDriven(set);
    const std::string nodes[2] = {port1, port2};
    const bool byCurrent[2] = {i1, i2};
    for (int k = 0; k < 2; ++k) {
        const int in = n.addInput();
        const std::string name = "port" + std::to_string(k + 1);
        if (byCurrent[k]) {
            n.addCurrentSource(name, nodes[k], "0", in);
        } else {
            n.addVoltageSource(name, nodes[k], "0", in);
        }
    }
    for (int k = 0; k < 2; ++k) {
        if (byCurrent[k])
            n.addOutput({NetlistOutput::Kind::VoltageBetween, nodes[k], "0"});
        else
            n.addOutput({NetlistOutput::Kind::BranchCurrent, "port" + std::to_string(k + 1), {}});
    }
    // A current-driven port into parts with no path to ground: the port currents have no
    // return, so the parameters are infinite (rounding would make them merely huge).
    if (const std::vector<std::string> floating = nodesWithoutGround(n); !floating.empty()) {
        std::string names;
        for (const std::string &node : floating)
            names += (names.empty() ? "" : ", ") + node;
        return Diagnostic{{},
                          {},
                          {},
                          toString(set) + " parameters of the feedback network do not exist: "
                              + "the network has no path to ground from " + names
                              + " (the port currents have no return)"};
    }
    auto system = assembleSystem(n);
    if (!system)
        return system.diagnostics();
    auto reduced = ReducedSystem::build(*system);
    if (!reduced)
        return Diagnostic{{},
                          {},
                          {},
                          toString(set)
                              + " parameters of the feedback network do not "
                                "exist: "
                              + reduced.errorText()};
    TwoPortNetwork t;
    t.m_set = set;
    t.m_system = std::move(reduced).value();
    return t;
}

TwoPortMatrix TwoPortNetwork::at(std::complex<double> s) const
{
    return sweep({&s, 1}).front();
}

std::vector<TwoPortMatrix> TwoPortNetwork::sweep(std::span<const std::complex<double>> s) const
{
    const TransferEntry entries[] = {{0, 0}, {1, 0}, {0, 1}, {1, 1}};
    const std::vector<std::complex<double>> h = m_system->sweepEntries(s, entries);
    const auto [i1, i2] = currentDriven(m_set);
    const bool byCurrent[2] = {i1, i2};
    std::vector<TwoPortMatrix> out(s.size());
    for (std::size_t i = 0; i < s.size(); ++i) {
        TwoPortMatrix &m = out[i];
        for (int e = 0; e < 4; ++e) {
            const int r = entries[e].output, c = entries[e].input;
            // A voltage-driven port reports the source's branch current, which flows out of
            // the network; the convention wants the current into it.
            const double sign = byCurrent[r] ? 1.0 : -1.0;
            m(r, c) = sign * h[static_cast<std::size_t>(e) * s.size() + i];
        }
        if (!m.allFinite())
            m.setConstant(kNaN);
    }
    return out;
}

bool TwoPortNetwork::checkAccuracy(std::span<const std::complex<double>> probes, double tolerance)
{
    if (!m_system)
        return false;
    const std::string name = toString(m_set) + " parameters";
    const CheckedEntry entries[] = {{{0, 0}, name, false, 0.0, true},
                                    {{1, 0}, name, false, 0.0, true},
                                    {{0, 1}, name, false, 0.0, true},
                                    {{1, 1}, name, false, 0.0, true}};
    return m_system->checkAccuracy(probes, entries, tolerance).refined;
}

namespace {

std::optional<TwoPortMatrix> inverse(const TwoPortMatrix &m)
{
    const std::complex<double> det = m.determinant();
    if (!(std::abs(det) > 1e-300) || !std::isfinite(std::abs(det)))
        return std::nullopt;
    return m.inverse();
}

/// h from z and back share one form: the partial inversion about element (1,1).
std::optional<TwoPortMatrix> partialInverse22(const TwoPortMatrix &m)
{
    const std::complex<double> m22 = m(1, 1);
    if (!(std::abs(m22) > 1e-300))
        return std::nullopt;
    TwoPortMatrix r;
    r(0, 0) = m.determinant() / m22;
    r(0, 1) = m(0, 1) / m22;
    r(1, 0) = -m(1, 0) / m22;
    r(1, 1) = 1.0 / m22;
    return r;
}

using Conversion = std::optional<TwoPortMatrix> (*)(const TwoPortMatrix &);

/// The steps from z to a parameter set: y = inverse(z), h = partialInverse22(z), g =
/// inverse(h). Each step is its own inverse, so the way back to z takes them in reverse.
std::vector<Conversion> stepsFromZ(ParameterSet set)
{
    switch (set) {
    case ParameterSet::Z:
        return {};
    case ParameterSet::Y:
        return {inverse};
    case ParameterSet::H:
        return {partialInverse22};
    case ParameterSet::G:
        return {partialInverse22, inverse};
    }
    return {};
}

std::optional<TwoPortMatrix> toZ(const TwoPortMatrix &m, ParameterSet from)
{
    std::optional<TwoPortMatrix> r = m;
    const std::vector<Conversion> steps = stepsFromZ(from);
    for (auto step = steps.rbegin(); step != steps.rend() && r; ++step)
        r = (*step)(*r);
    return r;
}

std::optional<TwoPortMatrix> fromZ(const TwoPortMatrix &z, ParameterSet to)
{
    std::optional<TwoPortMatrix> r = z;
    for (Conversion step : stepsFromZ(to)) {
        if (!r)
            break;
        r = step(*r);
    }
    return r;
}

} // namespace

std::optional<TwoPortMatrix> convertTwoPort(const TwoPortMatrix &m, ParameterSet from,
                                            ParameterSet to)
{
    if (from == to)
        return m;
    // y <-> z, h <-> g are plain inversions; the others go through z, so they fail (nullopt)
    // where z does not exist (a network with a direct short), even where the target would.
    if ((from == ParameterSet::Y && to == ParameterSet::Z)
        || (from == ParameterSet::Z && to == ParameterSet::Y)
        || (from == ParameterSet::H && to == ParameterSet::G)
        || (from == ParameterSet::G && to == ParameterSet::H))
        return inverse(m);
    if (auto z = toZ(m, from))
        return fromZ(*z, to);
    return std::nullopt;
}

} // namespace loopsketch
