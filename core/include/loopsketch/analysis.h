#pragma once

// The one result object of a recomputation: what the Readout, every panel, the review
// sheet and `loopsketch analyze --json` show. All numbers in SI base units; std::nullopt
// (JSON null) where a quantity does not exist.

#include "loopsketch/design.h"
#include "loopsketch/exactsolution.h"
#include "loopsketch/result.h"

#include <complex>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

inline constexpr std::string_view kAnalysisSchema = "loopsketch.analysis/1";

using OptionalNumber = std::optional<double>;
using Curve = std::vector<std::complex<double>>;

struct Analysis
{
    std::string title;
    std::string gainUnit; ///< "V/V", "V/A" ...
    std::vector<double> frequenciesHz;
    ExactSolution exact;
};

/// Runs every analysis of the design over its sweep. Fails with diagnostics when the
/// design is invalid or the circuit has no solution.
Result<Analysis> analyze(const Design &design, std::string_view file = {});

/// The `loopsketch.analysis/1` JSON text (two-space indent, trailing newline).
std::string analysisToJson(const Analysis &analysis);

/// A readable text summary for the terminal.
std::string analysisToText(const Analysis &analysis);

/// Sweep table as CSV: f_hz, then magnitude (dB) and phase (deg) columns per curve.
std::string sweepToCsv(const Analysis &analysis);

} // namespace loopsketch
