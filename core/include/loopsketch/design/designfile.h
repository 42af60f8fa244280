#pragma once

// Reading and writing design files (schema loopsketch.design/1, JSON, ".loopsketch").

#include "loopsketch/base/limits.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"
#include "loopsketch/design/designvalidation.h"

#include <cstddef>
#include <string>
#include <string_view>

namespace loopsketch {

/// Parses design JSON text. `file` names the source in diagnostics. Rejects unknown keys,
/// duplicate keys, invalid UTF-8, truncated JSON, text over kMaxDesignFileBytes, more than
/// kMaxParts parts, and everything validateDesign() rejects.
Result<Design> parseDesign(std::string_view text, std::string_view file = {});
/// parseDesign() with a choice of rules: DesignRules::Draft also accepts a design still
/// being drawn (what the Sketch saves), everything else as strict.
Result<Design> parseDesign(std::string_view text, DesignRules rules, std::string_view file = {});

/// Reads and parses a file from disk.
Result<Design> loadDesign(const std::string &path);
/// loadDesign() with a choice of rules (see parseDesign()).
Result<Design> loadDesign(const std::string &path, DesignRules rules);

/// The canonical JSON text of a design: fixed key order, two-space indent, trailing newline.
/// parseDesign(serializeDesign(d)) == d, and a canonical file saves back byte-identical.
std::string serializeDesign(const Design &design);

/// Writes atomically: the text goes to a temporary file in the same directory, is flushed,
/// then renamed over `path`. On failure nothing at `path` changes and no temp file remains.
Result<bool> saveDesign(const Design &design, const std::string &path);

} // namespace loopsketch
