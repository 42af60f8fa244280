// Reading design files: loopsketch.design/1 text to a Design.
//
// Parsing runs in three passes: a byte-level UTF-8 check and a SAX pass that rejects
// malformed JSON, duplicate keys and deep nesting (both in jsondocument.cpp), then a walk
// over the DOM that checks every key and type (Reader, here), then validateDesign().

#include "loopsketch/design/designfile.h"

#include "loopsketch/design/designvalidation.h"

#include "base/utf8text.h"
#include "design/jsondocument.h"
#include "design/jsonreader.h"

#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <optional>
#include <set>
#include <system_error>

namespace loopsketch {

namespace {

using detail::inQuotes;
using detail::Json;
using detail::shownId;
using detail::shownKey;
using detail::utf8Length;

// A file over the size limit: `bytes` long.
Diagnostic tooLarge(const std::string &file, std::uintmax_t bytes)
{
    return Diagnostic{file, "", "",
                      "the file is " + std::to_string(bytes)
                          + " bytes; design files are limited to "
                          + std::to_string(kMaxDesignFileBytes) + " bytes (16 MiB)"};
}

// DOM pass: keys, types and values into a Design.

class Reader : public detail::JsonReader
{
public:
    using JsonReader::JsonReader;

    std::optional<Value> readValue(const Json &j, ValueKind kind, const std::string &part,
                                   const std::string &field)
    {
        if (j.is_number())
            return Value{j.get<double>(), {}};
        if (!j.is_string()) {
            typeError(part, field, j, "a number or a value text such as \"4k7\"");
            return std::nullopt;
        }
        const std::string text = j.get<std::string>();
        Result<double> v = parseValue(text, kind, ValueRange::Any);
        if (!v.ok()) {
            for (Diagnostic d : v.diagnostics()) {
                d.file = m_file;
                d.part = part;
                d.field = field;
                m_diagnostics.push_back(std::move(d));
            }
            return std::nullopt;
        }
        return Value{*v, text};
    }

    std::vector<Value> readValueList(const Json &j, ValueKind kind, const std::string &part,
                                     const std::string &field)
    {
        std::vector<Value> out;
        if (!j.is_array()) {
            typeError(part, field, j, "a list of frequencies");
            return out;
        }
        // refused before reading: validateDesign would refuse the list anyway
        const std::size_t limit
            = field == "poles_hz" ? kMaxPolesPerGainBlock : kMaxZerosPerGainBlock;
        if (j.size() > limit) {
            error(part, field,
                  "the gain block has " + std::to_string(j.size()) + " "
                      + (field == "poles_hz" ? "poles" : "zeros") + "; at most "
                      + std::to_string(limit) + " are allowed");
            return out;
        }
        for (const Json &e : j) {
            if (auto v = readValue(e, kind, part, field))
                out.push_back(*v);
        }
        return out;
    }

