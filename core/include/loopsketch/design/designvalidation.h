#pragma once

// validateDesign(): the rules every design obeys, whether it came from a file or the Sketch
// (core/README.md §6.5). Defined in designvalidation.cpp.

#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <string_view>

namespace loopsketch {

/// Checks a design in memory: the same rules the loader applies (ids, nodes, ground,
/// floating subnetworks, value ranges, exactly one gain block / source / load, sweep).
/// Empty when the design is valid. `file` is copied into each diagnostic.
Diagnostics validateDesign(const Design &design, std::string_view file = {});

/// Which rules a check applies.
enum class DesignRules {
    /// Everything an analysis needs (the default of the loader and of every analysis).
    Complete,
    /// A design being drawn: what a file must hold to mean something (ids, values, sweep,
    /// specs, candidates and the input naming existing parts, the layout), without the
    /// rules of a finished circuit (one gain block, source and load; ground; no dangling or
    /// floating node; no shorted part). The Sketch saves and opens drafts.
    Draft,
};

/// validateDesign() with a choice of rules.
Diagnostics validateDesign(const Design &design, DesignRules rules, std::string_view file = {});

} // namespace loopsketch
