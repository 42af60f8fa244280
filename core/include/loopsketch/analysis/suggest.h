#pragma once

// Suggest values: search the E-series values of a few parts for the combinations that best
// meet the design's specs (gain window, minimum bandwidth, minimum phase margin).

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/eseries.h"
#include "loopsketch/base/limits.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <atomic>
#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace loopsketch {

/// The most combinations one search may cover (the DC gains it computes are capped at
/// kMaxCombinations, see suggestValues()).
inline constexpr std::size_t kMaxSearchedCombinations = 1'000'000'000'000;

struct SuggestOptions
{
    std::vector<std::string> parts; ///< part ids whose primary value is searched
    /// Width of each part's search range in decades, centred (in log) on its current value:
    /// 2 searches from a tenth to ten times the current value.
    double decades = 2.0;
    /// Explicit search range (SI, lo <= hi) per part id, instead of `decades`.
    std::map<std::string, std::pair<double, double>> ranges;
    /// Series for parts that give none in the file; a part's own `series` wins.
    std::optional<ESeries> series;
    int best = 5; ///< suggestions returned, >= 1
    int pointsPerDecade = 10; ///< coarse grid for the metrics, 1 .. 1000
    int threads = 0; ///< 0: std::thread::hardware_concurrency()
    /// Monte Carlo trials of each shortlisted row's yield (uniform over the tolerances),
    /// 1 .. kMaxTrials, and their seed.
    int yieldTrials = 200;
    std::uint64_t seed = 1;
    /// Rows whose worst case and yield are computed, best by nominal first; 0: four times
    /// `best`.
    int shortlist = 0;
    /// True: skip the DC gains and trials that cannot change the ranked rows (capacitors and
    /// inductors do not enter the DC gain, the gain is bisected over a resistor's series where
    /// it is monotone, trials stop once the shortlist is certain); the rows are the same as
    /// with false, which computes every combination (kept for tests and comparison).
    bool prune = true;
    ProgressCallback progress; ///< optional, from worker threads (lines of the search done)
    const std::atomic<bool> *cancel = nullptr; ///< optional; true stops the search early
};

/// The values searched for one part.
struct SuggestRange
{
    std::string part;
    std::string field; ///< "value" or "r"
    ESeries series = ESeries::E24;
    double current = 0; ///< SI
    std::vector<double> values; ///< ascending, SI
};

struct Suggestion
{
    std::vector<std::pair<std::string, double>> values; ///< part id -> SI, in the order asked
    TrialMetrics metrics;
    OptionalNumber gainErrorPct; ///< (gain - window centre) / |centre| * 100
    SpecCheck specs; ///< which specs this combination meets
    bool meetsSpecs = false;
    /// Which specs hold at every corner of the tolerance box (worstCase() on this row).
    SpecCheck worstSpecs;
    bool worstCasePass = false; ///< every spec at every corner
    int specsMetWorstCase = 0; ///< specs held at every corner
    /// Share of the Monte Carlo trials meeting every spec, 0 .. 1; 0 for ranking when the
    /// yield could not be computed, and then `yieldProblem` says why.
    double yield = 0;
    /// Why the row has no yield (the Monte Carlo run refused by the work budget, cancelled
    /// before any trial ...); empty when `yield` was computed.
    std::string yieldProblem;
    /// False: the row has no toleranced quantity, so worst case and yield are its nominal
    /// verdict.
    bool toleranced = true;
    /// The ranking's objective: output noise rms (V or A) with a noise spec, else |gain -
    /// window centre| / |centre| (a fraction).
    double objective = 0;
    double decadesFromCurrent = 0; ///< sum over the parts of |log10(value / current)|
};

struct SuggestResult
{
    std::vector<SuggestRange> ranges;
    double targetGain = 0; ///< the gain window's centre
    std::size_t combinations = 0; ///< product of the range sizes
    /// Combinations whose DC gain was computed (fewer when cancelled). Every metric is then
    /// computed for those inside the gain window and the best `best` outside it, which are
    /// all the ranking can pick from.
    std::size_t evaluated = 0;
    std::size_t failed = 0; ///< combinations whose circuit had no solution
    /// DC gains actually computed: `evaluated` counts the combinations placed, computed or
    /// decided by the circuit's structure (SuggestOptions::prune).
    std::size_t computed = 0;
    bool cancelled = false;
    /// False when no evaluated combination meets every spec: the suggestions are then the
    /// best attempts, and `unmet` says which target is out of reach ("no combination meets
    /// ...").
    bool targetsMet = false;
    std::string unmet;
    bool worstCaseMet = false; ///< some ranked row meets every spec at the worst case
    std::size_t shortlisted = 0; ///< rows whose worst case and yield were computed
    int yieldTrials = 0; ///< Monte Carlo trials per row
    std::uint64_t seed = 0;
    bool noiseObjective = false; ///< the objective is the output noise rms
    /// Said when every ranked row has a yield of 0, so the rows are not read as comparable
    /// figures: why no yield was computed (the first row's problem), or that no trial of any
    /// row met every spec. Empty otherwise.
    std::string yieldNote;
    std::vector<Suggestion> suggestions; ///< best first
};

/// Searches every combination of the parts' series values in their ranges: the DC gain
/// places each inside or outside the gain window (computed, or decided by the circuit's
/// structure: core/src/analysis/gainwindowsearch.h), the trial metrics of those inside and of
/// the `best` nearest outside rank them by nominal (specs met, objective, decades from the
/// current values), and the best by nominal form a shortlist whose worst case over the
/// tolerance box and Monte Carlo yield are computed. The shortlist is ranked by: specs met at
/// the worst case (more first), yield (higher first), the objective (output noise rms with a
/// noise spec, else |gain - window centre| / |centre|; lower first, values within 1e-9
/// relative or 1e-12 absolute count as equal), decades from the current values (fewer
/// first), and last the values themselves in the order of the parts (smaller first), so the
/// order is never arbitrary. Fails, naming part and field, for unknown parts, parts without a
/// value, parts without a series, empty ranges, a design without a gain window, more than
/// kMaxSearchedCombinations combinations or more than kMaxCombinations DC gains to compute
/// (checked on the plan before the search and again as it runs).
Result<SuggestResult> suggestValues(const Design &design, const SuggestOptions &options,
                                    std::string_view file = {});

/// What a search would cover, known before it runs.
struct SuggestPlan
{
    std::size_t combinations = 0; ///< product of the range sizes
    /// DC gains the search computes at least (every bisection succeeding); more where the
    /// gain is not monotone in a part. Checked against kMaxCombinations.
    std::size_t evaluations = 0;
};

/// The plan of suggestValues(design, options): fails as suggestValues() does before any work
/// (bad request, too many combinations or DC gains to compute), naming part and field.
Result<SuggestPlan> planSuggest(const Design &design, const SuggestOptions &options,
                                std::string_view file = {});

/// JSON (schema loopsketch.suggest/1) and terminal text of a search.
/// The ranking's order: true when `a` ranks before `b` (see suggestValues()).
bool ranksBefore(const Suggestion &a, const Suggestion &b);

std::string suggestToJson(const SuggestResult &result, const std::string &gainUnit);
std::string suggestToText(const SuggestResult &result, const std::string &gainUnit);

} // namespace loopsketch
