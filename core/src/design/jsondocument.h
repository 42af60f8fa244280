#pragma once

// The first passes of the design loader, below the schema: a byte-level check of the text
// (UTF-8, control characters outside strings) and a SAX pass that builds the DOM while it
// rejects malformed JSON, duplicate keys and deep nesting (nlohmann's own DOM builder would
// silently keep the last of two equal keys). Also how messages quote keys and ids.

#include "loopsketch/base/result.h"

#include <nlohmann/json.hpp>

#include <cstddef>
#include <string>
#include <string_view>

namespace loopsketch::detail {

using Json = nlohmann::ordered_json;

/// Deepest nesting of arrays and objects a design file may have.
inline constexpr std::size_t kMaxJsonNesting = 64;

/// `s` between double quotes, as messages quote a text.
std::string inQuotes(std::string_view s);

/// A key as messages show it: cut to 40 characters, control characters written as JSON
/// escapes (\u0000), so that a hostile key makes a short message and none reaches the
/// terminal.
std::string shownKey(std::string_view key);

/// A part id as messages show it: whole when it is within kMaxPartIdChars characters, else
/// its first 16; control characters escaped as in shownKey().
std::string shownId(std::string_view id);

/// Checks `text` (UTF-8, no control character outside a string, well-formed JSON, no
/// duplicate key, nesting within kMaxJsonNesting) and fills `root` with its DOM. Returns the
/// problems found, each naming `file` and, where known, the part and the field; empty when
/// `root` holds the document.
Diagnostics parseJsonDocument(std::string_view text, std::string_view file, Json &root);

} // namespace loopsketch::detail
