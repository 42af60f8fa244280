#pragma once

// Candidates: named sets of part values pinned in a design (file key `candidates`). One
// rule, used by `loopsketch analyze --candidate`, the Candidates panel and the review sheet,
// writes a candidate into the design.

#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <string_view>

namespace loopsketch {

/// The candidate named `name`, or nullptr.
const Candidate *findCandidate(const Design &design, std::string_view name);

/// The design with the candidate's values on its parts' primary fields. Fails, naming the
/// candidate and the part, when a part no longer exists or has no primary value.
Result<Design> applyCandidate(Design design, const Candidate &candidate,
                              std::string_view file = {});

/// applyCandidate() by name; fails when there is no candidate of that name.
Result<Design> applyCandidate(Design design, std::string_view name, std::string_view file = {});

} // namespace loopsketch
