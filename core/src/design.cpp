#include "loopsketch/design.h"

#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <limits>

namespace loopsketch {

namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

// The table behind DESIGN.md §4. Terminals and fields are listed in file order; the
// serializer writes them in this order.
//
// Gain block: `gbw` (gain-bandwidth product, Hz) places the FIRST pole at gbw / |gain|.
// With gbw given, `poles_hz` lists only the remaining poles; a gain block that gives both
// gbw and its first pole in poles_hz would have that pole twice.
const std::array<PartSpec, 7> &specTable()
{
    static const std::array<PartSpec, 7> table = {{
        {PartType::Resistor,
         "resistor",
         {"a", "b"},
         {{"value", ValueKind::Resistance, ValueRange::Positive, true, 0.0}}},
        {PartType::Capacitor,
         "capacitor",
         {"a", "b"},
         {{"value", ValueKind::Capacitance, ValueRange::Positive, true, 0.0}}},
        {PartType::Inductor,
         "inductor",
         {"a", "b"},
         {{"value", ValueKind::Inductance, ValueRange::Positive, true, 0.0}}},
        {PartType::VSource,
         "vsource",
         {"pos", "neg"},
         {{"r_series", ValueKind::Resistance, ValueRange::NonNegative, false, 0.0}},
         false,
         true},
        {PartType::ISource,
         "isource",
         {"to", "from"},
         {// absent r_parallel: ideal source (infinite parallel resistance)
          {"r_parallel", ValueKind::Resistance, ValueRange::Positive, false, kInfinity},
          {"c_parallel", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0},
          // the DC current through the source (dark current plus mean photocurrent), A: its
          // shot noise 2q|i_dc| is a noise source of its own (absent: no shot noise)
          {"i_dc", ValueKind::Current, ValueRange::Any, false, 0.0}},
         false,
         true},
        {PartType::GainBlock,
         "gain_block",
         {"in_p", "in_n", "out"},
         {{"gain", ValueKind::Gain, ValueRange::Any, true, 0.0},
          // absent gbw: no pole from gbw (default 0 means "not given")
          {"gbw", ValueKind::Frequency, ValueRange::Positive, false, 0.0},
          // absent r_in: infinite input resistance
          {"r_in", ValueKind::Resistance, ValueRange::Positive, false, kInfinity},
          {"c_in", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0},
          // common-mode input capacitance, from each input pin to ground
          {"c_cm", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0},
          {"r_out", ValueKind::Resistance, ValueRange::NonNegative, false, 0.0},
          // noise densities (absent: noiseless): en in V/sqrt(Hz) in series with in_p (between
          // the in_p pin and the controlled source, so r_in, c_in and c_cm at the pins count
          // in its noise gain), in in A/sqrt(Hz) at each input; corners of the 1/f region
          // (absent or 0: white only). r_in and r_out are small-signal values: noiseless.
          {"en", ValueKind::Plain, ValueRange::NonNegative, false, 0.0},
          {"en_corner_hz", ValueKind::Frequency, ValueRange::NonNegative, false, 0.0},
          {"in", ValueKind::Plain, ValueRange::NonNegative, false, 0.0},
          {"in_corner_hz", ValueKind::Frequency, ValueRange::NonNegative, false, 0.0}},
         true,
         false},
        {PartType::Load,
         "load",
         {"a", "b"},
         {{"r", ValueKind::Resistance, ValueRange::Positive, true, 0.0},
          {"c", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0}}},
    }};
    return table;
}

} // namespace

const PartSpec &partSpec(PartType type)
{
    for (const PartSpec &spec : specTable()) {
        if (spec.type == type)
            return spec;
    }
    assert(false && "every PartType has a spec");
    return specTable().front();
}

std::optional<PartType> parsePartType(std::string_view typeName)
{
    for (const PartSpec &spec : specTable()) {
        if (spec.typeName == typeName)
            return spec.type;
    }
    return std::nullopt;
}

std::span<const PartSpec> allPartSpecs()
{
    return {specTable().data(), specTable().size()};
}

const FieldSpec *findFieldSpec(PartType type, std::string_view field)
{
    for (const FieldSpec &f : partSpec(type).fields) {
        if (f.name == field)
            return &f;
    }
    return nullptr;
}

bool isValidPartId(std::string_view id)
{
    if (id.empty())
        return false;
    return std::all_of(id.begin(), id.end(), [](char c) {
        return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9')
            || c == '_' || c == '-';
    });
}

std::string Part::node(std::string_view terminal) const
{
    const auto &terminals = partSpec(type).terminals;
    for (std::size_t i = 0; i < terminals.size(); ++i) {
        if (terminals[i] == terminal)
            return i < nodes.size() ? nodes[i] : std::string();
    }
    return {};
}

double Part::number(std::string_view field) const
{
    if (auto it = fields.find(std::string(field)); it != fields.end())
        return it->second.si;
    const FieldSpec *spec = findFieldSpec(type, field);
    assert(spec && "number() asked for a field the part type does not have");
    return spec ? spec->defaultValue : std::numeric_limits<double>::quiet_NaN();
}

std::string_view Part::primaryField() const
{
    switch (type) {
    case PartType::Resistor:
    case PartType::Capacitor:
    case PartType::Inductor:
        return "value";
    case PartType::Load:
        return "r";
    case PartType::VSource:
    case PartType::ISource:
    case PartType::GainBlock:
        break;
    }
    return {};
}

std::vector<double> Sweep::frequencies() const
{
    const double f0 = start.si;
    const double f1 = stop.si;
    if (!(std::isfinite(f0) && std::isfinite(f1) && f0 > 0 && f1 >= f0) || pointsPerDecade < 1)
        return {};
    const double decades = std::log10(f1 / f0);
    const long intervals = std::lround(decades * pointsPerDecade);
    if (intervals <= 0)
        return {f0};
    std::vector<double> f(static_cast<std::size_t>(intervals) + 1);
    const double logStart = std::log10(f0);
    const double step = decades / static_cast<double>(intervals);
    for (long i = 0; i <= intervals; ++i)
        f[static_cast<std::size_t>(i)] = std::pow(10.0, logStart + step * static_cast<double>(i));
    // the ends exactly as written, not as the power reproduces them
    f.front() = f0;
    f.back() = f1;
    return f;
}

const Part *Design::findPart(std::string_view id) const
{
    auto it = std::find_if(parts.begin(), parts.end(), [&](const Part &p) { return p.id == id; });
    return it == parts.end() ? nullptr : &*it;
}

Part *Design::findPart(std::string_view id)
{
    auto it = std::find_if(parts.begin(), parts.end(), [&](const Part &p) { return p.id == id; });
    return it == parts.end() ? nullptr : &*it;
}

const Part *Design::uniquePart(PartType type) const
{
    const Part *found = nullptr;
    for (const Part &p : parts) {
        if (p.type != type)
            continue;
        if (found)
            return nullptr;
        found = &p;
    }
    return found;
}

double Design::temperatureK() const
{
    return temperature ? temperature->si : kDefaultTemperatureK;
}

const Part *Design::signalSource() const
{
    const Part *p = findPart(input);
    return p && partSpec(p->type).isSignalSource ? p : nullptr;
}

} // namespace loopsketch
