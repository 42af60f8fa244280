#pragma once

// Rows looked up by a key: the one way core and ui find a row of a fixed table (a part
// type's spec, a series' facts, a curve's style) and name the values of an enum, so that
// each table is written once, as data.

#include <array>
#include <cstddef>

namespace loopsketch {

/// The first row of `rows` whose member `key` equals `value`; nullptr when none does.
template<typename Rows, typename Row, typename Key>
constexpr const Row *findRow(const Rows &rows, Key Row::*key, const Key &value)
{
    for (const Row &row : rows) {
        if (row.*key == value)
            return &row;
    }
    return nullptr;
}

/// A value of an enum and its name.
template<typename Enum, typename Name = const char *> struct EnumName
{
    Enum value;
    Name name;
};

/// The name `names` gives `value`; `none` when it gives it none.
template<typename Enum, typename Name, std::size_t N>
constexpr Name nameOf(const std::array<EnumName<Enum, Name>, N> &names, Enum value, Name none)
{
    const EnumName<Enum, Name> *row = findRow(names, &EnumName<Enum, Name>::value, value);
    return row ? row->name : none;
}

} // namespace loopsketch
