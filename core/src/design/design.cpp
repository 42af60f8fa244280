#include "loopsketch/design/design.h"

#include "loopsketch/base/lookup.h"

#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <limits>
#include <sstream>

namespace loopsketch {

namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

// The table behind core/README.md §6.2 (parts). Terminals and fields are listed in file order; the
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
         {{"value", ValueKind::Resistance, ValueRange::Positive, true, 0.0, "resistance", "Ω"}}},
        {PartType::Capacitor,
         "capacitor",
         {"a", "b"},
         {{"value", ValueKind::Capacitance, ValueRange::Positive, true, 0.0, "capacitance", "F"}}},
        {PartType::Inductor,
         "inductor",
         {"a", "b"},
         {{"value", ValueKind::Inductance, ValueRange::Positive, true, 0.0, "inductance", "H"}}},
        {PartType::VSource,
         "vsource",
         {"pos", "neg"},
         {{"r_series", ValueKind::Resistance, ValueRange::NonNegative, false, 0.0,
           "series resistance", "Ω"}},
         false,
         true},
        {PartType::ISource,
         "isource",
         {"to", "from"},
         {// absent r_parallel: ideal source (infinite parallel resistance)
          {"r_parallel", ValueKind::Resistance, ValueRange::Positive, false, kInfinity,
           "parallel resistance", "Ω"},
          {"c_parallel", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0,
           "parallel capacitance", "F"},
          // the DC current through the source (dark current plus mean photocurrent), A: its
          // shot noise 2q|i_dc| is a noise source of its own (absent: no shot noise)
          {"i_dc", ValueKind::Current, ValueRange::Any, false, 0.0, "DC current (shot noise)", "A"},
          // relative tolerances of r_parallel and c_parallel (a photodiode's spread), used by
          // spread and suggest like a part's `tolerance` (absent: exact)
          {"r_parallel_tolerance", ValueKind::Tolerance, ValueRange::NonNegative, false, 0.0,
           "r_parallel tolerance", "%"},
          {"c_parallel_tolerance", ValueKind::Tolerance, ValueRange::NonNegative, false, 0.0,
           "c_parallel tolerance", "%"}},
         false,
         true},
        {PartType::GainBlock,
         "gain_block",
         {"in_p", "in_n", "out"},
         {{"gain", ValueKind::Gain, ValueRange::Any, true, 0.0, "DC gain", "V/V"},
          // absent gbw: no pole from gbw (default 0 means "not given")
          {"gbw", ValueKind::Frequency, ValueRange::Positive, false, 0.0, "gain-bandwidth", "Hz"},
          // relative tolerance of gbw, used by spread and suggest (absent: exact)
          {"gbw_tolerance", ValueKind::Tolerance, ValueRange::NonNegative, false, 0.0,
           "gbw tolerance", "%"},
          // absent r_in: infinite input resistance
          {"r_in", ValueKind::Resistance, ValueRange::Positive, false, kInfinity,
           "diff. input resistance", "Ω"},
          {"c_in", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0,
           "diff. input capacitance", "F"},
          // common-mode input capacitance, from each input pin to ground
          {"c_cm", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0,
           "common-mode input cap.", "F"},
          {"r_out", ValueKind::Resistance, ValueRange::NonNegative, false, 0.0, "output resistance",
           "Ω"},
          // noise densities (absent: noiseless): en in V/sqrt(Hz) in series with in_p (between
          // the in_p pin and the controlled source, so r_in, c_in and c_cm at the pins count
          // in its noise gain), in in A/sqrt(Hz) at each input; corners of the 1/f region
          // (absent or 0: white only). r_in and r_out are small-signal values: noiseless.
          {"en", ValueKind::Plain, ValueRange::NonNegative, false, 0.0, "voltage noise e_n",
           "V/√Hz"},
          {"en_corner_hz", ValueKind::Frequency, ValueRange::NonNegative, false, 0.0,
           "e_n 1/f corner", "Hz"},
          {"in", ValueKind::Plain, ValueRange::NonNegative, false, 0.0, "current noise i_n",
           "A/√Hz"},
          {"in_corner_hz", ValueKind::Frequency, ValueRange::NonNegative, false, 0.0,
           "i_n 1/f corner", "Hz"}},
         true,
         false},
        {PartType::Load,
         "load",
         {"a", "b"},
         {{"r", ValueKind::Resistance, ValueRange::Positive, true, 0.0, "resistance", "Ω"},
          {"c", ValueKind::Capacitance, ValueRange::NonNegative, false, 0.0, "capacitance", "F"}}},
    }};
    return table;
}

} // namespace

