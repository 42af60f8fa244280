#include "analysis/noisemodel.h"

#include "loopsketch/circuit/loopcircuit.h"

#include <cmath>
#include <map>
#include <numbers>

namespace loopsketch::detail {

namespace {

/// A noise source of part `partId`, named `name`; `field` and `pin` as NoiseContribution has
/// them.
NoiseContribution contribution(std::string name, std::string partId, NoiseSourceKind kind,
                               std::string field = {}, std::string pin = {})
{
    NoiseContribution c;
    c.name = std::move(name);
    c.partId = std::move(partId);
    c.kind = kind;
    c.field = std::move(field);
    c.pin = std::move(pin);
    return c;
}

} // namespace

Result<NoiseModel> NoiseModel::build(const Design &design)
{
    const Part *gb = design.uniquePart(PartType::GainBlock);
    const Part *src = design.signalSource();
    if (!gb || !src || !design.uniquePart(PartType::Load))
        return Diagnostic{{}, {}, {}, "noise needs one gain block, one signal source and one load"};

    Netlist netlist = buildLoopNetlist(design);
    // en in series with the non-inverting input: between the in_p pin and the controlled
    // source only. r_in, c_in and c_cm stay on the pins, so they count in en's noise gain.
    const std::string pinP = gb->node("in_p");
    const std::string pinN = gb->node("in_n");
    const std::string behind = gb->id + ":en+";
    const std::string enName = gb->id + ":en";
    for (ControlledSourceElement &cs : netlist.controlled) {
        if (cs.inP == pinP)
            cs.inP = behind;
    }
    NetlistElement &en = netlist.addVoltageSource(enName, behind, pinP, -1);
    en.part = gb->id;
    en.field = "en";

    auto assembled = assembleSystem(netlist);
    if (!assembled)
        return assembled.diagnostics();
    NoiseModel m;
    m.m_system = std::move(assembled).value();
    const DescriptorSystem &sys = m.m_system;

    std::map<std::string, int> nodeIndex;
    for (std::size_t i = 0; i < sys.nodes.size(); ++i)
        nodeIndex[sys.nodes[i]] = static_cast<int>(i);
    const auto indexOf = [&](const std::string &node) {
        auto it = nodeIndex.find(node);
        return it == nodeIndex.end() ? -1 : it->second;
    };
    int enRow = -1;
    for (std::size_t i = 0; i < sys.unknowns.size(); ++i) {
        if (sys.unknowns[i] == "i(" + enName + ")")
            enRow = static_cast<int>(i);
    }

    const double fourKT = 4.0 * kBoltzmann * design.temperatureK();
    m.m_fourKT = fourKT;
    const auto add = [&](NoiseContribution c, Injection in) {
        m.m_contributions.push_back(std::move(c));
        m.m_injections.push_back(in);
    };
    // Thermal noise of every physical resistance: resistors, the source's own resistance and
    // the load. The gain block's r_in and r_out are small-signal model values, not resistors:
    // its noise is what its en and in say (common practice, as datasheets give it).
    for (const NetlistElement &e : netlist.elements) {
        if (e.kind != NetlistElement::Kind::Resistor
            || (e.part == gb->id && (e.field == "r_in" || e.field == "r_out")))
            continue;
        // A resistor or the load is a resistance as a whole; a source's r_series or
        // r_parallel is one field of its part.
        const Part *owner = design.findPart(e.part);
        const bool whole
            = owner && (owner->type == PartType::Resistor || owner->type == PartType::Load);
        add(contribution(e.name, e.part, NoiseSourceKind::Resistor,
                         whole ? std::string() : e.field),
            {indexOf(e.a), indexOf(e.b), std::sqrt(fourKT / e.value), 0.0, e.part, e.field,
             e.value});
    }
    // Shot noise of the DC current through a current source: 2 q |i_dc|, across the source.
    if (src->type == PartType::ISource && src->number("i_dc") != 0.0) {
        add(contribution(src->id + ":shot", src->id, NoiseSourceKind::Shot),
            {indexOf(src->node("to")),
             indexOf(src->node("from")),
             shotNoiseCurrent(src->number("i_dc")),
             0.0,
             {},
             {},
             0.0});
    }
    if (gb->number("en") > 0) {
        add(contribution(enName, gb->id, NoiseSourceKind::VoltageNoise, "en"),
            {enRow, -1, gb->number("en"), gb->number("en_corner_hz"), {}, {}, 0.0});
    }
    if (gb->number("in") > 0) {
        for (const auto &[terminal, pin] : {std::pair{"in_p", pinP}, std::pair{"in_n", pinN}}) {
            if (pin == kGroundNode)
                continue; // a pin on ground shorts its current noise
            add(contribution(gb->id + ":in(" + terminal + ")", gb->id,
                             NoiseSourceKind::CurrentNoise, "in", terminal),
                {indexOf(pin), -1, gb->number("in"), gb->number("in_corner_hz"), {}, {}, 0.0});
        }
    }

    if (!m.reduce(enRow))
        return Diagnostic{{}, {}, {}, "noise: " + m.m_problem};
    return m;
}

bool NoiseModel::reduce(int enRow)
{
    // One injection column per noise source, the signal source's column for the gain, and
    // a unit voltage on en's row for the noise gain; one output row. The reduced fast path
    // then gives every transfer per frequency with one small LU.
    const DescriptorSystem &sys = m_system;
    DescriptorSystem injections = sys;
    const int n = sys.size();
    const auto sources = static_cast<Eigen::Index>(m_injections.size());
    injections.B = Eigen::MatrixXd::Zero(n, sources + 2);
    for (Eigen::Index k = 0; k < sources; ++k) {
        const Injection &in = m_injections[static_cast<std::size_t>(k)];
        if (in.plus >= 0)
            injections.B(in.plus, k) += 1.0;
        if (in.minus >= 0)
            injections.B(in.minus, k) -= 1.0;
    }
    injections.B.col(sources) = sys.B.col(loopio::kSource);
    if (enRow >= 0)
        injections.B(enRow, sources + 1) = 1.0;
    injections.L = sys.L.row(loopio::kOutput);
    auto reduced = ReducedSystem::build(injections);
    if (!reduced) {
        m_problem = reduced.errorText();
        return false;
    }
    m_reduced = std::move(reduced).value();
    m_enRow = enRow;
    m_gainColumn = static_cast<std::size_t>(sources);
    m_enColumn = static_cast<std::size_t>(sources) + 1;
    m_columns = static_cast<std::size_t>(sources) + 2;
    return true;
}

Result<NoiseModel> NoiseModel::rebuilt(const Design &design,
                                       std::span<const FieldChange> changes) const
{
    // Each change must be one the system stamps as it is (restampable(), and stamped, as
    // LoopModel::rebuilt() asks), and each resistance it moves must have been stamped from
    // the value the change starts from, so that the new density is build()'s own expression
    // of the new value.
    bool eligible = m_reduced.has_value();
    for (const FieldChange &c : changes) {
        eligible = eligible && restampable(design, c) && stampsField(m_system, c);
        for (const Injection &in : m_injections)
            if (in.part == c.part && in.field == c.field)
                eligible = eligible && in.ohms == c.from;
    }
    if (eligible) {
        NoiseModel m; // all but the reduced system, which reduce() makes anew
        m.m_contributions = m_contributions;
        m.m_injections = m_injections;
        m.m_system = m_system;
        m.m_fourKT = m_fourKT;
        if (restamp(m.m_system, changes)) {
            for (Injection &in : m.m_injections)
                for (const FieldChange &c : changes)
                    if (in.part == c.part && in.field == c.field) {
                        in.ohms = c.to;
                        in.white = std::sqrt(m.m_fourKT / in.ohms);
                    }
            if (m.reduce(m.m_enRow))
                return m;
        }
    }
    return build(design);
}

NoiseSamples NoiseModel::evaluate(std::span<const double> hz) const
{
    std::vector<std::complex<double>> points(hz.size());
    for (std::size_t i = 0; i < hz.size(); ++i)
        points[i] = {0.0, 2.0 * std::numbers::pi * hz[i]};
    return evaluate(hz, points);
}

DensityColumns NoiseModel::densityColumns() const
{
    return [this](std::span<const double> f, std::vector<double> &values) {
        NoiseSamples s = evaluate(f);
        if (!s.ok)
            return false;
        values = std::move(s.psd);
        return true;
    };
}

NoiseSamples NoiseModel::evaluate(std::span<const double> hz,
                                  std::span<const std::complex<double>> points) const
{
    NoiseSamples out;
    const std::size_t count = hz.size();
    std::vector<TransferEntry> entries(m_columns);
    for (std::size_t k = 0; k < m_columns; ++k)
        entries[k] = {0, static_cast<int>(k)};
    const std::vector<std::complex<double>> transfer = m_reduced->sweepEntries(points, entries);
    const auto h = [&](std::size_t column, std::size_t i) {
        return transfer[column * count + i];
    };
    const std::size_t sources = m_injections.size();
    out.psd.resize(sources * count);
    out.gain.resize(count);
    out.noiseGain.resize(count);
    for (std::size_t i = 0; i < count; ++i) {
        for (std::size_t k = 0; k < m_columns; ++k) {
            if (!std::isfinite(h(k, i).real()) || !std::isfinite(h(k, i).imag())) {
                out.ok = false;
                out.failedAtHz = hz[i];
                return out;
            }
        }
        const double f = hz[i];
        for (std::size_t k = 0; k < sources; ++k) {
            const Injection &in = m_injections[k];
            const double density = flickerDensity(in.white, in.cornerHz, f);
            out.psd[k * count + i] = std::norm(density * h(k, i));
        }
        out.gain[i] = h(m_gainColumn, i);
        // Magnitudes as roots of the squared norms: finite transfers of a circuit are far
        // from the range where the square overflows, and this skips hypot's scaling.
        out.noiseGain[i] = std::sqrt(std::norm(h(m_enColumn, i)));
    }
    return out;
}

std::string NoiseModel::describeFailure(std::complex<double> s) const
{
    return describeSingularity(m_system, s);
}

} // namespace loopsketch::detail
