// The text checks and the SAX pass of the design loader (see jsondocument.h).

#include "design/jsondocument.h"

#include "loopsketch/base/limits.h"

#include "base/utf8text.h"

#include <cstdio>
#include <optional>
#include <unordered_set>
#include <utility>
#include <vector>

namespace loopsketch::detail {

namespace {

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
        if (m_frames.size() + 1 > kMaxJsonNesting) {
            Location at = location();
            // name only where the nesting starts, not the 64-level path
            if (const auto cut = at.field.find_first_of("[.", 1); cut != std::string::npos)
                at.field.resize(cut);
            m_diagnostics.push_back(
                {std::string(m_file), at.part, at.field,
                 "JSON nested deeper than " + std::to_string(kMaxJsonNesting) + " levels"});
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

} // namespace

std::string inQuotes(std::string_view s)
{
    return "\"" + std::string(s) + "\"";
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

Diagnostics parseJsonDocument(std::string_view text, std::string_view file, Json &root)
{
    const std::string fileName(file);
    if (auto bad = firstInvalidUtf8(text)) {
        const auto [line, column] = lineColumn(text, *bad);
        return {Diagnostic{fileName, "", "",
                           "invalid UTF-8 at byte offset " + std::to_string(*bad) + " (line "
                               + std::to_string(line) + ", column " + std::to_string(column)
                               + "): design files are UTF-8 text"}};
    }
    if (auto bad = firstControlOutsideString(text)) {
        const auto [line, column] = lineColumn(text, *bad);
        return {Diagnostic{fileName, "", "",
                           "control character " + controlName(text[*bad]) + " at byte offset "
                               + std::to_string(*bad) + " (line " + std::to_string(line)
                               + ", column " + std::to_string(column)
                               + "): design files are JSON text"}};
    }
    DomBuilder builder(text, file);
    const bool syntaxOk = Json::sax_parse(text.begin(), text.end(), &builder);
    if (!builder.diagnostics().empty())
        return builder.diagnostics();
    if (!syntaxOk)
        return {Diagnostic{fileName, "", "", "invalid JSON"}};
    root = builder.takeRoot();
    return {};
}

} // namespace loopsketch::detail
