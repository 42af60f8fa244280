// Design files: loopsketch.design/1 text to Design and back.
//
// Parsing runs in three passes: a byte-level UTF-8 check, a SAX pass that rejects
// malformed JSON, duplicate keys and deep nesting (nlohmann's DOM would silently keep the
// last of two equal keys), then a walk over the DOM that checks every key and type.

#include "loopsketch/design/designfile.h"
#include "loopsketch/design/atomicfile.h"

#include "base/utf8text.h"

#include <nlohmann/json.hpp>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <optional>
#include <set>
#include <system_error>
#include <unordered_set>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

constexpr std::size_t kMaxNesting = 64;

std::string inQuotes(std::string_view s)
{
    return "\"" + std::string(s) + "\"";
}

// Offset of the first byte that is not part of a well-formed UTF-8 sequence (RFC 3629:
// no overlong forms, no surrogates, nothing above U+10FFFF).
std::optional<std::size_t> firstInvalidUtf8(std::string_view s)
{
    const auto *b = reinterpret_cast<const unsigned char *>(s.data());
    const std::size_t n = s.size();
    std::size_t i = 0;
    while (i < n) {
        const unsigned char c = b[i];
        if (c < 0x80) {
            ++i;
            continue;
        }
        std::size_t len = 0;
        unsigned char lo = 0x80, hi = 0xBF;
        if (c >= 0xC2 && c <= 0xDF) {
            len = 2;
        } else if (c >= 0xE0 && c <= 0xEF) {
            len = 3;
            if (c == 0xE0)
                lo = 0xA0;
            else if (c == 0xED)
                hi = 0x9F;
        } else if (c >= 0xF0 && c <= 0xF4) {
            len = 4;
            if (c == 0xF0)
                lo = 0x90;
            else if (c == 0xF4)
                hi = 0x8F;
        } else {
            return i;
        }
        if (i + len > n)
            return i;
        if (b[i + 1] < lo || b[i + 1] > hi)
            return i;
        for (std::size_t k = 2; k < len; ++k) {
            if (b[i + k] < 0x80 || b[i + k] > 0xBF)
                return i;
        }
        i += len;
    }
    return std::nullopt;
}

// Offset of the first control character (C0 other than tab, line feed and carriage return,
// or DEL) outside a JSON string. The JSON parser stops quietly at a NUL between values, so
// everything after it went unread; inside strings it rejects control characters itself and
// names the field.
std::optional<std::size_t> firstControlOutsideString(std::string_view s)
{
    bool inString = false, escaped = false;
    for (std::size_t i = 0; i < s.size(); ++i) {
        const auto c = static_cast<unsigned char>(s[i]);
        if (inString) {
            if (escaped)
                escaped = false;
            else if (c == '\\')
                escaped = true;
            else if (c == '"')
                inString = false;
            continue;
        }
        if (c == '"')
            inString = true;
        else if ((c < 0x20 && c != '\t' && c != '\n' && c != '\r') || c == 0x7F)
            return i;
    }
    return std::nullopt;
}

std::string controlName(char ch)
{
    static constexpr const char *kNames[32]
        = {"NUL", "SOH", "STX", "ETX", "EOT", "ENQ", "ACK", "BEL", "BS",  "TAB", "LF",
           "VT",  "FF",  "CR",  "SO",  "SI",  "DLE", "DC1", "DC2", "DC3", "DC4", "NAK",
           "SYN", "ETB", "CAN", "EM",  "SUB", "ESC", "FS",  "GS",  "RS",  "US"};
    const auto c = static_cast<unsigned char>(ch);
    char code[8];
    std::snprintf(code, sizeof code, "U+%04X", static_cast<unsigned>(c));
    return std::string(code) + " (" + (c < 32 ? kNames[c] : "DEL") + ")";
}

// Characters (code points) of valid UTF-8 text.
using detail::utf8Length;
using detail::utf8Prefix;

