#pragma once

// The candidate comparison: the current design and each pinned candidate side by side, one
// column each, rows of part values, key numbers, noise and spec verdicts. Computed once here
// and drawn alike by the window's Candidates panel and the review sheet.
//
// A row's best value is marked only where a spec of the design says which way is better: the
// gain window (closest to its centre), bandwidth_min (wider), phase_margin_min_deg (larger),
// output_noise_max (lower output noise), snr_min_db (higher SNR, lower input-referred noise)
// and the count of specs met. Rows no spec speaks to (peaking, desensitivity, impedances,
// noise without a noise spec, worst-case gain) are shown unranked: "better" there depends on
// the application.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/design.h"

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

/// The worst-case DC gain of one column over the parts' tolerances (core's worstCase()).
struct ComparisonWorstCase
{
    bool hasTolerances = false; ///< some part with a primary field carries a tolerance
    OptionalNumber min, max; ///< gain units
    bool exhaustive = true; ///< every vertex, else sensitivity corners
    std::size_t corners = 0;
    std::string problem; ///< why there is no range, when worstCase() failed
};

/// What one column is made of.
struct ComparisonInput
{
    std::string name; ///< "current design" or the candidate's name
    const Candidate *candidate = nullptr; ///< nullptr for the current design
    const Analysis *analysis = nullptr; ///< nullptr when there is none (see `problem`)
    std::string problem; ///< why there is no analysis ("being analysed", a diagnostic ...)
    /// Absent while being computed; hasTolerances false when nothing is toleranced.
    std::optional<ComparisonWorstCase> worstCase;
};

enum class ComparisonRowKind {
    PartValue,
    Gain,
    GainError,
    Bandwidth,
    PhaseMargin,
    Peaking,
    Desensitivity,
    ZIn,
    ZOut,
    OutputNoise,
    InputNoise,
    Snr,
    WorstCaseGain,
    SpecGain,
    SpecBandwidth,
    SpecPhaseMargin,
    SpecOutputNoise,
    SpecSnr,
    SpecsMet,
};

enum class ComparisonVerdict { None, Pass, Fail };

struct ComparisonCell
{
    std::string text = "—"; ///< the value with its unit, "—" where there is none
    std::string note; ///< what the value is, or why there is none
    std::optional<double> score; ///< higher is better; set only in ranked rows
    ComparisonVerdict verdict = ComparisonVerdict::None;
    bool inherited = false; ///< a part value the candidate does not set (the design's own)
    bool best = false; ///< the row's best value
};

struct ComparisonRow
{
    ComparisonRowKind kind;
    std::string title; ///< "closed-loop gain", a part id for a part value
    /// What "best" means in this row (the spec that sets the direction); empty: not ranked.
    std::string best;
    std::vector<ComparisonCell> cells; ///< one per column
};

struct CandidateComparison
{
    std::vector<std::string> columns; ///< column names, in input order
    std::vector<ComparisonRow> rows;
    /// The row of `kind` (the first one for PartValue); nullptr when the table has none.
    const ComparisonRow *row(ComparisonRowKind kind) const;
};

/// Row titles, shared by every view of the comparison.
namespace comparisonrow {
inline constexpr const char *kGain = "closed-loop gain";
inline constexpr const char *kGainError = "gain error vs spec";
inline constexpr const char *kBandwidth = "bandwidth −3 dB";
inline constexpr const char *kPhaseMargin = "phase margin";
inline constexpr const char *kPeaking = "peaking";
inline constexpr const char *kDesensitivity = "desensitivity at DC";
inline constexpr const char *kZIn = "z_in at DC";
inline constexpr const char *kZOut = "z_out at DC";
inline constexpr const char *kOutputNoise = "output noise rms";
inline constexpr const char *kInputNoise = "input-referred noise rms";
inline constexpr const char *kSnr = "SNR (full-scale sine)";
inline constexpr const char *kWorstCase = "worst-case gain";
inline constexpr const char *kSpecsMet = "specs met";
} // namespace comparisonrow

/// The parts whose primary value differs from the design's own in some candidate, in the
/// design's part order.
std::vector<std::string> comparedParts(const Design &design);

/// The comparison of `columns` (the first is normally the current design) for `design`.
CandidateComparison compareCandidates(const Design &design,
                                      const std::vector<ComparisonInput> &columns);

} // namespace loopsketch
