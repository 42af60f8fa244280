#pragma once

// `loopsketch export`: the review sheet (PDF), the sweep (CSV) and the plots (SVG, PNG), without a
// display. Built only with the GUI (LOOPSKETCH_HAVE_GUI).

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/scan.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <cstdint>
#include <iosfwd>
#include <string>
#include <vector>

namespace loopsketch::app {

struct ExportRequest
{
    std::string file; ///< the design file as given, shown in the title block
    std::string pdfOut;
    std::string csvOut; ///< empty: no CSV; "-": standard output
    std::string svgDir; ///< empty: no SVG
    std::string pngDir; ///< empty: no PNG
    bool letter = false; ///< US Letter instead of A4
    /// Monte Carlo trials of the sheet's spread section, run when the design has toleranced
    /// parts; 0 leaves the section out.
    int spreadTrials = kDefaultMonteCarloTrials;
    std::uint64_t spreadSeed = 1; ///< ui::kSheetSpreadSeed
    /// Scans and maps of the design (export --scan), each a figure on the sheet showing the
    /// phase margin.
    std::vector<ScanResult> scans;
};

/// The files `export --svg DIR` (svg) or `--png DIR` writes, for the output check before any
/// work: none when DIR does not exist yet (it is created, so nothing there can be clobbered);
/// a diagnostic when DIR exists and is not a directory.
Result<std::vector<std::string>> plotOutputPaths(const std::string &dir, bool svg);

/// Writes what `request` asks for; returns an exit code (0, or 2 with a message on `err`).
int runExport(const Design &design, const Analysis &analysis, const ExportRequest &request,
              std::ostream &err);

} // namespace loopsketch::app
