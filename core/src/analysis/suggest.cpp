#include "loopsketch/analysis/suggest.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designvalidation.h"

#include "analysis/gainwindowsearch.h"
#include "detail/parallel.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <set>
#include <sstream>

namespace loopsketch {

namespace {

Diagnostic error(std::string_view file, std::string part, std::string field, std::string message)
{
    return Diagnostic{std::string(file), std::move(part), std::move(field), std::move(message)};
}

ValueKind kindOf(const Part &p)
{
    switch (p.type) {
    case PartType::Capacitor:
        return ValueKind::Capacitance;
    case PartType::Inductor:
        return ValueKind::Inductance;
    default:
        return ValueKind::Resistance;
    }
}

Result<std::vector<SuggestRange>> searchRanges(const Design &design, const SuggestOptions &o,
                                               std::string_view file)
{
    Diagnostics problems;
    std::vector<SuggestRange> out;
    std::set<std::string> seen;
    if (o.parts.empty())
        problems.push_back(error(file, {}, "parts", "suggest needs at least one part to search"));
    if (o.ranges.empty() && !(o.decades > 0 && o.decades <= 12))
        problems.push_back(
            error(file, {}, "decades", "the search range must be between 0 and 12 decades wide"));
    for (const std::string &id : o.parts) {
        const Part *p = design.findPart(id);
        if (!p) {
            problems.push_back(error(file, id, {}, "no part named \"" + id + "\" in the design"));
            continue;
        }
        if (!seen.insert(id).second) {
            problems.push_back(error(file, id, {}, "part " + id + " is listed twice"));
            continue;
        }
        const std::string field(p->primaryField());
        if (field.empty()) {
            problems.push_back(error(file, id, "value",
                                     "a " + std::string(partSpec(p->type).typeName)
                                         + " has no value to choose from a series"));
            continue;
        }
        const std::optional<ESeries> series = p->series ? p->series : o.series;
        if (!series) {
            problems.push_back(
                error(file, id, "series", "the part gives no series to search (set its series)"));
            continue;
        }
        SuggestRange r{id, field, *series, p->number(field), {}};
        double lo = 0, hi = 0;
        if (auto it = o.ranges.find(id); it != o.ranges.end()) {
            lo = it->second.first;
            hi = it->second.second;
        } else {
            const double half = std::pow(10.0, o.decades / 2.0);
            lo = r.current / half;
            hi = r.current * half;
        }
        if (lo > 0 && hi >= lo && std::isfinite(hi))
            r.values = valuesInRange(*series, lo, hi);
        if (r.values.empty()) {
            const ValueKind kind = kindOf(*p);
            problems.push_back(error(file, id, "series",
                                     "empty range: no " + toString(*series) + " value between "
                                         + formatValue(lo, kind) + " and "
                                         + formatValue(hi, kind)));
            continue;
        }
        out.push_back(std::move(r));
    }
    if (!problems.empty())
        return problems;
    return out;
}

bool roughlyLess(double a, double b)
{
    // objectives within 1e-9 relative or 1e-12 absolute are one value: round-off must not
    // order rows
    return a < b && !(std::abs(a - b) <= 1e-9 * std::max(std::abs(a), std::abs(b)) + 1e-12);
}

bool valuesBefore(const Suggestion &a, const Suggestion &b)
{
    for (std::size_t k = 0; k < a.values.size() && k < b.values.size(); ++k)
        if (a.values[k].second != b.values[k].second)
            return a.values[k].second < b.values[k].second;
    return false;
}

/// The tail of both orders: objective, then decades from the current values (each compared
/// up to round-off), then the values themselves.
bool objectiveThenValuesBefore(const Suggestion &a, const Suggestion &b)
{
    if (roughlyLess(a.objective, b.objective) || roughlyLess(b.objective, a.objective))
        return a.objective < b.objective;
    if (roughlyLess(a.decadesFromCurrent, b.decadesFromCurrent)
        || roughlyLess(b.decadesFromCurrent, a.decadesFromCurrent))
        return a.decadesFromCurrent < b.decadesFromCurrent;
    return valuesBefore(a, b);
}

/// The nominal order of the shortlist: specs met at nominal, objective, decades, values.
bool nominallyBefore(const Suggestion &a, const Suggestion &b, const Specs &specs)
{
    const int ma = a.specs.met(specs), mb = b.specs.met(specs);
    if (ma != mb)
        return ma > mb;
    return objectiveThenValuesBefore(a, b);
}

std::string unmetText(const Specs &specs, bool gain, bool bandwidth, bool margin)
{
    std::vector<std::string> never;
    if (!gain)
        never.push_back("the gain window [" + formatEngineering(specs.gainMin->si, 4) + ", "
                        + formatEngineering(specs.gainMax->si, 4) + "]");
    if (gain && specs.bandwidthMin && !bandwidth)
        never.push_back("the minimum bandwidth of "
                        + formatEngineering(specs.bandwidthMin->si, 3, "Hz"));
    if (gain && specs.phaseMarginMinDeg && !margin) {
        std::ostringstream os;
        os << "the minimum phase margin of " << *specs.phaseMarginMinDeg << " deg";
        never.push_back(os.str());
    }
    if (never.empty())
        return "no combination meets every spec at once; the best attempts are shown";
    std::string s = gain ? "no combination within the gain window meets " : "no combination meets ";
    for (std::size_t i = 0; i < never.size(); ++i)
        s += (i ? (i + 1 == never.size() ? " or " : ", ") : "") + never[i];
    return s + "; the best attempts are shown";
}

/// The worst case and yield of one row: worstCase() and monteCarlo() on the design with the
/// row's values; a row without any toleranced quantity takes its nominal verdict.
void addSpread(const Design &design, const SuggestOptions &o, Suggestion &s)
{
    Design d = design;
    for (const auto &[id, v] : s.values) {
        Part *p = d.findPart(id);
        p->fields[std::string(p->primaryField())] = Value{v, {}};
    }
    SpreadOptions spread;
    spread.trials = o.yieldTrials;
    spread.seed = o.seed;
    spread.threads = o.threads;
    spread.pointsPerDecade = o.pointsPerDecade;
    spread.cancel = o.cancel;
    if (auto quantities = spreadQuantities(d, spread); !quantities) {
        s.toleranced = false;
        s.worstSpecs = s.specs;
        s.yield = s.meetsSpecs ? 1.0 : 0.0;
    } else {
        auto worst = worstCase(d, spread);
        auto mc = monteCarlo(d, spread);
        if (worst && !worst->cancelled) {
            s.worstSpecs = worst->specsAtCorners;
            s.worstSpecs &= s.specs;
        } else {
            s.worstSpecs = SpecCheck{false, false, false, false, false, false, "no worst case"};
        }
        if (!mc) {
            s.yield = 0.0;
            s.yieldProblem = mc.diagnostics().empty() ? std::string("no Monte Carlo run")
                                                      : mc.diagnostics().front().message;
        } else if (mc->completed == 0) {
            s.yield = 0.0;
            s.yieldProblem = "cancelled before any trial";
        } else {
            s.yield = mc->yield;
        }
    }
    s.worstCasePass = s.worstSpecs.all();
    s.specsMetWorstCase = s.worstSpecs.met(design.specs);
}

/// SuggestResult::yieldNote of the ranked rows `rows`.
std::string yieldNoteOf(const std::vector<Suggestion> &rows, int trials)
{
    if (rows.empty()
        || std::any_of(rows.begin(), rows.end(), [](const Suggestion &s) { return s.yield > 0.0; }))
        return {};
    const auto missing = std::find_if(rows.begin(), rows.end(),
                                      [](const Suggestion &s) { return !s.yieldProblem.empty(); });
    if (missing != rows.end())
        return "no yield computed" + std::string(rows.size() > 1 ? " for any row" : "") + ": "
            + missing->yieldProblem + "; the rows are ranked by the worst case and the objective";
    return "yield 0 % on every row: no row meets every spec in any of its " + std::to_string(trials)
        + " Monte Carlo trials";
}

/// The row of combination `c` with `metrics`: values, gain error, objective and decades from
/// the current values (without the spec check).
Suggestion rowOf(const SuggestResult &r, std::size_t c, const TrialMetrics &metrics)
{
    Suggestion s;
    std::size_t left = c;
    for (const auto &range : r.ranges) {
        const double v = range.values[left % range.values.size()];
        s.values.emplace_back(range.part, v);
        s.decadesFromCurrent += std::abs(std::log10(v / range.current));
        left /= range.values.size();
    }
    s.metrics = metrics;
    if (s.metrics.gain && std::isfinite(r.targetGain) && r.targetGain != 0)
        s.gainErrorPct = (*s.metrics.gain - r.targetGain) / std::abs(r.targetGain) * 100.0;
    if (r.noiseObjective)
        s.objective = s.metrics.outputNoiseRms.value_or(HUGE_VAL);
    else
        s.objective = s.metrics.gain && r.targetGain != 0
            ? std::abs(*s.metrics.gain - r.targetGain) / std::abs(r.targetGain)
            : HUGE_VAL;
    if (!std::isfinite(s.decadesFromCurrent))
        s.decadesFromCurrent = HUGE_VAL;
    return s;
}

/// The rows whose worst case and yield are computed, of `rows` evaluated ones.
std::size_t shortlistSize(const SuggestOptions &o, std::size_t rows)
{
    const std::size_t best = static_cast<std::size_t>(o.best);
    return std::min(
        rows, o.shortlist > 0 ? std::max(best, static_cast<std::size_t>(o.shortlist)) : 4 * best);
}

/// The suggestions of the combinations `chosen` whose trial ran (`done` 1), with their
/// metrics; the first `inWindow` lie inside the gain window. Shortlists the best by nominal,
/// computes their worst case and yield, keeps the `best` best in `r.suggestions` and says in
/// `r.unmet` why no combination meets every spec.
void rankSuggestions(const Design &design, const SuggestOptions &o,
                     const std::vector<std::size_t> &chosen, std::size_t inWindow,
                     const std::vector<TrialMetrics> &metrics, const std::vector<char> &done,
                     SuggestResult &r)
{
    std::vector<Suggestion> all;
    bool anyBandwidth = false, anyMargin = false;
    for (std::size_t i = 0; i < chosen.size(); ++i) {
        if (done[i] != 1)
            continue;
        Suggestion s = rowOf(r, chosen[i], metrics[i]);
        s.specs = checkSpecs(design.specs, design.sweep, s.metrics);
        s.meetsSpecs = s.specs.all();
        if (i < inWindow) {
            anyBandwidth = anyBandwidth || s.specs.bandwidth;
            anyMargin = anyMargin || s.specs.phaseMargin;
        }
        r.targetsMet = r.targetsMet || s.meetsSpecs;
        all.push_back(std::move(s));
    }
    const bool anyGain = inWindow > 0;
    const std::size_t best = static_cast<std::size_t>(o.best);
    const std::size_t shortlist = shortlistSize(o, all.size());
    std::partial_sort(all.begin(), all.begin() + static_cast<std::ptrdiff_t>(shortlist), all.end(),
                      [&](const Suggestion &a, const Suggestion &b) {
                          return nominallyBefore(a, b, design.specs);
                      });
    all.resize(shortlist);
    for (Suggestion &s : all) {
        if (o.cancel && o.cancel->load())
            break;
        addSpread(design, o, s);
    }
    std::sort(all.begin(), all.end(), ranksBefore);
    all.resize(std::min(all.size(), best));
    r.shortlisted = shortlist;
    r.yieldTrials = o.yieldTrials;
    r.seed = o.seed;
    for (const Suggestion &s : all)
        r.worstCaseMet = r.worstCaseMet || s.worstCasePass;
    r.yieldNote = yieldNoteOf(all, o.yieldTrials);
    r.suggestions = std::move(all);
    if (!r.targetsMet)
        r.unmet = unmetText(design.specs, anyGain, anyBandwidth, anyMargin);
}

/// What suggestValues() needs before any work: a valid design with a gain window, sane
/// options and the ranges to search; every problem found.
Result<std::vector<SuggestRange>> checkRequest(const Design &design, const SuggestOptions &o,
                                               std::string_view file)
{
    if (auto problems = validateDesign(design, file); !problems.empty())
        return problems;
    Diagnostics problems;
    if (!design.specs.gainMin || !design.specs.gainMax)
        problems.push_back(error(file, {}, "specs",
                                 "suggest needs the specs' gain window (\"gain\": [min, max]) as "
                                 "its target"));
    if (o.best < 1)
        problems.push_back(error(file, {}, "best", "ask for at least one suggestion"));
    if (o.pointsPerDecade < 1 || o.pointsPerDecade > 1000)
        problems.push_back(
            error(file, {}, "points_per_decade", "points per decade must be between 1 and 1000"));
    if (o.yieldTrials < 1 || o.yieldTrials > kMaxTrials)
        problems.push_back(
            error(file, {}, "trials",
                  "yield trials must be between 1 and " + std::to_string(kMaxTrials)));
    auto ranges = searchRanges(design, o, file);
    if (!ranges)
        problems.insert(problems.end(), ranges.diagnostics().begin(), ranges.diagnostics().end());
    if (!problems.empty())
        return problems;
    return ranges;
}

/// The combinations of stage 2: `combinations[i]` with DC gain `gains[i]`, the first
/// `inWindow` inside the gain window.
struct ChosenRows
{
    const std::vector<std::size_t> &combinations;
    const std::vector<double> &gains;
    std::size_t inWindow;
    const std::vector<double> &grid;
};

/// Stage 2: the trial metrics of the chosen rows (`done[i]` 1, or 2 without a solution; 0 not
/// run). Without a noise spec the objective is the gain's distance from the window centre,
/// known from stage 1, so the rows inside the window run best objective first and stop once
/// the shortlist holds rows meeting every spec: every row not run ranks after those. That
/// holds while each trial's gain is stage 1's DC gain (the same solve, bit for bit); a row
/// where it is not makes every row run.
void evaluateRows(const Design &design, const SuggestOptions &o, const SuggestResult &r,
                  const ChosenRows &rows, std::vector<TrialMetrics> &metrics,
                  std::vector<char> &done)
{
    const std::size_t count = rows.combinations.size();
    const int workers = detail::workerCount(o.threads, count);
    struct Workspace
    {
        Design design;
        std::vector<double *> targets;
    };
    std::vector<Workspace> spaces; // reserved: each holds pointers into its own design
    spaces.reserve(static_cast<std::size_t>(workers));
    for (int w = 0; w < workers; ++w) {
        Workspace &s = spaces.emplace_back(Workspace{design, {}});
        for (const auto &range : r.ranges)
            s.targets.push_back(&s.design.findPart(range.part)->fields[range.field].si);
    }
    const auto runRows = [&](const std::vector<std::size_t> &which) {
        detail::runParallel(
            which.size(), workers,
            [&](std::size_t j, int w) {
                const std::size_t i = which[j];
                Workspace &s = spaces[static_cast<std::size_t>(w)];
                std::size_t rest = rows.combinations[i];
                for (std::size_t k = 0; k < r.ranges.size(); ++k) {
                    const auto &values = r.ranges[k].values;
                    *s.targets[k] = values[rest % values.size()];
                    rest /= values.size();
                }
                auto m = evaluateTrial(s.design, rows.grid);
                done[i] = m ? 1 : 2;
                if (m)
                    metrics[i] = *m;
            },
            {}, o.cancel);
    };
    std::vector<std::size_t> order(count);
    std::iota(order.begin(), order.end(), std::size_t{0});
    if (!o.prune || r.noiseObjective) {
        runRows(order);
        return;
    }
    // outside the window: always run (a handful)
    runRows(std::vector<std::size_t>(order.begin() + static_cast<std::ptrdiff_t>(rows.inWindow),
                                     order.end()));
    std::vector<Suggestion> keys;
    keys.reserve(rows.inWindow);
    for (std::size_t i = 0; i < rows.inWindow; ++i) {
        TrialMetrics m;
        m.gain = rows.gains[i];
        keys.push_back(rowOf(r, rows.combinations[i], m));
    }
    order.resize(rows.inWindow);
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
        return objectiveThenValuesBefore(keys[a], keys[b]);
    });
    const std::size_t wanted = shortlistSize(o, count);
    const int specs = specCount(design.specs);
    std::size_t next = 0, meetAll = 0, batch = std::max<std::size_t>(wanted, 4 * workers);
    bool sameGain = true;
    while (next < order.size() && !(o.cancel && o.cancel->load())) {
        const std::size_t end = std::min(order.size(), next + batch);
        runRows(std::vector<std::size_t>(order.begin() + static_cast<std::ptrdiff_t>(next),
                                         order.begin() + static_cast<std::ptrdiff_t>(end)));
        for (; next < end; ++next) {
            const std::size_t i = order[next];
            if (done[i] != 1)
                continue;
            // bit for bit: the order above is only the trials' order if the gains are equal
            sameGain = sameGain && metrics[i].gain && *metrics[i].gain == rows.gains[i];
            if (checkSpecs(design.specs, design.sweep, metrics[i]).met(design.specs) == specs)
                ++meetAll;
        }
        if (sameGain && meetAll >= wanted)
            break;
        batch *= 2;
    }
}