    std::optional<Part> readPart(const Json &j, std::size_t index)
    {
        std::string label = "#" + std::to_string(index + 1);
        if (!j.is_object()) {
            typeError(label, "", j, "a part object");
            return std::nullopt;
        }
        Part part;
        if (auto it = j.find("id"); it == j.end()) {
            error(label, "id", "part has no id");
        } else if (auto id = readString(*it, label, "id")) {
            part.id = *id;
            if (const std::size_t n = utf8Length(*id); n > kMaxPartIdChars) {
                error(label + " (" + shownId(*id) + ")", "id",
                      "the id is " + std::to_string(n) + " characters long; at most "
                          + std::to_string(kMaxPartIdChars) + " are allowed");
                return std::nullopt;
            }
            if (!id->empty())
                label = *id;
        }
        const auto typeIt = j.find("type");
        if (typeIt == j.end()) {
            error(label, "type", "part has no type");
            return std::nullopt;
        }
        auto typeName = readString(*typeIt, label, "type");
        if (!typeName)
            return std::nullopt;
        const auto type = parsePartType(*typeName);
        if (!type) {
            std::string known;
            for (const PartSpec &s : allPartSpecs())
                known += (known.empty() ? "" : ", ") + std::string(s.typeName);
            error(label, "type",
                  "unknown part type " + inQuotes(*typeName) + " (known: " + known + ")");
            return std::nullopt;
        }
        part.type = *type;
        const PartSpec &spec = partSpec(*type);

        std::vector<std::string_view> allowed(spec.terminals.begin(), spec.terminals.end());
        for (const FieldSpec &f : spec.fields)
            allowed.push_back(f.name);
        if (spec.hasFrequencyLists) {
            allowed.push_back("poles_hz");
            allowed.push_back("zeros_hz");
        }
        checkKeys(j, {"id", "type", "series", "tolerance"}, label, "", allowed);

        for (std::string_view t : spec.terminals) {
            const std::string terminal(t);
            std::string node;
            if (auto it = j.find(terminal); it == j.end()) {
                error(label, terminal, "missing node (terminal " + terminal + " is not connected)");
            } else if (!it->is_string()) {
                error(label, terminal,
                      std::string("node must be a string, found ") + it->type_name()
                          + (it->is_number() ? " (write \"0\" for ground)" : ""));
            } else {
                node = it->get<std::string>();
            }
            part.nodes.push_back(node);
        }
        for (const FieldSpec &f : spec.fields) {
            const std::string name(f.name);
            if (auto it = j.find(name); it != j.end()) {
                if (auto v = readValue(*it, f.kind, label, name))
                    part.fields[name] = *v;
            }
        }
        if (spec.hasFrequencyLists) {
            if (auto it = j.find("poles_hz"); it != j.end())
                part.polesHz = readValueList(*it, ValueKind::Frequency, label, "poles_hz");
            if (auto it = j.find("zeros_hz"); it != j.end())
                part.zerosHz = readValueList(*it, ValueKind::Frequency, label, "zeros_hz");
        }
        if (auto it = j.find("series"); it != j.end()) {
            if (auto s = readString(*it, label, "series")) {
                part.series = parseESeries(*s);
                if (!part.series)
                    error(label, "series",
                          "unknown E-series " + inQuotes(*s)
                              + " (E3, E6, E12, E24, E48, E96 or E192)");
            }
        }
        if (auto it = j.find("tolerance"); it != j.end())
            part.tolerance = readValue(*it, ValueKind::Tolerance, label, "tolerance");
        return part;
    }

    void readSweep(const Json &j, Sweep &sweep)
    {
        if (!isObjectWithKeys(j, {"start", "stop", "points_per_decade"}, "", "sweep"))
            return;
        if (auto it = j.find("start"); it != j.end()) {
            if (auto v = readValue(*it, ValueKind::Frequency, "", "sweep.start"))
                sweep.start = *v;
        }
        if (auto it = j.find("stop"); it != j.end()) {
            if (auto v = readValue(*it, ValueKind::Frequency, "", "sweep.stop"))
                sweep.stop = *v;
        }
        if (auto it = j.find("points_per_decade"); it != j.end()) {
            if (!it->is_number_integer()) {
                typeError("", "sweep.points_per_decade", *it, "an integer");
            } else {
                const double n = it->get<double>();
                // out-of-range counts become 0 so that validation reports them once
                sweep.pointsPerDecade = n >= 1 && n <= 1e6 ? static_cast<int>(n) : 0;
            }
        }
    }

    // A number of kelvin, or a text: "300 K", "300K", "25 °C", "25 C", or a bare number.
    std::optional<Value> readTemperature(const Json &j)
    {
        if (j.is_number())
            return Value{j.get<double>(), {}};
        if (!j.is_string()) {
            typeError("", "temperature", j, "a number of kelvin or a text such as \"300 K\"");
            return std::nullopt;
        }
        const std::string text = j.get<std::string>();
        std::string_view number = text;
        double offset = 0.0;
        const auto strip = [&](std::string_view suffix) {
            if (number.size() < suffix.size() || !number.ends_with(suffix))
                return false;
            number.remove_suffix(suffix.size());
            return true;
        };
        if (strip("°C") || strip("C"))
            offset = 273.15;
        else
            strip("K");
        while (!number.empty() && number.back() == ' ')
            number.remove_suffix(1);
        Result<double> v = parseValue(number, ValueKind::Plain, ValueRange::Any);
        if (!v.ok() || number.empty()) {
            error("", "temperature",
                  inQuotes(text)
                      + " is not a temperature (write kelvin as 300 or \"300 K\", or \"25 °C\")");
            return std::nullopt;
        }
        return Value{*v + offset, text};
    }

    // [f1, f2]: two frequencies.
    std::optional<NoiseBand> readNoiseBand(const Json &j)
    {
        if (!isPair(j, "noise_band", "[low, high] pair of frequencies"))
            return std::nullopt;
        auto low = readValue(j[0], ValueKind::Frequency, "", "noise_band");
        auto high = readValue(j[1], ValueKind::Frequency, "", "noise_band");
        if (!low || !high)
            return std::nullopt;
        return NoiseBand{*low, *high};
    }

