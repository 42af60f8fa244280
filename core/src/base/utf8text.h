#pragma once

// Counting and cutting UTF-8 text by code points, for the loader's and the validation's
// size limits and for quoting long ids and keys in messages.

#include <cstddef>
#include <string>
#include <string_view>

namespace loopsketch::detail {

/// Code points in `s` (continuation bytes not counted).
inline std::size_t utf8Length(std::string_view s)
{
    std::size_t n = 0;
    for (const char ch : s)
        n += (static_cast<unsigned char>(ch) & 0xC0) != 0x80;
    return n;
}

/// At most `chars` code points of `s`, with "…" when cut.
inline std::string utf8Prefix(std::string_view s, std::size_t chars)
{
    std::size_t n = 0;
    for (std::size_t i = 0; i < s.size(); ++i) {
        if ((static_cast<unsigned char>(s[i]) & 0xC0) != 0x80 && n++ == chars)
            return std::string(s.substr(0, i)) + "\u2026";
    }
    return std::string(s);
}

} // namespace loopsketch::detail