std::string overCapText()
{
    return "more than " + std::to_string(kMaxCombinations)
        + " combinations to evaluate: narrow the ranges or pick fewer parts";
}

const SuggestRange &largestRange(const std::vector<SuggestRange> &ranges)
{
    return *std::max_element(ranges.begin(), ranges.end(),
                             [](const SuggestRange &a, const SuggestRange &b) {
                                 return a.values.size() < b.values.size();
                             });
}

/// The plan of a checked request; `parts` receives the searched values. The cap counts the
/// DC gains the search computes, not the combinations it covers.
Result<SuggestPlan> planOf(const Design &design, const SuggestOptions &o,
                           const std::vector<SuggestRange> &ranges,
                           std::vector<detail::SearchedValue> &parts, std::string_view file)
{
    SuggestPlan plan;
    plan.combinations = 1;
    for (const auto &range : ranges) {
        if (static_cast<double>(plan.combinations) * static_cast<double>(range.values.size())
            > static_cast<double>(kMaxSearchedCombinations))
            return error(file, range.part, "series",
                         "more than " + std::to_string(kMaxSearchedCombinations)
                             + " combinations to search: narrow the ranges or pick fewer parts");
        plan.combinations *= range.values.size();
        parts.push_back({range.part, range.field, range.values});
    }
    plan.evaluations
        = detail::plannedEvaluations(design, parts, static_cast<std::size_t>(o.best), o.prune);
    if (plan.evaluations > kMaxCombinations)
        return error(file, largestRange(ranges).part, "series", overCapText());
    return plan;
}

} // namespace

