#pragma once

// The command line's arguments: commands, options and their values, checked before any file
// is read. Kept apart from running the commands so that a fuzzer can drive it alone.

#include "loopsketch/analysis/scan.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/suggest.h"

#include <cstdint>
#include <iosfwd>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch::app {

struct CliOptions
{
    std::string command;
    std::string file;
    bool json = false;
    std::string candidate;
    std::string textOut = "-"; ///< --out: the printed text or JSON; "-" is standard output
    std::string csvOut;
    std::string pdfOut;
    std::string svgDir;
    std::string pngDir;
    bool letter = false;
    int spreadTrials = kDefaultMonteCarloTrials; ///< export: Monte Carlo trials on the sheet, 0 =
                                                 ///< no spread section
    std::uint64_t spreadSeed = 1;
    SpreadOptions spread;
    SuggestOptions suggest;
    std::vector<ScanTarget> scanTargets; ///< scan: --part, one or two
    std::optional<ESeries> scanSeries; ///< scan: --series
    /// export: --scan, each one part (a scan) or two (a map) for the review sheet
    std::vector<std::vector<ScanTarget>> exportScans;
};

/// What the arguments ask for.
struct ParsedArguments
{
    enum class Action {
        Run, ///< run `options`
        Exit, ///< done (--help, --version) or refused: exit with `exitCode`
        Gui, ///< no command: open the GUI (no arguments, or a single design file)
    };
    Action action = Action::Exit;
    int exitCode = 0; ///< 0 or 2 (bad input, the message written to err)
    CliOptions options;
};

/// Parses `args` (without the program name). Writes --help and --version to `out` and a
/// refusal ("loopsketch: ...") to `err`. Reads no file.
ParsedArguments parseArguments(const std::vector<std::string> &args, std::ostream &out,
                               std::ostream &err);

} // namespace loopsketch::app
