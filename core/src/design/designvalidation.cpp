// validateDesign: the rules every design obeys, whether it came from a file or the Sketch.

#include "loopsketch/design/designvalidation.h"

#include "loopsketch/base/limits.h"

#include "base/utf8text.h"

#include <cmath>
#include <cstdio>
#include <map>
#include <set>
#include <string>

namespace loopsketch {

namespace {

std::string inQuotes(std::string_view s)
{
    return "\"" + std::string(s) + "\"";
}

std::string typeName(PartType type)
{
    return std::string(partSpec(type).typeName);
}

class Checker
{
public:
    explicit Checker(std::string_view file) : m_file(file) { }

    void add(std::string part, std::string field, std::string message)
    {
        m_diagnostics.push_back({m_file, std::move(part), std::move(field), std::move(message)});
    }

    // A numeric field against its range; "what" names the quantity in the message.
    void checkNumber(const std::string &part, const std::string &field, double v, ValueRange range,
                     const std::string &text)
    {
        std::string shown;
        if (!text.empty()) {
            shown = " (" + inQuotes(text) + ")";
        } else if (std::isfinite(v)) {
            char buf[32];
            std::snprintf(buf, sizeof buf, "%g", v);
            shown = std::string(" (") + buf + ")";
        }
        if (!std::isfinite(v)) {
            add(part, field, "value" + shown + " is not a finite number");
            return;
        }
        if (range == ValueRange::Positive && !(v > 0))
            add(part, field, "value" + shown + " must be greater than zero");
        else if (range == ValueRange::NonNegative && v < 0)
            add(part, field, "value" + shown + " must not be negative");
    }

