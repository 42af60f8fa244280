#pragma once

// The review sheet's scans and maps: each scan or map made for the design as it is, drawn
// as a figure of one metric with its parameters stated.

#include "sheet/reviewsheet.h"
#include "sheet/sheetwriter.h"

#include <vector>

namespace loopsketch::ui::sheet {

/// The paragraph stating a scan's or map's parameters: each axis' part, field, series,
/// range, number of values and the design's value; the metric shown; how many values (or
/// pairs) meet every spec and how many are unstable.
QString scanParameters(const ScanResult &scan, int metric);

/// One heading, parameter paragraph and figure per scan or map; nothing without scans.
void scansSection(SheetWriter &w, const std::vector<SheetScan> &scans);

} // namespace loopsketch::ui::sheet
