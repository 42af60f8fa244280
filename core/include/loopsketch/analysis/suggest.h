#pragma once

// Suggest values: search the E-series values of a few parts for the combinations that best
// meet the design's specs (gain window, minimum bandwidth, minimum phase margin).

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/eseries.h"
#include "loopsketch/base/limits.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <atomic>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace loopsketch {

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
    ProgressCallback progress; ///< optional, from worker threads
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
    bool cancelled = false;
    /// False when no evaluated combination meets every spec: the suggestions are then the
    /// best attempts, and `unmet` says which target is out of reach ("no combination meets
    /// ...").
    bool targetsMet = false;
    std::string unmet;
    std::vector<Suggestion> suggestions; ///< best first
};

/// Evaluates every combination of the parts' series values in their ranges and ranks them:
/// combinations meeting every spec first, then by |gain error| against the centre of the
/// specs' gain window, then by larger phase margin. Fails, naming part and field, for unknown
/// parts, parts without a value, parts without a series, empty ranges, a design without a
/// gain window or more than kMaxCombinations combinations.
Result<SuggestResult> suggestValues(const Design &design, const SuggestOptions &options,
                                    std::string_view file = {});

/// JSON (schema loopsketch.suggest/1) and terminal text of a search.
std::string suggestToJson(const SuggestResult &result, const std::string &gainUnit);
std::string suggestToText(const SuggestResult &result, const std::string &gainUnit);

} // namespace loopsketch
