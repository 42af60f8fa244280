// Writing design files: a Design to its canonical loopsketch.design/1 text, and to disk.

#include "loopsketch/design/designfile.h"

#include "loopsketch/design/atomicfile.h"

#include "design/jsondocument.h"

#include <charconv>
#include <cmath>
#include <string>
#include <vector>

namespace loopsketch {

namespace {

using detail::Json;

std::string jsonString(std::string_view s)
{
    return Json(std::string(s)).dump(-1, ' ', false, Json::error_handler_t::replace);
}

// Shortest text that reads back to the same double; integers without exponent.
std::string jsonNumber(double v)
{
    if (!std::isfinite(v))
        return "null";
    if (v == std::trunc(v) && std::abs(v) < 1e15) {
        char buf[32];
        std::snprintf(buf, sizeof buf, "%.0f", v);
        return buf;
    }
    char buf[64];
    const auto r = std::to_chars(buf, buf + sizeof buf, v);
    return std::string(buf, r.ptr);
}

std::string jsonValue(const Value &v)
{
    return v.text.empty() ? jsonNumber(v.si) : jsonString(v.text);
}

std::string partLine(const Part &p)
{
    const PartSpec &spec = partSpec(p.type);
    std::string s = "{\"id\": " + jsonString(p.id) + ", \"type\": " + jsonString(spec.typeName);
    for (std::size_t t = 0; t < spec.terminals.size(); ++t) {
        s += ", " + jsonString(spec.terminals[t]) + ": "
            + jsonString(t < p.nodes.size() ? p.nodes[t] : std::string());
    }
    for (const FieldSpec &f : spec.fields) {
        if (auto it = p.fields.find(std::string(f.name)); it != p.fields.end())
            s += ", " + jsonString(f.name) + ": " + jsonValue(it->second);
    }
    auto list = [&](std::string_view key, const std::vector<Value> &values) {
        if (values.empty())
            return;
        s += ", " + jsonString(key) + ": [";
        for (std::size_t i = 0; i < values.size(); ++i)
            s += (i ? ", " : "") + jsonValue(values[i]);
        s += "]";
    };
    list("poles_hz", p.polesHz);
    list("zeros_hz", p.zerosHz);
    if (p.series)
        s += ", \"series\": " + jsonString(toString(*p.series));
    if (p.tolerance)
        s += ", \"tolerance\": " + jsonValue(*p.tolerance);
    return s + "}";
}

} // namespace

std::string serializeDesign(const Design &d)
{
    std::string s = "{\n";
    s += "  \"schema\": " + jsonString(kDesignSchema) + ",\n";
    s += "  \"title\": " + jsonString(d.title) + ",\n";
    if (!d.revision.empty())
        s += "  \"revision\": " + jsonString(d.revision) + ",\n";
    if (!d.notes.empty())
        s += "  \"notes\": " + jsonString(d.notes) + ",\n";
    if (d.parts.empty()) {
        s += "  \"parts\": [],\n";
    } else {
        s += "  \"parts\": [\n";
        for (std::size_t i = 0; i < d.parts.size(); ++i)
            s += "    " + partLine(d.parts[i]) + (i + 1 < d.parts.size() ? ",\n" : "\n");
        s += "  ],\n";
    }
    s += "  \"input\": " + jsonString(d.input) + ",\n";
    s += std::string("  \"output\": ")
        + (d.output == OutputKind::Current ? "\"current\"" : "\"voltage\"");
    s += ",\n  \"sweep\": {\"start\": " + jsonValue(d.sweep.start)
        + ", \"stop\": " + jsonValue(d.sweep.stop)
        + ", \"points_per_decade\": " + std::to_string(d.sweep.pointsPerDecade) + "}";
    if (d.temperature)
        s += ",\n  \"temperature\": " + jsonValue(*d.temperature);
    if (d.settlingBand)
        s += ",\n  \"settling_band\": " + jsonValue(*d.settlingBand);
    if (d.noiseBand)
        s += ",\n  \"noise_band\": [" + jsonValue(d.noiseBand->low) + ", "
            + jsonValue(d.noiseBand->high) + "]";
    if (d.noiseSpotHz)
        s += ",\n  \"noise_spot_hz\": " + jsonValue(*d.noiseSpotHz);
    if (d.signalLevel)
        s += ",\n  \"signal_level\": " + jsonValue(*d.signalLevel);

    std::vector<std::string> specs;
    if (d.specs.gainMin || d.specs.gainMax) {
        specs.push_back("\"gain\": [" + (d.specs.gainMin ? jsonValue(*d.specs.gainMin) : "null")
                        + ", " + (d.specs.gainMax ? jsonValue(*d.specs.gainMax) : "null") + "]");
    }
    if (d.specs.bandwidthMin)
        specs.push_back("\"bandwidth_min\": " + jsonValue(*d.specs.bandwidthMin));
    if (d.specs.phaseMarginMinDeg)
        specs.push_back("\"phase_margin_min_deg\": " + jsonNumber(*d.specs.phaseMarginMinDeg));
    if (d.specs.outputNoiseMax)
        specs.push_back("\"output_noise_max\": " + jsonValue(*d.specs.outputNoiseMax));
    if (d.specs.snrMinDb)
        specs.push_back("\"snr_min_db\": " + jsonNumber(*d.specs.snrMinDb));
    if (!specs.empty()) {
        s += ",\n  \"specs\": {";
        for (std::size_t i = 0; i < specs.size(); ++i)
            s += (i ? ", " : "") + specs[i];
        s += "}";
    }

    if (!d.candidates.empty()) {
        s += ",\n  \"candidates\": [\n";
        for (std::size_t i = 0; i < d.candidates.size(); ++i) {
            const Candidate &c = d.candidates[i];
            s += "    {\"name\": " + jsonString(c.name) + ", \"values\": {";
            bool first = true;
            for (const auto &[id, v] : c.values) {
                s += (first ? "" : ", ") + jsonString(id) + ": " + jsonValue(v);
                first = false;
            }
            s += i + 1 < d.candidates.size() ? "}},\n" : "}}\n";
        }
        s += "  ]";
    }

    if (d.sketch) {
        s += ",\n  \"sketch\": {\n";
        if (d.sketch->parts.empty()) {
            s += "    \"parts\": {},\n";
        } else {
            s += "    \"parts\": {\n";
            std::size_t i = 0;
            for (const auto &[id, p] : d.sketch->parts) {
                s += "      " + jsonString(id) + ": {\"x\": " + jsonNumber(p.x) + ", \"y\": "
                    + jsonNumber(p.y) + ", \"rotation\": " + std::to_string(p.rotation)
                    + (p.mirror ? ", \"mirror\": true}" : "}")
                    + (++i < d.sketch->parts.size() ? ",\n" : "\n");
            }
            s += "    },\n";
        }
        // Written only when there are some, so files from before ground symbols round-trip
        // byte-identically.
        const std::string afterWires = d.sketch->grounds.empty() ? "\n" : ",\n";
        if (d.sketch->wires.empty()) {
            s += "    \"wires\": []" + afterWires;
        } else {
            s += "    \"wires\": [\n";
            for (std::size_t i = 0; i < d.sketch->wires.size(); ++i) {
                s += "      {\"points\": [";
                const auto &pts = d.sketch->wires[i].points;
                for (std::size_t k = 0; k < pts.size(); ++k)
                    s += (k ? ", [" : "[") + jsonNumber(pts[k].first) + ", "
                        + jsonNumber(pts[k].second) + "]";
                s += i + 1 < d.sketch->wires.size() ? "]},\n" : "]}\n";
            }
            s += "    ]" + afterWires;
        }
        if (!d.sketch->grounds.empty()) {
            s += "    \"grounds\": [";
            for (std::size_t i = 0; i < d.sketch->grounds.size(); ++i)
                s += (i ? ", [" : "[") + jsonNumber(d.sketch->grounds[i].x) + ", "
                    + jsonNumber(d.sketch->grounds[i].y) + "]";
            s += "]\n";
        }
        s += "  }";
    }
    s += "\n}\n";
    return s;
}

Result<bool> saveDesign(const Design &design, const std::string &path)
{
    return writeFileAtomically(path, serializeDesign(design));
}

} // namespace loopsketch