Result<SuggestPlan> planSuggest(const Design &design, const SuggestOptions &o,
                                std::string_view file)
{
    auto ranges = checkRequest(design, o, file);
    if (!ranges)
        return ranges.diagnostics();
    std::vector<detail::SearchedValue> parts;
    return planOf(design, o, *ranges, parts, file);
}

bool ranksBefore(const Suggestion &a, const Suggestion &b)
{
    if (a.specsMetWorstCase != b.specsMetWorstCase)
        return a.specsMetWorstCase > b.specsMetWorstCase;
    if (a.yield != b.yield)
        return a.yield > b.yield;
    return objectiveThenValuesBefore(a, b);
}

Result<SuggestResult> suggestValues(const Design &design, const SuggestOptions &o,
                                    std::string_view file)
{
    auto ranges = checkRequest(design, o, file);
    if (!ranges)
        return ranges.diagnostics();
    SuggestResult r;
    r.ranges = std::move(ranges).value();
    r.noiseObjective = hasNoiseSpec(design.specs);
    // halves first: a window near the largest double must not overflow to infinity
    r.targetGain = design.specs.gainMin->si / 2.0 + design.specs.gainMax->si / 2.0;
    detail::GainWindowRequest request;
    auto plan = planOf(design, o, r.ranges, request.parts, file);
    if (!plan)
        return plan.diagnostics();
    r.combinations = plan->combinations;
    const std::size_t planned = plan->evaluations;
    const SuggestRange &largest = largestRange(r.ranges);
    const std::vector<double> grid = coarseGrid(design.sweep, o.pointsPerDecade);
    if (grid.size() < 2)
        return error(file, {}, "sweep", "the sweep has no frequency range to evaluate");
    const auto best = static_cast<std::size_t>(o.best);
    // Up front: the planned DC gains, then at least `best` full trials.
    const CircuitSize size = circuitSize(design);
    const double dcOps = dcGainOperations(size), trialOps = trialOperations(size, grid.size());
    const auto evaluations = static_cast<double>(std::max<std::size_t>(planned, 1));
    if (auto over = checkRepeatedBudget(
            design, file, std::max<std::size_t>(planned, 1),
            dcOps + trialOps * std::min(static_cast<double>(o.best), evaluations) / evaluations,
            "the search", "narrow the ranges or pick fewer parts, bringing the combinations",
            "parts");
        !over.empty())
        return over;

    // Stage 1: the combinations inside the gain window, and the best few by gain error outside
    // it: all the ranking can pick from.
    request.design = &design;
    request.lo = design.specs.gainMin->si;
    request.hi = design.specs.gainMax->si;
    request.target = r.targetGain;
    request.nearest = best;
    request.prune = o.prune;
    request.threads = o.threads;
    request.progress = o.progress;
    request.cancel = o.cancel;
    request.maxEvaluations = kMaxCombinations;
    detail::GainWindowResult window = detail::searchGainWindow(request);
    r.computed = window.computed;
    if (window.overCap)
        return error(file, largest.part, "series",
                     overCapText() + " (the gain is not monotone in the parts over the ranges)");
    r.evaluated = window.decided;
    r.failed = window.failed;
    std::vector<std::size_t> chosen;
    std::vector<double> gains;
    for (const auto *hits : {&window.inWindow, &window.nearest})
        for (const auto &hit : *hits) {
            chosen.push_back(hit.combination);
            gains.push_back(hit.gain);
        }
    const std::size_t inWindow = window.inWindow.size();
    // After pruning: the full trials that may run (fewer when the best rows are found early).
    if (auto over = checkRepeatedBudget(
            design, file, chosen.size(), trialOps,
            "evaluating the " + std::to_string(inWindow) + " combinations inside the gain window",
            "narrow the gain window or the ranges, bringing them", "specs.gain");
        !over.empty())
        return over;

    // Stage 2: every metric of the chosen combinations that the ranking can reach.
    std::vector<TrialMetrics> metrics(chosen.size());
    std::vector<char> done(chosen.size(), 0);
    evaluateRows(design, o, r, {chosen, gains, inWindow, grid}, metrics, done);

    rankSuggestions(design, o, chosen, inWindow, metrics, done, r);
    r.cancelled = r.evaluated < r.combinations;
    return r;
}

} // namespace loopsketch
