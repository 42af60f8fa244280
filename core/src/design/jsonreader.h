#pragma once

// The reporting half of reading a JSON document into a model: every problem becomes a
// Diagnostic naming the file, the part and the field, and reading goes on so that one pass
// reports them all. The design reader (designreader.cpp) builds on it; the messages
// ("expected a string, found number 3", "unknown key ...") are part of the file contract
// (core/README.md §5).

#include "design/jsondocument.h"

#include "loopsketch/base/result.h"

#include <cstddef>
#include <initializer_list>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch::detail {

class JsonReader
{
public:
    explicit JsonReader(std::string_view file) : m_file(file) { }

    /// The problems found so far, handed over.
    Diagnostics take() { return std::move(m_diagnostics); }
    bool failed() const { return !m_diagnostics.empty(); }

    void error(std::string part, std::string field, std::string message);
    /// "expected <expected>, found <j's type>" (with the value of a number or boolean).
    void typeError(const std::string &part, const std::string &field, const Json &j,
                   std::string_view expected);
    /// Reports the keys of `obj` not in `allowed` (nor `more`) in one message: the first
    /// kUnknownKeysNamed of them by name, then their count. `where` names the object for keys
    /// outside a part ("sweep", "specs" ...).
    void checkKeys(const Json &obj, std::initializer_list<std::string_view> allowed,
                   const std::string &part, const std::string &where,
                   const std::vector<std::string_view> &more = {});
    /// True when `j` is an object, its keys checked against `allowed`; false, with the type
    /// error ("expected <expected>, found ..."), when it is not.
    bool isObjectWithKeys(const Json &j, std::initializer_list<std::string_view> allowed,
                          const std::string &part, const std::string &where,
                          std::string_view expected = "an object");
    /// True when `j` is a list of two; false, with the error ("expected a <pair>, found ..."
    /// at `field`), when it is not.
    bool isPair(const Json &j, const std::string &field, std::string_view pair);
    std::optional<std::string> readString(const Json &j, const std::string &part,
                                          const std::string &field);

    /// Calls `read(i, element)` for each element of the list `j[key]` where there is one;
    /// false, with the type error ("expected <expected>" at `where`), when it is not a list.
    template<class Read>
    bool readList(const Json &j, const char *key, const std::string &where,
                  std::string_view expected, Read read)
    {
        const auto it = j.find(key);
        if (it == j.end())
            return true;
        if (!it->is_array()) {
            typeError("", where, *it, expected);
            return false;
        }
        for (std::size_t i = 0; i < it->size(); ++i)
            read(i, (*it)[i]);
        return true;
    }

    /// An [x, y] point: a list of two numbers.
    static bool isPoint(const Json &pt)
    {
        return pt.is_array() && pt.size() == 2 && pt[0].is_number() && pt[1].is_number();
    }

protected:
    std::string m_file;
    Diagnostics m_diagnostics; ///< the problems found, in the order found
};

} // namespace loopsketch::detail
