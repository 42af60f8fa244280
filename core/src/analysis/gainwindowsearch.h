#pragma once

// The first stage of suggestValues(): which combinations of the searched parts' series values
// put the DC gain inside the specs' gain window, and the few nearest outside it. Where the
// circuit's structure allows, the DC gain is not computed for every combination:
//
// - A capacitor is open and an inductor a short at DC whatever its value, so their values do
//   not enter the DC gain: it is computed once for all of them (and checked equal at the ends
//   of their ranges, else they are searched like any other part).
// - The DC gain is a bilinear function (a + b R) / (c + d R) of any one resistance R, all
//   else fixed (the bilinear theorem of network functions; Middlebrook's extra element
//   theorem is one form of it). Such a function is monotone on an interval without its pole,
//   and with the pole inside, its values at the interval's ends and any point between are
//   never in monotone order. So where the gain at the ends and the middle of a resistor's
//   series is strictly monotone, the window's ends are found by bisection over the series;
//   where it is not (or a circuit has no solution there), every value is computed.
//
// The result is what computing every combination gives (the same combinations, the same
// nearest ones), up to the round-off of gains within a few ulps of the window's ends.

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/design/design.h"

#include <atomic>
#include <cstddef>
#include <string>
#include <vector>

namespace loopsketch::detail {

/// One searched value: part id, field and its series values (ascending, SI).
struct SearchedValue
{
    std::string part;
    std::string field;
    std::vector<double> values;
};

struct GainWindowRequest
{
    const Design *design = nullptr;
    /// Combination c takes values[k][(c / stride_k) % size_k], stride_0 = 1 and stride_k the
    /// product of the sizes before k (the first part varies fastest).
    std::vector<SearchedValue> parts;
    double lo = 0, hi = 0; ///< the gain window, gain unit
    double target = 0; ///< the window centre: "nearest" is by |gain - target|
    std::size_t nearest = 0; ///< combinations outside the window to return
    bool prune = true; ///< false: compute the DC gain of every combination
    int threads = 0;
    ProgressCallback progress;
    const std::atomic<bool> *cancel = nullptr;
    /// The most DC gains to compute; the search stops (overCap) when it would need more.
    std::size_t maxEvaluations = 0;
};

struct GainWindowHit
{
    std::size_t combination = 0;
    double gain = 0; ///< DC gain, gain unit
};

struct GainWindowResult
{
    std::vector<GainWindowHit> inWindow; ///< every combination inside [lo, hi]
    /// Up to `nearest` outside the window: smallest |gain - target| first, then lower index.
    std::vector<GainWindowHit> nearest;
    std::size_t combinations = 0; ///< product of the range sizes
    /// Combinations whose place is known (computed or decided by the structure); fewer than
    /// `combinations` when cancelled or over the cap.
    std::size_t decided = 0;
    std::size_t computed = 0; ///< DC gains computed
    std::size_t failed = 0; ///< of those, without a circuit solution
    bool overCap = false; ///< stopped: more than maxEvaluations DC gains were needed
};

/// The DC gains a pruned search computes at least (every bisection succeeding; the window's
/// inside not counted): what the combination cap is first checked against.
std::size_t plannedEvaluations(const Design &design, const std::vector<SearchedValue> &parts,
                               std::size_t nearest, bool prune);

/// Runs the first stage (see the file comment).
GainWindowResult searchGainWindow(const GainWindowRequest &request);

} // namespace loopsketch::detail
