#include "design/jsonreader.h"

#include "loopsketch/base/limits.h"

namespace loopsketch::detail {

namespace {

// " in sweep", " at the top level", or nothing inside a part (the part is named already).
std::string placeOf(const std::string &part, const std::string &where)
{
    if (!where.empty())
        return " in " + where;
    return part.empty() ? " at the top level" : "";
}

} // namespace

void JsonReader::error(std::string part, std::string field, std::string message)
{
    m_diagnostics.push_back({m_file, std::move(part), std::move(field), std::move(message)});
}

void JsonReader::typeError(const std::string &part, const std::string &field, const Json &j,
                           std::string_view expected)
{
    std::string found = j.type_name();
    if (j.is_number() || j.is_boolean())
        found += " " + j.dump();
    error(part, field, "expected " + std::string(expected) + ", found " + found);
}

void JsonReader::checkKeys(const Json &obj, std::initializer_list<std::string_view> allowed,
                           const std::string &part, const std::string &where,
                           const std::vector<std::string_view> &more)
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

bool JsonReader::isObjectWithKeys(const Json &j, std::initializer_list<std::string_view> allowed,
                                  const std::string &part, const std::string &where,
                                  std::string_view expected)
{
    if (!j.is_object()) {
        typeError(part, where, j, expected);
        return false;
    }
    checkKeys(j, allowed, part, where);
    return true;
}

bool JsonReader::isPair(const Json &j, const std::string &field, std::string_view pair)
{
    if (j.is_array() && j.size() == 2)
        return true;
    error("", field,
          "expected a " + std::string(pair) + ", found "
              + (j.is_array() ? "a list of " + std::to_string(j.size())
                              : std::string(j.type_name())));
    return false;
}

std::optional<std::string> JsonReader::readString(const Json &j, const std::string &part,
                                                  const std::string &field)
{
    if (!j.is_string()) {
        typeError(part, field, j, "a string");
        return std::nullopt;
    }
    return j.get<std::string>();
}

} // namespace loopsketch::detail
