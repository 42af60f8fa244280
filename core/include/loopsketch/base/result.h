#pragma once

#include <cassert>
#include <optional>
#include <string>
#include <utility>
#include <variant>
#include <vector>

namespace loopsketch {

/// One problem found in user data. Every field that is known is filled so that a
/// message can say exactly where the problem is ("demo.loopsketch: part RF, field value: ...").
struct Diagnostic
{
    std::string file; ///< file name as given by the user, empty for in-memory data
    std::string part; ///< part id, empty when the problem is not tied to a part
    std::string field; ///< JSON key or field name, empty when not tied to a field
    std::string message; ///< what is wrong, in words a designer understands

    /// "file: part P, field F: message" with the empty pieces left out.
    std::string toString() const;
};

using Diagnostics = std::vector<Diagnostic>;

/// Joins diagnostics one per line.
std::string toString(const Diagnostics &diagnostics);

/// Either a value or a non-empty list of diagnostics. C++20 has no std::expected; this is
/// the one small stand-in used everywhere in core.
template<typename T> class Result
{
public:
    Result(T value) : m_value(std::move(value)) { }
    Result(Diagnostic diagnostic) : m_diagnostics{std::move(diagnostic)} { }
    Result(Diagnostics diagnostics) : m_diagnostics(std::move(diagnostics))
    {
        assert(!m_diagnostics.empty() && "a failed Result needs at least one diagnostic");
    }

    bool ok() const { return m_value.has_value(); }
    explicit operator bool() const { return ok(); }

    const T &value() const &
    {
        assert(ok() && "value() on a failed Result");
        return *m_value;
    }
    T &value() &
    {
        assert(ok() && "value() on a failed Result");
        return *m_value;
    }
    T &&value() &&
    {
        assert(ok() && "value() on a failed Result");
        return std::move(*m_value);
    }
    const T &operator*() const & { return value(); }
    const T *operator->() const { return &value(); }

    const Diagnostics &diagnostics() const { return m_diagnostics; }
    std::string errorText() const { return toString(m_diagnostics); }

private:
    std::optional<T> m_value;
    Diagnostics m_diagnostics;
};

} // namespace loopsketch