    void readSpecs(const Json &j, Specs &specs)
    {
        if (!isObjectWithKeys(
                j,
                {"gain", "bandwidth_min", "phase_margin_min_deg", "output_noise_max", "snr_min_db"},
                "", "specs"))
            return;
        if (auto it = j.find("gain"); it != j.end()) {
            if (isPair(*it, "specs.gain", "[min, max] pair of gains")) {
                // null leaves that side of the window open
                if (!(*it)[0].is_null())
                    specs.gainMin = readValue((*it)[0], ValueKind::Gain, "", "specs.gain");
                if (!(*it)[1].is_null())
                    specs.gainMax = readValue((*it)[1], ValueKind::Gain, "", "specs.gain");
            }
        }
        if (auto it = j.find("bandwidth_min"); it != j.end())
            specs.bandwidthMin = readValue(*it, ValueKind::Frequency, "", "specs.bandwidth_min");
        if (auto it = j.find("phase_margin_min_deg"); it != j.end()) {
            if (it->is_number())
                specs.phaseMarginMinDeg = it->get<double>();
            else
                typeError("", "specs.phase_margin_min_deg", *it, "a number of degrees");
        }
        if (auto it = j.find("output_noise_max"); it != j.end())
            specs.outputNoiseMax = readSignalValue(*it, "specs.output_noise_max");
        if (auto it = j.find("snr_min_db"); it != j.end()) {
            if (it->is_number())
                specs.snrMinDb = it->get<double>();
            else
                typeError("", "specs.snr_min_db", *it, "a number of decibels");
        }
    }

    static std::string trimmedUnit(std::string text)
    {
        text.pop_back(); // the 'V'
        while (!text.empty() && text.back() == ' ')
            text.pop_back();
        return text;
    }

    // A voltage or a current ("5u", "5uA", "2 mV"): the unit follows the design's source and
    // output, so either symbol is accepted and the text kept as written.
    std::optional<Value> readSignalValue(const Json &j, const std::string &field)
    {
        if (j.is_string()) {
            std::string text = j.get<std::string>();
            if (!text.empty() && text.back() == 'V') {
                Result<double> v = parseValue(trimmedUnit(text), ValueKind::Plain, ValueRange::Any);
                if (v.ok())
                    return Value{*v, text};
            }
        }
        return readValue(j, ValueKind::Current, "", field);
    }

    void readCandidates(const Json &j, const Design &d, std::vector<Candidate> &out)
    {
        if (!j.is_array()) {
            typeError("", "candidates", j, "a list of candidates");
            return;
        }
        if (j.size() > kMaxCandidates) {
            error("", "candidates",
                  "the design has " + std::to_string(j.size()) + " candidates; at most "
                      + std::to_string(kMaxCandidates) + " are allowed");
            return;
        }
        for (std::size_t i = 0; i < j.size(); ++i) {
            const Json &c = j[i];
            const std::string where = "candidates[" + std::to_string(i) + "]";
            if (!isObjectWithKeys(c, {"name", "values"}, "", where, "a candidate object"))
                continue;
            Candidate cand;
            if (auto it = c.find("name"); it == c.end())
                error("", where + ".name", "candidate has no name");
            else if (auto name = readString(*it, "", where + ".name"))
                cand.name = *name;
            const std::string label = inQuotes(cand.name.empty() ? where : cand.name);
            const auto values = c.find("values");
            if (values == c.end()) {
                error("", where + ".values", "candidate " + label + " has no values");
            } else if (!values->is_object()) {
                typeError("", where + ".values", *values, "an object of part id: value");
            } else {
                for (auto it = values->begin(); it != values->end(); ++it) {
                    const Part *p = d.findPart(it.key());
                    if (!p) {
                        error(it.key(), "candidates",
                              "candidate " + label + " names part " + inQuotes(it.key())
                                  + ", which does not exist");
                        continue;
                    }
                    const std::string_view primary = p->primaryField();
                    if (primary.empty()) {
                        error(it.key(), "candidates",
                              "candidate " + label + ": a "
                                  + std::string(partSpec(p->type).typeName)
                                  + " has no value a candidate can change");
                        continue;
                    }
                    const FieldSpec *f = findFieldSpec(p->type, primary);
                    const std::size_t before = m_diagnostics.size();
                    if (auto v = readValue(it.value(), f->kind, it.key(), std::string(primary)))
                        cand.values[it.key()] = *v;
                    for (std::size_t k = before; k < m_diagnostics.size(); ++k)
                        m_diagnostics[k].message
                            = "candidate " + label + ": " + m_diagnostics[k].message;
                }
            }
            out.push_back(std::move(cand));
        }
    }