// A key or id as messages show it: long ones cut, so that a hostile 100,000-character key
// makes a short message, and control characters written as JSON escapes (\u0000), so that
// none reaches the terminal.
std::string escapedControls(std::string_view text)
{
    std::string out;
    for (const char ch : text) {
        const auto c = static_cast<unsigned char>(ch);
        if (c < 0x20 || c == 0x7F) {
            char esc[8];
            std::snprintf(esc, sizeof esc, "\\u%04X", static_cast<unsigned>(c));
            out += esc;
        } else {
            out += ch;
        }
    }
    return out;
}

std::string shownKey(std::string_view key)
{
    return escapedControls(utf8Prefix(key, 40));
}

std::string shownId(std::string_view id)
{
    return escapedControls(utf8Length(id) <= kMaxPartIdChars ? std::string(id)
                                                             : utf8Prefix(id, 16));
}

std::pair<std::size_t, std::size_t> lineColumn(std::string_view text, std::size_t offset)
{
    std::size_t line = 1, column = 1;
    for (std::size_t i = 0; i < offset && i < text.size(); ++i) {
        if (text[i] == '\n') {
            ++line;
            column = 1;
        } else {
            ++column;
        }
    }
    return {line, column};
}

// Where in the document a SAX event happens, as (part label, field path).
struct Location
{
    std::string part;
    std::string field;
};

// SAX pass: syntax, duplicate keys, nesting depth, and the DOM. nlohmann's own DOM builder
// inserts every key through ordered_map's linear search, so an object of n keys took
// O(n^2) time; here keys are appended directly (duplicates are caught by a hash set first).
class DomBuilder final : public nlohmann::json_sax<Json>
{
public:
    DomBuilder(std::string_view text, std::string_view file) : m_text(text), m_file(file) { }

    bool null() override { return scalar(Json(nullptr)); }
    bool boolean(bool v) override { return scalar(Json(v)); }
    bool number_integer(number_integer_t v) override { return scalar(Json(v)); }
    bool number_unsigned(number_unsigned_t v) override { return scalar(Json(v)); }
    bool number_float(number_float_t v, const string_t &) override { return scalar(Json(v)); }
    bool binary(binary_t &) override { return scalar(Json(nullptr)); }
    bool string(string_t &val) override
    {
        if (!m_frames.empty() && m_frames.back().object && m_frames.back().key == "id")
            m_frames.back().id = val;
        return scalar(Json(std::move(val)));
    }
    bool start_object(std::size_t) override { return push(true); }
    bool end_object() override { return pop(); }
    bool start_array(std::size_t) override { return push(false); }
    bool end_array() override { return pop(); }
    bool key(string_t &val) override
    {
        Frame &f = m_frames.back();
        f.key = val;
        if (!f.keys.insert(val).second) {
            const Location at = location();
            std::string where = at.field;
            if (const auto dot = where.rfind('.'); dot != std::string::npos)
                where = where.substr(0, dot);
            else
                where.clear();
            m_diagnostics.push_back({std::string(m_file), at.part, at.field,
                                     "duplicate key " + inQuotes(val)
                                         + (where.empty() ? std::string() : " in " + where)});
        }
        return true;
    }
    bool parse_error(std::size_t position, const std::string &,
                     const nlohmann::detail::exception &ex) override
    {
        std::string what = ex.what();
        if (const auto close = what.find("] "); close != std::string::npos)
            what = what.substr(close + 2);
        if (what.find("line ") == std::string::npos) {
            const auto [line, column] = lineColumn(m_text, position);
            what += " at line " + std::to_string(line) + ", column " + std::to_string(column);
        }
        const Location at = location();
        m_diagnostics.push_back({std::string(m_file), at.part, at.field, "invalid JSON: " + what});
        return false;
    }

    const Diagnostics &diagnostics() const { return m_diagnostics; }
    Json takeRoot() { return std::move(m_root); }

private:
    struct Frame
    {
        bool object = false;
        Json *value = nullptr; ///< the object or array being filled
        std::string key; ///< the key being read (objects)
        std::size_t index = 0; ///< the element being read (arrays)
        std::unordered_set<std::string> keys;
        std::string id; ///< value of an "id" key, to name parts in messages
    };