const PartSpec &partSpec(PartType type)
{
    if (const PartSpec *spec = findRow(specTable(), &PartSpec::type, type))
        return *spec;
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

namespace {

std::string withUnit(double v, std::string_view unit)
{
    if (std::isinf(v))
        return std::string(v > 0 ? "\u221E" : "-\u221E") + (unit.empty() ? "" : " ")
            + std::string(unit);
    return formatEngineering(v, 4, unit);
}

std::string decibelText(double linear)
{
    std::ostringstream os;
    os.precision(4);
    os << toDecibels(std::abs(linear));
    return os.str() + " dB";
}

std::string frequencyList(const std::vector<Value> &list)
{
    std::string text;
    for (const Value &v : list)
        text += (text.empty() ? "" : ", ") + withUnit(v.si, "Hz");
    return text;
}

std::string defaultNote(const FieldSpec &spec)
{
    if (std::isinf(spec.defaultValue))
        return "not given: ideal";
    if (spec.name == "en" || spec.name == "in")
        return "not given: noiseless";
    if (spec.name == "en_corner_hz" || spec.name == "in_corner_hz")
        return "not given: white only";
    return "not given";
}

} // namespace

std::vector<PartFieldText> partFieldTexts(const Part &part)
{
    std::vector<PartFieldText> rows;
    for (const FieldSpec &spec : partSpec(part.type).fields) {
        PartFieldText row;
        row.field = std::string(spec.name);
        row.label = std::string(spec.label);
        row.given = part.has(spec.name);
        const double v = part.number(spec.name);
        if (spec.kind == ValueKind::Tolerance && !row.given)
            continue; // a tolerance does not enter the analysis: listed only when given
        if (spec.name == "gbw" && !row.given) {
            row.value = "\u2014"; // no pole from a gain-bandwidth
            row.note = "not given";
            rows.push_back(std::move(row));
            continue;
        }
        row.value = spec.kind == ValueKind::Tolerance ? formatValue(v, ValueKind::Tolerance, 3)
                                                      : withUnit(v, spec.unit);
        if (spec.kind == ValueKind::Gain)
            row.value += " (" + decibelText(v) + ")";
        if ((spec.kind == ValueKind::Resistance || spec.kind == ValueKind::Capacitance)
            && std::isfinite(v) && v > 0)
            row.rkm = formatRkm(v, spec.kind, 3);
        if (!row.given)
            row.note = defaultNote(spec);
        else if (spec.name == "gbw" && part.number("gain") != 0.0)
            row.note = "gbw/|gain| = " + withUnit(v / std::abs(part.number("gain")), "Hz");
        rows.push_back(std::move(row));
    }
    if (partSpec(part.type).hasFrequencyLists) {
        const bool gbw = part.has("gbw");
        rows.push_back({"poles_hz", gbw ? "further poles" : "poles",
                        part.polesHz.empty() ? "\u2014" : frequencyList(part.polesHz), "",
                        part.polesHz.empty() ? "no poles listed" : "", true});
        rows.push_back({"zeros_hz", "zeros",
                        part.zerosHz.empty() ? "\u2014" : frequencyList(part.zerosHz), "",
                        part.zerosHz.empty() ? "no zeros listed" : "", true});
    }
    if (part.series)
        rows.push_back({"series", "E-series", toString(*part.series), "", "", true});
    if (part.tolerance)
        rows.push_back({"tolerance", "tolerance",
                        formatValue(part.tolerance->si, ValueKind::Tolerance, 3), "", "", true});
    return rows;
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
    // The last grid of this thread, kept: one analysis asks for it several times (the work
    // budget, the accuracy check, the curves), and a scan or a spread asks again for every
    // design it analyses, with the same sweep; a copy costs far less than a power per point.
    struct Last
    {
        double f0 = 0, f1 = 0;
        int pointsPerDecade = 0;
        std::vector<double> grid;
    };
    thread_local Last last;
    if (last.f0 == f0 && last.f1 == f1 && last.pointsPerDecade == pointsPerDecade
        && !last.grid.empty())
        return last.grid;
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
    last = {f0, f1, pointsPerDecade, f};
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

double Design::noiseSpotFrequencyHz() const
{
    return noiseSpotHz ? noiseSpotHz->si : kDefaultNoiseSpotHz;
}

double Design::settlingBandFraction() const
{
    return settlingBand ? settlingBand->si : kDefaultSettlingBand;
}

const Part *Design::signalSource() const
{
    const Part *p = findPart(input);
    return p && partSpec(p->type).isSignalSource ? p : nullptr;
}

std::string gainUnit(const Design &design)
{
    const Part *src = design.signalSource();
    const bool currentIn = src && src->type == PartType::ISource;
    const bool currentOut = design.output == OutputKind::Current;
    return std::string(currentOut ? "A" : "V") + "/" + (currentIn ? "A" : "V");
}

} // namespace loopsketch