    void readSketch(const Json &j, SketchLayout &sketch)
    {
        if (!isObjectWithKeys(j, {"parts", "wires", "grounds"}, "", "sketch"))
            return;
        if (auto parts = j.find("parts"); parts != j.end()) {
            if (!parts->is_object()) {
                typeError("", "sketch.parts", *parts, "an object of part id: placement");
            } else {
                for (auto it = parts->begin(); it != parts->end(); ++it) {
                    const std::string &id = it.key();
                    const Json &p = it.value();
                    if (!isObjectWithKeys(p, {"x", "y", "rotation", "mirror"}, id, "sketch",
                                          "a placement {x, y, rotation}"))
                        continue;
                    SketchPlacement placement;
                    for (auto [key, target] :
                         {std::pair{"x", &placement.x}, std::pair{"y", &placement.y}}) {
                        auto c = p.find(key);
                        if (c == p.end())
                            error(id, std::string("sketch.") + key, "placement has no coordinate");
                        else if (!c->is_number())
                            typeError(id, std::string("sketch.") + key, *c, "a number");
                        else
                            *target = c->get<double>();
                    }
                    if (auto r = p.find("rotation"); r != p.end()) {
                        if (!r->is_number_integer())
                            typeError(id, "sketch.rotation", *r, "an integer number of degrees");
                        else if (std::abs(r->get<double>()) > 3600)
                            error(id, "sketch.rotation", "rotation must be within +-3600 degrees");
                        else
                            placement.rotation = r->get<int>();
                    }
                    if (auto m = p.find("mirror"); m != p.end()) {
                        if (!m->is_boolean())
                            typeError(id, "sketch.mirror", *m, "true or false");
                        else
                            placement.mirror = m->get<bool>();
                    }
                    sketch.parts[id] = placement;
                }
            }
        }
        const bool wiresRead = readList(
            j, "wires", "sketch.wires", "a list of wires", [&](std::size_t i, const Json &w) {
                const std::string where = "sketch.wires[" + std::to_string(i) + "]";
                if (!isObjectWithKeys(w, {"points"}, "", where, "a wire {points}"))
                    return;
                SketchWire wire;
                auto pts = w.find("points");
                if (pts == w.end() || !pts->is_array()) {
                    error("", where + ".points", "expected a list of [x, y] points");
                    return;
                }
                for (const Json &pt : *pts) {
                    if (!isPoint(pt)) {
                        error("", where + ".points", "expected a list of [x, y] points");
                        break;
                    }
                    wire.points.emplace_back(pt[0].get<double>(), pt[1].get<double>());
                }
                sketch.wires.push_back(std::move(wire));
            });
        if (!wiresRead)
            return;
        readList(j, "grounds", "sketch.grounds", "a list of [x, y] points",
                 [&](std::size_t i, const Json &pt) {
                     if (!isPoint(pt)) {
                         error("", "sketch.grounds[" + std::to_string(i) + "]",
                               "expected an [x, y] point");
                         return;
                     }
                     sketch.grounds.push_back({pt[0].get<double>(), pt[1].get<double>()});
                 });
    }