    Diagnostics take() { return std::move(m_diagnostics); }

private:
    std::string m_file;
    Diagnostics m_diagnostics;
};

// Union-find over node names for the ground-path check.
class NodeGroups
{
public:
    int index(const std::string &node)
    {
        auto [it, inserted] = m_index.try_emplace(node, static_cast<int>(m_parent.size()));
        if (inserted)
            m_parent.push_back(it->second);
        return it->second;
    }
    int root(int i)
    {
        while (m_parent[i] != i) {
            m_parent[i] = m_parent[m_parent[i]];
            i = m_parent[i];
        }
        return i;
    }
    void join(int a, int b) { m_parent[root(a)] = root(b); }
    const std::map<std::string, int> &nodes() const { return m_index; }

private:
    std::map<std::string, int> m_index;
    std::vector<int> m_parent;
};

void checkParts(const Design &d, Checker &c, bool wiring)
{
    std::set<std::string> seen;
    for (std::size_t i = 0; i < d.parts.size(); ++i) {
        const Part &p = d.parts[i];
        const std::string label = p.id.empty() ? "#" + std::to_string(i + 1) : p.id;
        if (p.id.empty()) {
            c.add(label, "id", "part has an empty id");
        } else if (!isValidPartId(p.id)) {
            c.add(label, "id",
                  "id " + inQuotes(p.id) + " may use only letters, digits, '_' and '-'");
        } else if (!seen.insert(p.id).second) {
            c.add(label, "id", "id " + inQuotes(p.id) + " is used by more than one part");
        }

        const PartSpec &spec = partSpec(p.type);
        if (p.nodes.size() != spec.terminals.size()) {
            c.add(label, "",
                  "a " + typeName(p.type) + " has " + std::to_string(spec.terminals.size())
                      + " terminals, " + std::to_string(p.nodes.size()) + " given");
        }
        for (std::size_t t = 0; t < spec.terminals.size() && t < p.nodes.size(); ++t) {
            if (p.nodes[t].empty())
                c.add(label, std::string(spec.terminals[t]), "node name is empty");
        }
        if (wiring && spec.terminals.size() == 2 && p.nodes.size() == 2 && !p.nodes[0].empty()
            && p.nodes[0] == p.nodes[1]) {
            c.add(label, std::string(spec.terminals[1]),
                  "both terminals are on node " + inQuotes(p.nodes[0]) + " (the part is shorted)");
        }
        if (wiring && p.type == PartType::GainBlock && p.nodes.size() == 3) {
            if (!p.nodes[0].empty() && p.nodes[0] == p.nodes[1])
                c.add(label, "in_n", "in_p and in_n are both on node " + inQuotes(p.nodes[0]));
            if (p.nodes[2] == kGroundNode)
                c.add(label, "out", "the gain block output is on ground \"0\"");
        }

        for (const FieldSpec &f : spec.fields) {
            auto it = p.fields.find(std::string(f.name));
            if (it == p.fields.end()) {
                if (f.required)
                    c.add(label, std::string(f.name), "required field is missing");
                continue;
            }
            c.checkNumber(label, std::string(f.name), it->second.si, f.range, it->second.text);
        }
        for (const auto &[name, value] : p.fields) {
            const FieldSpec *field = findFieldSpec(p.type, name);
            if (!field)
                c.add(label, name, "a " + typeName(p.type) + " has no field " + inQuotes(name));
            else if (field->kind == ValueKind::Tolerance && std::isfinite(value.si)
                     && value.si >= 1)
                c.add(label, name, name + " must be below 100 %");
        }
        if (p.type == PartType::GainBlock) {
            if (auto it = p.fields.find("gain"); it != p.fields.end() && it->second.si == 0.0)
                c.add(label, "gain", "gain must not be zero");
        }
        if (!spec.hasFrequencyLists && (!p.polesHz.empty() || !p.zerosHz.empty()))
            c.add(label, "poles_hz", "only a gain block has poles and zeros");
        for (const Value &v : p.polesHz)
            c.checkNumber(label, "poles_hz", v.si, ValueRange::Positive, v.text);
        for (const Value &v : p.zerosHz)
            c.checkNumber(label, "zeros_hz", v.si, ValueRange::Positive, v.text);
        if (p.tolerance) {
            const double t = p.tolerance->si;
            if (!std::isfinite(t) || t < 0 || t >= 1)
                c.add(label, "tolerance", "tolerance must be between 0 % and 100 % (excluded)");
        }
    }
}

void checkConnectivity(const Design &d, Checker &c)
{
    NodeGroups groups;
    std::map<std::string, std::vector<std::pair<std::string, std::string>>> touches;
    const int ground = groups.index(std::string(kGroundNode));
    bool groundUsed = false;
    for (const Part &p : d.parts) {
        const PartSpec &spec = partSpec(p.type);
        int first = -1;
        for (std::size_t t = 0; t < p.nodes.size() && t < spec.terminals.size(); ++t) {
            if (p.nodes[t].empty())
                continue;
            const int n = groups.index(p.nodes[t]);
            touches[p.nodes[t]].emplace_back(p.id, std::string(spec.terminals[t]));
            groundUsed = groundUsed || n == ground;
            // every part joins all its terminals: the check is for a DC-free path to ground
            // through any part, not for a resistive path
            if (first < 0)
                first = n;
            else
                groups.join(first, n);
        }
    }
    if (d.parts.empty()) {
        // A blank page: say how to begin rather than what a finished circuit lacks.
        c.add("", "",
              "no parts yet: place a signal source, a gain block, a load and a ground to start");
        return;
    }
    if (!groundUsed) {
        c.add("", "", "no part connects to ground node \"0\"");
        return;
    }

    for (const auto &[node, list] : touches) {
        if (node != kGroundNode && list.size() == 1) {
            c.add(list.front().first, list.front().second,
                  "node " + inQuotes(node) + " is dangling: only terminal " + list.front().second
                      + " of part " + list.front().first + " connects to it");
        }
    }

    std::map<int, std::vector<std::string>> floating;
    for (const auto &[node, index] : groups.nodes()) {
        if (groups.root(index) != groups.root(ground))
            floating[groups.root(index)].push_back(node);
    }
    for (const auto &[root, nodes] : floating) {
        std::string names;
        std::set<std::string> parts;
        for (const std::string &n : nodes) {
            names += (names.empty() ? "" : ", ") + inQuotes(n);
            for (const auto &[part, terminal] : touches[n])
                parts.insert(part);
        }
        std::string partNames;
        for (const std::string &p : parts)
            partNames += (partNames.empty() ? "" : ", ") + p;
        const std::string firstPart = parts.empty() ? std::string() : *parts.begin();
        c.add(firstPart, "",
              std::string(nodes.size() == 1 ? "node " : "nodes ") + names
                  + (nodes.size() == 1 ? " has" : " have")
                  + " no path to ground \"0\" (floating subnetwork of parts " + partNames + ")");
    }
}

/// In a draft only the input's reference is checked: empty, or an existing signal source.
void checkInput(const Design &d, Checker &c, bool required)
{
    if (d.input.empty()) {
        if (required)
            c.add("", "input", "input is empty: it must name the signal source");
    } else if (const Part *p = d.findPart(d.input); !p) {
        c.add("", "input", "input names part " + inQuotes(d.input) + ", which does not exist");
    } else if (!partSpec(p->type).isSignalSource) {
        c.add(d.input, "input",
              "input names " + d.input + ", a " + typeName(p->type)
                  + "; it must name the signal source (vsource or isource)");
    }
}

void checkRoles(const Design &d, Checker &c)
{
    std::vector<std::string> gainBlocks, sources, loads;
    for (const Part &p : d.parts) {
        if (p.type == PartType::GainBlock)
            gainBlocks.push_back(p.id);
        else if (p.type == PartType::Load)
            loads.push_back(p.id);
        else if (partSpec(p.type).isSignalSource)
            sources.push_back(p.id);
    }
    auto exactlyOne = [&](const std::vector<std::string> &ids, const std::string &what) {
        if (ids.empty()) {
            c.add("", "", "the design has no " + what + " (exactly one is needed)");
        } else if (ids.size() > 1) {
            std::string list;
            for (const std::string &id : ids)
                list += (list.empty() ? "" : ", ") + id;
            c.add(ids[1], "",
                  "the design has " + std::to_string(ids.size()) + " " + what + "s (" + list
                      + "); exactly one is allowed");
        }
    };
    exactlyOne(gainBlocks, "gain block");
    exactlyOne(sources, "signal source");
    exactlyOne(loads, "load");
    checkInput(d, c, true);
}

void checkSweep(const Sweep &s, Checker &c)
{
    const double f0 = s.start.si, f1 = s.stop.si;
    bool ends = true;
    if (!std::isfinite(f0) || !(f0 > 0)) {
        c.add("", "sweep.start", "sweep start must be a frequency greater than zero");
        ends = false;
    }
    if (!std::isfinite(f1) || !(f1 > 0)) {
        c.add("", "sweep.stop", "sweep stop must be a frequency greater than zero");
        ends = false;
    }
    if (ends && !(f0 < f1)) {
        c.add("", "sweep.stop", "sweep stop must be above sweep start");
        ends = false;
    }
    // Frequencies are formed as start * (stop/start)^x: a span past kMaxSweepDecades
    // overflows that ratio, and no loop needs it.
    if (ends && std::log10(f1) - std::log10(f0) > kMaxSweepDecades) {
        c.add("", "sweep.start",
              "the sweep spans " + formatPlain(std::log10(f1) - std::log10(f0), 4)
                  + " decades; at most " + std::to_string(kMaxSweepDecades)
                  + " are allowed (raise the start or lower the stop)");
        ends = false;
    }
    if (s.pointsPerDecade < 1 || s.pointsPerDecade > 1000) {
        c.add("", "sweep.points_per_decade", "points_per_decade must be an integer from 1 to 1000");
        return;
    }
    if (ends) {
        const double points = std::round((std::log10(f1) - std::log10(f0)) * s.pointsPerDecade) + 1;
        if (!(points <= static_cast<double>(kMaxSweepPoints))) {
            // An infinite count (a span of ~1e308 decades) cannot be written as a number.
            const std::string count = std::isfinite(points)
                ? std::to_string(static_cast<long long>(points))
                : std::string("too many");
            c.add("", "sweep.points_per_decade",
                  "the sweep has " + count + " points; at most " + std::to_string(kMaxSweepPoints)
                      + " are allowed");
        }
    }
}

void checkSpecs(const Specs &s, Checker &c)
{
    if (s.gainMin && !std::isfinite(s.gainMin->si))
        c.add("", "specs.gain", "minimum gain is not a finite number");
    if (s.gainMax && !std::isfinite(s.gainMax->si))
        c.add("", "specs.gain", "maximum gain is not a finite number");
    if (s.gainMin && s.gainMax && s.gainMin->si > s.gainMax->si)
        c.add("", "specs.gain", "gain window [min, max] has min above max");
    if (s.bandwidthMin && !(std::isfinite(s.bandwidthMin->si) && s.bandwidthMin->si > 0))
        c.add("", "specs.bandwidth_min", "bandwidth_min must be a frequency greater than zero");
    if (s.phaseMarginMinDeg
        && !(std::isfinite(*s.phaseMarginMinDeg) && *s.phaseMarginMinDeg >= 0
             && *s.phaseMarginMinDeg < 180)) {
        c.add("", "specs.phase_margin_min_deg",
              "phase_margin_min_deg must be from 0 to 180 degrees (excluded)");
    }
    if (s.outputNoiseMax && !(std::isfinite(s.outputNoiseMax->si) && s.outputNoiseMax->si > 0))
        c.add("", "specs.output_noise_max",
              "output_noise_max must be an rms value greater than zero");
    if (s.snrMinDb && !std::isfinite(*s.snrMinDb))
        c.add("", "specs.snr_min_db", "snr_min_db must be a finite number of decibels");
}

void checkSignal(const Design &d, Checker &c)
{
    if (d.signalLevel && !(std::isfinite(d.signalLevel->si) && d.signalLevel->si > 0))
        c.add("", "signal_level", "signal_level must be a peak value greater than zero");
    if (d.specs.snrMinDb && !d.signalLevel)
        c.add("", "specs.snr_min_db",
              "snr_min_db needs the design's signal_level (the peak of a full-scale sine at the "
              "source)");
    if (d.noiseSpotHz && !(std::isfinite(d.noiseSpotHz->si) && d.noiseSpotHz->si > 0))
        c.add("", "noise_spot_hz", "noise_spot_hz must be a frequency greater than zero");
}

void checkTemperature(const Design &d, Checker &c)
{
    if (!d.temperature)
        return;
    const double t = d.temperature->si;
    if (!std::isfinite(t) || !(t > 0))
        c.add("", "temperature", "temperature must be above absolute zero (0 K, -273.15 °C)");
}

void checkNoiseBand(const Design &d, Checker &c)
{
    if (!d.noiseBand)
        return;
    const double low = d.noiseBand->low.si, high = d.noiseBand->high.si;
    if (!std::isfinite(low) || !(low > 0) || !std::isfinite(high) || !(high > 0))
        c.add("", "noise_band", "noise_band ends must be frequencies greater than zero");
    else if (!(low < high))
        c.add("", "noise_band", "noise_band [low, high] has low not below high");
}

void checkSettlingBand(const Design &d, Checker &c)
{
    if (!d.settlingBand)
        return;
    const double b = d.settlingBand->si;
    if (!std::isfinite(b) || !(b > 0) || !(b < 1))
        c.add("", "settling_band", "settling_band must be between 0 % and 100 % (both excluded)");
}

void checkCandidates(const Design &d, Checker &c)
{
    std::set<std::string> names;
    for (std::size_t i = 0; i < d.candidates.size(); ++i) {
        const Candidate &cand = d.candidates[i];
        const std::string label = cand.name.empty() ? "#" + std::to_string(i + 1) : cand.name;
        if (cand.name.empty())
            c.add("", "candidates", "candidate " + label + " has an empty name");
        else if (!names.insert(cand.name).second)
            c.add("", "candidates", "candidate name " + inQuotes(cand.name) + " is used twice");
        for (const auto &[id, value] : cand.values) {
            const Part *p = d.findPart(id);
            if (!p) {
                c.add(id, "candidates",
                      "candidate " + inQuotes(label) + " names part " + inQuotes(id)
                          + ", which does not exist");
                continue;
            }
            if (p->primaryField().empty()) {
                c.add(id, "candidates",
                      "candidate " + inQuotes(label) + ": a " + typeName(p->type)
                          + " has no value to change");
                continue;
            }
            const FieldSpec *f = findFieldSpec(p->type, p->primaryField());
            c.checkNumber(id, std::string(p->primaryField()), value.si,
                          f ? f->range : ValueRange::Positive, value.text);
        }
    }
}

void checkSketch(const Design &d, Checker &c)
{
    if (!d.sketch)
        return;
    for (const auto &[id, placement] : d.sketch->parts) {
        if (!d.findPart(id))
            c.add(id, "sketch", "sketch places part " + inQuotes(id) + ", which does not exist");
        if (!std::isfinite(placement.x) || !std::isfinite(placement.y))
            c.add(id, "sketch", "sketch position is not a finite number");
        if (placement.rotation % 90 != 0)
            c.add(id, "sketch.rotation",
                  "rotation " + std::to_string(placement.rotation)
                      + " is not a multiple of 90 degrees");
    }
    for (std::size_t w = 0; w < d.sketch->wires.size(); ++w) {
        for (const auto &[x, y] : d.sketch->wires[w].points) {
            if (!std::isfinite(x) || !std::isfinite(y)) {
                c.add("", "sketch.wires",
                      "wire " + std::to_string(w + 1) + " has a point that is not finite");
                break;
            }
        }
    }
}

using detail::utf8Length;
using detail::utf8Prefix;

std::string tooLong(std::string_view what, std::size_t length, std::size_t limit,
                    std::string_view unit)
{
    return std::string(what) + " is " + std::to_string(length) + " " + std::string(unit)
        + " long; at most " + std::to_string(limit) + " are allowed";
}

// The size limits of limits.h. Checked first: a part id of 100,000 characters must not
// reach the other messages, which name parts by id.
void checkLimits(const Design &d, Checker &c)
{
    if (const std::size_t n = utf8Length(d.title); n > kMaxTitleChars)
        c.add("", "title", tooLong("the title", n, kMaxTitleChars, "characters"));
    if (d.notes.size() > kMaxNotesBytes)
        c.add("", "notes",
              tooLong("the notes text", d.notes.size(), kMaxNotesBytes, "bytes") + " (64 KiB)");
    for (std::size_t i = 0; i < d.parts.size(); ++i) {
        const Part &p = d.parts[i];
        if (const std::size_t n = utf8Length(p.id); n > kMaxPartIdChars) {
            c.add("#" + std::to_string(i + 1) + " (" + utf8Prefix(p.id, 16) + ")", "id",
                  tooLong("the id", n, kMaxPartIdChars, "characters"));
        }
        if (p.polesHz.size() > kMaxPolesPerGainBlock)
            c.add(utf8Prefix(p.id, kMaxPartIdChars), "poles_hz",
                  "the gain block has " + std::to_string(p.polesHz.size()) + " poles; at most "
                      + std::to_string(kMaxPolesPerGainBlock) + " are allowed");
        if (p.zerosHz.size() > kMaxZerosPerGainBlock)
            c.add(utf8Prefix(p.id, kMaxPartIdChars), "zeros_hz",
                  "the gain block has " + std::to_string(p.zerosHz.size()) + " zeros; at most "
                      + std::to_string(kMaxZerosPerGainBlock) + " are allowed");
    }
    if (d.candidates.size() > kMaxCandidates)
        c.add("", "candidates",
              "the design has " + std::to_string(d.candidates.size()) + " candidates; at most "
                  + std::to_string(kMaxCandidates) + " are allowed");
    for (std::size_t i = 0; i < d.candidates.size() && i < kMaxCandidates; ++i) {
        if (const std::size_t n = utf8Length(d.candidates[i].name); n > kMaxCandidateNameChars)
            c.add("", "candidates[" + std::to_string(i) + "].name",
                  tooLong("the candidate name", n, kMaxCandidateNameChars, "characters"));
    }
}

} // namespace

Diagnostics validateDesign(const Design &design, std::string_view file)
{
    return validateDesign(design, DesignRules::Complete, file);
}

Diagnostics validateDesign(const Design &design, DesignRules rules, std::string_view file)
{
    const bool complete = rules == DesignRules::Complete;
    Checker c(file);
    if (design.parts.size() > kMaxParts) {
        c.add("", "parts",
              "the design has " + std::to_string(design.parts.size()) + " parts; at most "
                  + std::to_string(kMaxParts) + " are allowed");
        return c.take();
    }
    checkLimits(design, c);
    if (Diagnostics limits = c.take(); !limits.empty())
        return limits;
    checkParts(design, c, complete);
    if (complete) {
        checkConnectivity(design, c);
        checkRoles(design, c);
    } else {
        checkInput(design, c, false);
    }
    checkSweep(design.sweep, c);
    checkSpecs(design.specs, c);
    checkTemperature(design, c);
    checkSettlingBand(design, c);
    checkNoiseBand(design, c);
    checkSignal(design, c);
    checkCandidates(design, c);
    checkSketch(design, c);
    return c.take();
}

} // namespace loopsketch
