#pragma once

// Scans of one part's value or numeric field over its E-series, and maps over two parts:
// the design analysed at every value (or pair) through analyze(), the same path as the
// Readout, with the metrics a designer compares, the spec check and the stability verdict.
// Feeds `loopsketch scan`, the Scan and Map panels and the review sheet.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/eseries.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <atomic>
#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch {

/// What to scan, as the user names it: `ID`, `ID.FIELD`, optionally `:FROM:TO`.
struct ScanTarget
{
    std::string part; ///< part id
    std::string field; ///< a numeric field; empty: the part's primary field (its value)
    std::optional<std::string> from, to; ///< range ends as text in the field's units
};

/// Parses "CF", "RL.c", "CF:1p:10p", "U1.gbw:1M:10M". Fails with a diagnostic on field
/// `option` (e.g. "--part") when the text is malformed; the part and field are checked
/// against a design by resolveScanAxis().
Result<ScanTarget> parseScanTarget(std::string_view text, std::string_view option = "--part");

/// One resolved scan axis: the field of one part and the values it takes.
struct ScanAxis
{
    std::string part;
    std::string field; ///< the field scanned ("value", "r", "c", "gbw" ...)
    bool primary = true; ///< the part's primary field: the column is named `ID`, else `ID.FIELD`
    ESeries series = ESeries::E24;
    double from = 0, to = 0; ///< the range, SI (from < to; signed like the value)
    double current = 0; ///< the design's value of the field, SI
    std::vector<double> values; ///< the series values in the range, ascending, SI
    std::string unit; ///< the field's unit symbol ("F", "Ω", "Hz")

    /// The column name: `ID` for the primary field, `ID.FIELD` otherwise.
    std::string name() const { return primary ? part : part + "." + field; }
};

/// Resolves a target against a design: the part must exist, the field must be one of its
/// numeric fields (a primary field when none is named), the range defaults to two decades
/// around the current value (a tenth to ten times), and the values are the members of
/// `series` (or the part's own series, or E24) in the range. Fails naming the file, part and
/// field.
Result<ScanAxis> resolveScanAxis(const Design &design, const ScanTarget &target,
                                 std::optional<ESeries> series, std::string_view file = {});

/// The metrics of one scanned design. nullopt where a metric does not exist for that
/// design (an unstable loop has no bandwidth, no step, no noise rms), or when the design
/// could not be analysed at all (`problem` then says why).
struct ScanMetrics
{
    OptionalNumber gain; ///< closed-loop DC gain (exact), gain unit
    OptionalNumber bandwidthHz;
    OptionalNumber phaseMarginDeg;
    OptionalNumber gainMarginDb;
    OptionalNumber peakingDb;
    OptionalNumber overshootPct;
    OptionalNumber settlingTimeS;
    OptionalNumber outputNoiseRms; ///< V (A for a current output)
    OptionalNumber zIn, zOut; ///< at DC, ohm (may be +infinity)
    std::optional<bool> stable; ///< the stability verdict; nullopt when not analysed
    std::optional<bool> specsPass; ///< checkSpecs().all(); nullopt when not analysed
    std::string problem; ///< why the design could not be analysed; empty otherwise
};

/// The metrics of one analysis of `design` (its specs decide specsPass).
ScanMetrics scanMetricsOf(const Analysis &analysis, const Design &design);

/// One metric of ScanMetrics, named by its member (&ScanMetrics::phaseMarginDeg): what a run
/// is asked to compute (ScanOptions::metrics).
using ScanMetric = OptionalNumber ScanMetrics::*;
/// Every ScanMetric, in the order of the CSV columns.
const std::vector<ScanMetric> &allScanMetrics();

/// One row: the value of each axis (SI, in axis order) and the metrics there.
struct ScanRow
{
    std::vector<double> values;
    ScanMetrics metrics;
    bool done = false; ///< computed (false for rows a cancel left out)
};

/// A scan (one axis) or a map (two axes). Rows run over the first axis' values, and for a
/// map over the second's within each of them: row i * n2 + j holds values[i], values[j].
struct ScanResult
{
    std::vector<ScanAxis> axes;
    std::vector<ScanRow> rows;
    std::string gainUnit;
    std::size_t completed = 0; ///< rows computed (all of them unless cancelled)
    bool cancelled = false;
    /// The metrics computed (ScanOptions::metrics): empty for every one. The others are
    /// absent from every row; the stability verdict and the spec check are always there.
    std::vector<ScanMetric> metrics;
    /// True when the rows carry `metric` (absent in a row then means it does not exist).
    bool computed(ScanMetric metric) const;
};

struct ScanOptions
{
    int threads = 0; ///< 0: all hardware threads
    /// Rows done so far and the total; from worker threads, one call at a time.
    std::function<void(std::size_t done, std::size_t total)> progress;
    const std::atomic<bool> *cancel = nullptr;
    /// The metrics the caller reads; empty: every one (the command line's CSV). A map that
    /// shows one metric asks for that one alone, and each row skips the work of the others
    /// (the noise, the step response, the peaking ...) unless the design's specs read it:
    /// stable and specsPass are always computed. Each metric computed is the number a run
    /// of every metric gives, bit for bit.
    std::vector<ScanMetric> metrics;
};

/// `design` with `value` (SI) written into the axis' field, its text in engineering
/// notation: the one rule by which a scan, the CLI and a click in a panel set a value.
Design withScanValue(Design design, const ScanAxis &axis, double value);

/// Analyses `design` at every value of one axis or every pair of two, through analyze()
/// (sensitivities, impedance and two-port curves left out: no metric here reads them), on
/// background threads. Fails before
/// any work when an axis does not resolve, there are no axes or more than two, the two name
/// the same field, or the run is over the work budget.
Result<ScanResult> runScan(const Design &design, const std::vector<ScanAxis> &axes,
                           const ScanOptions &options = {}, std::string_view file = {});

/// The scan as CSV: one column per axis (its name, SI values), then gain, bandwidth_hz,
/// phase_margin_deg, gain_margin_db, peaking_db, overshoot_pct, settling_time_s,
/// output_noise_rms, z_in, z_out, stable (1/0), specs_pass (1/0); empty cells where a
/// metric does not exist.
std::string scanToCsv(const ScanResult &scan);

} // namespace loopsketch