    std::optional<Design> readDesign(const Json &root)
    {
        if (!root.is_object()) {
            typeError("", "", root, "a JSON object at the top level");
            return std::nullopt;
        }
        checkKeys(root,
                  {"schema", "title", "revision", "notes", "parts", "input", "output", "sweep",
                   "specs", "candidates", "sketch", "temperature", "noise_band", "settling_band",
                   "signal_level", "noise_spot_hz"},
                  "", "");
        if (auto it = root.find("schema"); it == root.end()) {
            error("", "schema",
                  "missing \"schema\": a design file starts with \"schema\": "
                      + inQuotes(kDesignSchema));
            return std::nullopt;
        } else if (auto s = readString(*it, "", "schema"); !s) {
            return std::nullopt;
        } else if (*s != kDesignSchema) {
            error("", "schema",
                  "unsupported schema " + inQuotes(*s) + " (expected " + inQuotes(kDesignSchema)
                      + ")");
            return std::nullopt;
        }

        Design d;
        if (auto it = root.find("title"); it != root.end())
            d.title = readString(*it, "", "title").value_or("");
        if (auto it = root.find("revision"); it != root.end())
            d.revision = readString(*it, "", "revision").value_or("");
        if (auto it = root.find("notes"); it != root.end())
            d.notes = readString(*it, "", "notes").value_or("");

        if (auto it = root.find("parts"); it == root.end()) {
            error("", "parts", "missing \"parts\" list");
        } else if (!it->is_array()) {
            typeError("", "parts", *it, "a list of parts");
        } else if (it->size() > kMaxParts) {
            error("", "parts",
                  "the design has " + std::to_string(it->size()) + " parts; at most "
                      + std::to_string(kMaxParts) + " are allowed");
            return std::nullopt;
        } else {
            d.parts.reserve(it->size());
            for (std::size_t i = 0; i < it->size(); ++i) {
                if (auto p = readPart((*it)[i], i))
                    d.parts.push_back(std::move(*p));
            }
        }

        if (auto it = root.find("input"); it == root.end())
            error("", "input", "missing \"input\": name the signal source");
        else
            d.input = readString(*it, "", "input").value_or("");
        if (auto it = root.find("output"); it == root.end()) {
            error("", "output", "missing \"output\": \"voltage\" or \"current\"");
        } else if (auto s = readString(*it, "", "output")) {
            if (*s == "voltage")
                d.output = OutputKind::Voltage;
            else if (*s == "current")
                d.output = OutputKind::Current;
            else
                error("", "output",
                      "output must be \"voltage\" or \"current\", not " + inQuotes(*s));
        }
        if (auto it = root.find("sweep"); it != root.end())
            readSweep(*it, d.sweep);
        if (auto it = root.find("temperature"); it != root.end())
            d.temperature = readTemperature(*it);
        if (auto it = root.find("settling_band"); it != root.end())
            d.settlingBand = readValue(*it, ValueKind::Tolerance, "", "settling_band");
        if (auto it = root.find("noise_band"); it != root.end())
            d.noiseBand = readNoiseBand(*it);
        if (auto it = root.find("signal_level"); it != root.end())
            d.signalLevel = readSignalValue(*it, "signal_level");
        if (auto it = root.find("noise_spot_hz"); it != root.end())
            d.noiseSpotHz = readValue(*it, ValueKind::Frequency, "", "noise_spot_hz");
        if (auto it = root.find("specs"); it != root.end())
            readSpecs(*it, d.specs);
        if (auto it = root.find("candidates"); it != root.end())
            readCandidates(*it, d, d.candidates);
        if (auto it = root.find("sketch"); it != root.end()) {
            d.sketch.emplace();
            readSketch(*it, *d.sketch);
        }
        return d;
    }
};

} // namespace

Result<Design> parseDesign(std::string_view text, std::string_view file)
{
    return parseDesign(text, DesignRules::Complete, file);
}

Result<Design> parseDesign(std::string_view text, DesignRules rules, std::string_view file)
{
    const std::string fileName(file);
    if (text.size() > kMaxDesignFileBytes)
        return tooLarge(fileName, text.size());
    Json root;
    if (Diagnostics problems = detail::parseJsonDocument(text, file, root); !problems.empty())
        return problems;

    Reader reader(file);
    std::optional<Design> design = reader.readDesign(root);
    if (reader.failed() || !design)
        return reader.take();
    if (Diagnostics problems = validateDesign(*design, rules, file); !problems.empty())
        return problems;
    return std::move(*design);
}

Result<Design> loadDesign(const std::string &path)
{
    return loadDesign(path, DesignRules::Complete);
}

Result<Design> loadDesign(const std::string &path, DesignRules rules)
{
    namespace fs = std::filesystem;
    std::error_code ec;
    const fs::file_status status = fs::status(path, ec);
    if (ec || !fs::exists(status))
        return Diagnostic{path, "", "",
                          "cannot open the file: "
                              + (ec ? ec.message() : std::string("no such file"))};
    if (fs::is_directory(status))
        return Diagnostic{path, "", "", "cannot open the file: it is a directory"};
    const std::uintmax_t size = fs::file_size(path, ec);
    if (!ec && size > kMaxDesignFileBytes)
        return tooLarge(path, size);
    std::ifstream in(path, std::ios::binary);
    if (!in)
        return Diagnostic{path, "", "", "cannot open the file for reading"};
    std::string text;
    // read at most one byte past the limit, in case the file grew after the size check
    text.resize(kMaxDesignFileBytes + 1);
    in.read(text.data(), static_cast<std::streamsize>(text.size()));
    if (in.bad())
        return Diagnostic{path, "", "", "error while reading the file"};
    text.resize(static_cast<std::size_t>(in.gcount()));
    return parseDesign(text, rules, path);
}

} // namespace loopsketch