    // Places a finished or opened value where the document is now; returns it. Elements are
    // only ever appended to the innermost open container, so the pointers on the stack stay
    // valid.
    Json *place(Json &&v)
    {
        if (m_frames.empty()) {
            m_root = std::move(v);
            return &m_root;
        }
        Frame &f = m_frames.back();
        if (f.object) {
            auto &items
                = static_cast<Json::object_t::Container &>(f.value->get_ref<Json::object_t &>());
            items.emplace_back(f.key, std::move(v));
            return &items.back().second;
        }
        auto &items = f.value->get_ref<Json::array_t &>();
        items.push_back(std::move(v));
        return &items.back();
    }

    bool scalar(Json &&v)
    {
        place(std::move(v));
        advance();
        return true;
    }
    // a value has ended: the next location is the next array element or the next key
    void advance()
    {
        if (m_frames.empty())
            return;
        if (m_frames.back().object)
            m_frames.back().key.clear();
        else
            ++m_frames.back().index;
    }
    bool push(bool object)
    {
        if (m_frames.size() + 1 > kMaxNesting) {
            Location at = location();
            // name only where the nesting starts, not the 64-level path
            if (const auto cut = at.field.find_first_of("[.", 1); cut != std::string::npos)
                at.field.resize(cut);
            m_diagnostics.push_back(
                {std::string(m_file), at.part, at.field,
                 "JSON nested deeper than " + std::to_string(kMaxNesting) + " levels"});
            return false;
        }
        Json *v = place(object ? Json(Json::value_t::object) : Json(Json::value_t::array));
        m_frames.push_back({object, v, {}, 0, {}, {}});
        return true;
    }
    bool pop()
    {
        m_frames.pop_back();
        advance();
        return true;
    }

    Location location() const
    {
        Location at;
        std::size_t first = 0;
        // root object -> "parts" array -> part object: name the part, path inside it
        if (m_frames.size() >= 3 && m_frames[0].object && m_frames[0].key == "parts"
            && !m_frames[1].object && m_frames[2].object) {
            at.part = m_frames[2].id.empty() ? "#" + std::to_string(m_frames[1].index + 1)
                                             : shownId(m_frames[2].id);
            first = 2;
        }
        for (std::size_t i = first; i < m_frames.size(); ++i) {
            const Frame &f = m_frames[i];
            if (f.object) {
                if (f.key.empty())
                    break;
                at.field += (at.field.empty() ? "" : ".") + shownKey(f.key);
            } else {
                at.field += "[" + std::to_string(f.index) + "]";
            }
        }
        return at;
    }

    std::string_view m_text;
    std::string_view m_file;
    std::vector<Frame> m_frames;
    Json m_root;
    Diagnostics m_diagnostics;
};

// " in sweep", " at the top level", or nothing inside a part (the part is named already).
std::string placeOf(const std::string &part, const std::string &where)
{
    if (!where.empty())
        return " in " + where;
    return part.empty() ? " at the top level" : "";
}

// DOM pass: keys, types and values into a Design.
class Reader
{
public:
    explicit Reader(std::string_view file) : m_file(file) { }

    Diagnostics take() { return std::move(m_diagnostics); }
    bool failed() const { return !m_diagnostics.empty(); }

    void error(std::string part, std::string field, std::string message)
    {
        m_diagnostics.push_back({m_file, std::move(part), std::move(field), std::move(message)});
    }

    void typeError(const std::string &part, const std::string &field, const Json &j,
                   std::string_view expected)
    {
        std::string found = j.type_name();
        if (j.is_number() || j.is_boolean())
            found += " " + j.dump();
        error(part, field, "expected " + std::string(expected) + ", found " + found);
    }

