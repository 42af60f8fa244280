#pragma once

// The review sheet's candidates: each candidate analysed once per sheet (with noise and its
// worst-case gain), drawn as core's comparison table (report/candidatecomparison.h) and as
// overlays on the plots.

#include "sheet/reviewsheet.h"
#include "sheet/sheetwriter.h"

#include "loopsketch/report/candidatecomparison.h"

#include <optional>
#include <vector>

namespace loopsketch::ui::sheet {

/// One column of the comparison: the current design or a candidate applied to it.
struct SheetCandidate
{
    std::string name;
    const Candidate *candidate = nullptr; ///< into the sheet's design; nullptr: the design
    std::optional<Analysis> analysis;
    std::string problem; ///< why there is no analysis
    ComparisonWorstCase worst;
};

/// The current design's column (its analysis is the sheet's) and every candidate's, analysed
/// with core's applyCandidate() rule. `design` must outlive the result.
std::vector<SheetCandidate> sheetCandidates(const Design &design, const Analysis &current);

/// The candidates' overlays for the plots (columns after the first, with an analysis).
std::vector<SheetOverlay> sheetOverlays(const std::vector<SheetCandidate> &columns);

/// The current design and every candidate side by side, four columns to a table; nothing when
/// the design has no candidates.
void candidatesSection(SheetWriter &w, const Design &d, const std::vector<SheetCandidate> &columns);

} // namespace loopsketch::ui::sheet