    // Reports the keys of `obj` not in `allowed` in one message: the first kUnknownKeysNamed
    // of them by name, then their count. `where` names the object for keys outside a part
    // ("sweep", "specs" ...).
    void checkKeys(const Json &obj, std::initializer_list<std::string_view> allowed,
                   const std::string &part, const std::string &where,
                   const std::vector<std::string_view> &more = {})
    {
        std::size_t unknown = 0;
        std::string named;
        for (auto it = obj.begin(); it != obj.end(); ++it) {
            const std::string &k = it.key();
            bool known = false;
            for (std::string_view a : allowed)
                known = known || a == k;
            for (std::string_view a : more)
                known = known || a == k;
            if (known)
                continue;
            if (++unknown <= kUnknownKeysNamed)
                named += (named.empty() ? "" : ", ") + inQuotes(shownKey(k));
        }
        if (unknown == 1) {
            error(part, where, "unknown key " + named + placeOf(part, where));
        } else if (unknown > 1) {
            error(part, where,
                  std::to_string(unknown) + " unknown keys" + placeOf(part, where) + ": " + named
                      + (unknown > kUnknownKeysNamed
                             ? " and " + std::to_string(unknown - kUnknownKeysNamed) + " more"
                             : std::string()));
        }
    }

    std::optional<std::string> readString(const Json &j, const std::string &part,
                                          const std::string &field)
    {
        if (!j.is_string()) {
            typeError(part, field, j, "a string");
            return std::nullopt;
        }
        return j.get<std::string>();
    }

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
        if (!j.is_object()) {
            typeError("", "sweep", j, "an object");
            return;
        }
        checkKeys(j, {"start", "stop", "points_per_decade"}, "", "sweep");
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
        if (!j.is_array() || j.size() != 2) {
            error("", "noise_band",
                  std::string("expected a [low, high] pair of frequencies, found ")
                      + (j.is_array() ? "a list of " + std::to_string(j.size())
                                      : std::string(j.type_name())));
            return std::nullopt;
        }
        auto low = readValue(j[0], ValueKind::Frequency, "", "noise_band");
        auto high = readValue(j[1], ValueKind::Frequency, "", "noise_band");
        if (!low || !high)
            return std::nullopt;
        return NoiseBand{*low, *high};
    }

    void readSpecs(const Json &j, Specs &specs)
    {
        if (!j.is_object()) {
            typeError("", "specs", j, "an object");
            return;
        }
        checkKeys(j, {"gain", "bandwidth_min", "phase_margin_min_deg"}, "", "specs");
        if (auto it = j.find("gain"); it != j.end()) {
            if (!it->is_array() || it->size() != 2) {
                error("", "specs.gain",
                      std::string("expected a [min, max] pair of gains, found ")
                          + (it->is_array() ? "a list of " + std::to_string(it->size())
                                            : std::string(it->type_name())));
            } else {
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
            if (!c.is_object()) {
                typeError("", where, c, "a candidate object");
                continue;
            }
            checkKeys(c, {"name", "values"}, "", where);
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
        if (!j.is_object()) {
            typeError("", "sketch", j, "an object");
            return;
        }
        checkKeys(j, {"parts", "wires", "grounds"}, "", "sketch");
        if (auto parts = j.find("parts"); parts != j.end()) {
            if (!parts->is_object()) {
                typeError("", "sketch.parts", *parts, "an object of part id: placement");
            } else {
                for (auto it = parts->begin(); it != parts->end(); ++it) {
                    const std::string &id = it.key();
                    const Json &p = it.value();
                    if (!p.is_object()) {
                        typeError(id, "sketch", p, "a placement {x, y, rotation}");
                        continue;
                    }
                    checkKeys(p, {"x", "y", "rotation"}, id, "sketch");
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
                    sketch.parts[id] = placement;
                }
            }
        }
        if (auto wires = j.find("wires"); wires != j.end()) {
            if (!wires->is_array()) {
                typeError("", "sketch.wires", *wires, "a list of wires");
                return;
            }
            for (std::size_t i = 0; i < wires->size(); ++i) {
                const Json &w = (*wires)[i];
                const std::string where = "sketch.wires[" + std::to_string(i) + "]";
                if (!w.is_object()) {
                    typeError("", where, w, "a wire {points}");
                    continue;
                }
                checkKeys(w, {"points"}, "", where);
                SketchWire wire;
                auto pts = w.find("points");
                if (pts == w.end() || !pts->is_array()) {
                    error("", where + ".points", "expected a list of [x, y] points");
                    continue;
                }
                for (const Json &pt : *pts) {
                    if (!pt.is_array() || pt.size() != 2 || !pt[0].is_number()
                        || !pt[1].is_number()) {
                        error("", where + ".points", "expected a list of [x, y] points");
                        break;
                    }
                    wire.points.emplace_back(pt[0].get<double>(), pt[1].get<double>());
                }
                sketch.wires.push_back(std::move(wire));
            }
        }
        if (auto grounds = j.find("grounds"); grounds != j.end()) {
            if (!grounds->is_array()) {
                typeError("", "sketch.grounds", *grounds, "a list of [x, y] points");
                return;
            }
            for (std::size_t i = 0; i < grounds->size(); ++i) {
                const Json &pt = (*grounds)[i];
                if (!pt.is_array() || pt.size() != 2 || !pt[0].is_number() || !pt[1].is_number()) {
                    error("", "sketch.grounds[" + std::to_string(i) + "]",
                          "expected an [x, y] point");
                    continue;
                }
                sketch.grounds.push_back({pt[0].get<double>(), pt[1].get<double>()});
            }
        }
    }

    std::optional<Design> readDesign(const Json &root)
    {
        if (!root.is_object()) {
            typeError("", "", root, "a JSON object at the top level");
            return std::nullopt;
        }
        checkKeys(root,
                  {"schema", "title", "revision", "notes", "parts", "input", "output", "sweep",
                   "specs", "candidates", "sketch", "temperature", "noise_band", "settling_band"},
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

private:
    std::string m_file;
    Diagnostics m_diagnostics;
};

// ---- writing ----

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

Result<Design> parseDesign(std::string_view text, std::string_view file)
{
    return parseDesign(text, DesignRules::Complete, file);
}

Result<Design> parseDesign(std::string_view text, DesignRules rules, std::string_view file)
{
    const std::string fileName(file);
    if (text.size() > kMaxDesignFileBytes) {
        return Diagnostic{fileName, "", "",
                          "the file is " + std::to_string(text.size())
                              + " bytes; design files are limited to "
                              + std::to_string(kMaxDesignFileBytes) + " bytes (16 MiB)"};
    }
    if (auto bad = firstInvalidUtf8(text)) {
        const auto [line, column] = lineColumn(text, *bad);
        return Diagnostic{fileName, "", "",
                          "invalid UTF-8 at byte offset " + std::to_string(*bad) + " (line "
                              + std::to_string(line) + ", column " + std::to_string(column)
                              + "): design files are UTF-8 text"};
    }
    if (auto bad = firstControlOutsideString(text)) {
        const auto [line, column] = lineColumn(text, *bad);
        return Diagnostic{fileName, "", "",
                          "control character " + controlName(text[*bad]) + " at byte offset "
                              + std::to_string(*bad) + " (line " + std::to_string(line)
                              + ", column " + std::to_string(column)
                              + "): design files are JSON text"};
    }
    DomBuilder builder(text, file);
    const bool syntaxOk = Json::sax_parse(text.begin(), text.end(), &builder);
    if (!builder.diagnostics().empty())
        return builder.diagnostics();
    if (!syntaxOk)
        return Diagnostic{fileName, "", "", "invalid JSON"};
    const Json root = builder.takeRoot();

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
    if (!ec && size > kMaxDesignFileBytes) {
        return Diagnostic{path, "", "",
                          "the file is " + std::to_string(size)
                              + " bytes; design files are limited to "
                              + std::to_string(kMaxDesignFileBytes) + " bytes (16 MiB)"};
    }
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

    std::vector<std::string> specs;
    if (d.specs.gainMin || d.specs.gainMax) {
        specs.push_back("\"gain\": [" + (d.specs.gainMin ? jsonValue(*d.specs.gainMin) : "null")
                        + ", " + (d.specs.gainMax ? jsonValue(*d.specs.gainMax) : "null") + "]");
    }
    if (d.specs.bandwidthMin)
        specs.push_back("\"bandwidth_min\": " + jsonValue(*d.specs.bandwidthMin));
    if (d.specs.phaseMarginMinDeg)
        specs.push_back("\"phase_margin_min_deg\": " + jsonNumber(*d.specs.phaseMarginMinDeg));
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
                    + jsonNumber(p.y) + ", \"rotation\": " + std::to_string(p.rotation) + "}"
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
