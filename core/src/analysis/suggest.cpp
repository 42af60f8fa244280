#include "loopsketch/analysis/suggest.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designvalidation.h"

#include "base/jsonnumber.h"
#include "detail/parallel.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <set>
#include <sstream>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

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
    r.noiseObjective = hasNoiseSpec(design.specs);
    for (std::size_t i = 0; i < chosen.size(); ++i) {
        if (done[i] != 1)
            continue;
        Suggestion s;
        std::size_t left = chosen[i];
        for (const auto &range : r.ranges) {
            const double v = range.values[left % range.values.size()];
            s.values.emplace_back(range.part, v);
            s.decadesFromCurrent += std::abs(std::log10(v / range.current));
            left /= range.values.size();
        }
        s.metrics = metrics[i];
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
    const std::size_t shortlist = std::min(
        all.size(),
        o.shortlist > 0 ? std::max(best, static_cast<std::size_t>(o.shortlist)) : 4 * best);
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

} // namespace

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
    // halves first: a window near the largest double must not overflow to infinity
    r.targetGain = design.specs.gainMin->si / 2.0 + design.specs.gainMax->si / 2.0;
    r.combinations = 1;
    for (const auto &range : r.ranges) {
        r.combinations *= range.values.size();
        if (r.combinations > kMaxCombinations)
            return error(file, range.part, "series",
                         "more than " + std::to_string(kMaxCombinations)
                             + " combinations to search: narrow the ranges or pick fewer parts");
    }
    const std::vector<double> grid = coarseGrid(design.sweep, o.pointsPerDecade);
    if (grid.size() < 2)
        return error(file, {}, "sweep", "the sweep has no frequency range to evaluate");
    // Up front: the DC gain of every combination, then at least `best` full trials.
    const CircuitSize size = circuitSize(design);
    const double dcOps = dcGainOperations(size), trialOps = trialOperations(size, grid.size());
    const auto combinations = static_cast<double>(r.combinations);
    if (auto over = checkRepeatedBudget(
            design, file, r.combinations,
            dcOps + trialOps * std::min(static_cast<double>(o.best), combinations) / combinations,
            "the search", "narrow the ranges or pick fewer parts, bringing the combinations",
            "parts");
        !over.empty())
        return over;

    const int workers = detail::workerCount(o.threads, r.combinations);
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
    const auto setValues = [&](Workspace &s, std::size_t c) {
        std::size_t rest = c;
        for (std::size_t k = 0; k < r.ranges.size(); ++k) {
            const auto &values = r.ranges[k].values;
            *s.targets[k] = values[rest % values.size()];
            rest /= values.size();
        }
    };
    // Stage 1: the DC gain of every combination. Only those inside the gain window can meet
    // every spec; with the best few by gain error they are all the ranking can pick from.
    std::vector<double> gains(r.combinations, std::nan(""));
    std::vector<char> state(r.combinations, 0); // 0 not run, 1 ok, 2 no solution
    detail::runParallel(
        r.combinations, workers,
        [&](std::size_t c, int w) {
            Workspace &s = spaces[static_cast<std::size_t>(w)];
            setValues(s, c);
            auto g = evaluateDcGain(s.design);
            state[c] = g && std::isfinite(*g) ? 1 : 2;
            if (state[c] == 1)
                gains[c] = *g;
        },
        o.progress, o.cancel);
    const double lo = design.specs.gainMin->si, hi = design.specs.gainMax->si;
    const auto gainError = [&](std::size_t c) {
        return std::abs(gains[c] - r.targetGain);
    };
    std::vector<std::size_t> chosen, rest;
    for (std::size_t c = 0; c < r.combinations; ++c) {
        if (state[c] == 0)
            continue;
        ++r.evaluated;
        if (state[c] == 2)
            ++r.failed;
        else if (gains[c] >= lo && gains[c] <= hi)
            chosen.push_back(c);
        else
            rest.push_back(c);
    }
    const std::size_t extra = std::min(rest.size(), static_cast<std::size_t>(o.best));
    std::partial_sort(rest.begin(), rest.begin() + static_cast<std::ptrdiff_t>(extra), rest.end(),
                      [&](std::size_t a, std::size_t b) {
                          return gainError(a) != gainError(b) ? gainError(a) < gainError(b) : a < b;
                      });
    const std::size_t inWindow = chosen.size();
    chosen.insert(chosen.end(), rest.begin(), rest.begin() + static_cast<std::ptrdiff_t>(extra));
    // After pruning: the full trials that will actually run.
    if (auto over = checkRepeatedBudget(
            design, file, chosen.size(), trialOps,
            "evaluating the " + std::to_string(inWindow) + " combinations inside the gain window",
            "narrow the gain window or the ranges, bringing them", "specs.gain");
        !over.empty())
        return over;

    // Stage 2: every metric of the chosen combinations.
    std::vector<TrialMetrics> metrics(chosen.size());
    std::vector<char> done(chosen.size(), 0);
    detail::runParallel(
        chosen.size(), workers,
        [&](std::size_t i, int w) {
            Workspace &s = spaces[static_cast<std::size_t>(w)];
            setValues(s, chosen[i]);
            auto m = evaluateTrial(s.design, grid);
            done[i] = m ? 1 : 2;
            if (m)
                metrics[i] = *m;
        },
        {}, o.cancel);

    rankSuggestions(design, o, chosen, inWindow, metrics, done, r);
    r.cancelled = r.evaluated < r.combinations;
    return r;
}

namespace {

Json number(const OptionalNumber &v)
{
    return detail::jsonNumber(v);
}

} // namespace

constexpr const char *kRankingText
    = "specs met at the worst case over the tolerance box (more first), then Monte Carlo yield "
      "(higher first), then the objective (lower first), then decades from the current values "
      "(fewer first), then the values in the order of the parts (smaller first)";

std::string suggestToJson(const SuggestResult &r, const std::string &gainUnit)
{
    Json j;
    j["schema"] = "loopsketch.suggest/1";
    j["gain_unit"] = gainUnit;
    j["target_gain"] = number(r.targetGain);
    Json ranges = Json::array();
    for (const auto &range : r.ranges)
        ranges.push_back({{"part", range.part},
                          {"field", range.field},
                          {"series", toString(range.series)},
                          {"current", range.current},
                          {"low", range.values.front()},
                          {"high", range.values.back()},
                          {"count", range.values.size()}});
    j["ranges"] = ranges;
    j["combinations"] = r.combinations;
    j["evaluated"] = r.evaluated;
    j["failed"] = r.failed;
    j["cancelled"] = r.cancelled;
    j["targets_met"] = r.targetsMet;
    j["unmet"] = r.unmet.empty() ? Json(nullptr) : Json(r.unmet);
    j["worst_case_met"] = r.worstCaseMet;
    j["yield_note"] = r.yieldNote.empty() ? Json(nullptr) : Json(r.yieldNote);
    j["ranking"] = kRankingText;
    j["objective"] = r.noiseObjective ? "output_noise_rms" : "gain_distance_from_centre";
    j["spread"] = {{"shortlisted", r.shortlisted},
                   {"yield_trials", r.yieldTrials},
                   {"seed", r.seed},
                   {"distribution", "uniform"}};
    Json list = Json::array();
    for (const auto &s : r.suggestions) {
        Json values = Json::object();
        for (const auto &[id, v] : s.values)
            values[id] = v;
        list.push_back(
            {{"values", values},
             {"gain", number(s.metrics.gain)},
             {"gain_error_pct", number(s.gainErrorPct)},
             {"bandwidth_hz", number(s.metrics.bandwidthHz)},
             {"phase_margin_deg", number(s.metrics.phaseMarginDeg)},
             {"output_noise_rms", number(s.metrics.outputNoiseRms)},
             {"input_noise_rms", number(s.metrics.inputNoiseRms)},
             {"snr_db", number(s.metrics.snrDb)},
             {"meets_specs", s.meetsSpecs},
             {"meets",
              {{"gain", s.specs.gain},
               {"bandwidth", s.specs.bandwidth},
               {"phase_margin", s.specs.phaseMargin},
               {"output_noise", s.specs.outputNoise},
               {"snr", s.specs.snr}}},
             {"worst_case_pass", s.worstCasePass},
             {"specs_met_worst_case", s.specsMetWorstCase},
             {"yield", s.yieldProblem.empty() ? Json(s.yield) : Json(nullptr)},
             {"yield_problem", s.yieldProblem.empty() ? Json(nullptr) : Json(s.yieldProblem)},
             {"toleranced", s.toleranced},
             {"objective", number(s.objective)},
             {"decades_from_current", number(s.decadesFromCurrent)}});
    }
    j["suggestions"] = list;
    return j.dump(2) + "\n";
}

std::string suggestToText(const SuggestResult &r, const std::string &gainUnit)
{
    std::ostringstream os;
    os << "Searched";
    for (std::size_t k = 0; k < r.ranges.size(); ++k) {
        const auto &range = r.ranges[k];
        os << (k ? "; " : " ") << range.part << " " << toString(range.series) << " "
           << formatEngineering(range.values.front(), 3) << " .. "
           << formatEngineering(range.values.back(), 3) << " (" << range.values.size()
           << " values)";
    }
    os << "\n" << r.evaluated << " of " << r.combinations << " combinations evaluated";
    if (r.failed)
        os << ", " << r.failed << " without a circuit solution";
    os << "; target gain " << formatEngineering(r.targetGain, 4, gainUnit) << "\n";
    if (!r.targetsMet)
        os << r.unmet << "\n";
    os << "Ranked by " << kRankingText << "; objective: "
       << (r.noiseObjective ? "output noise rms" : "distance of the gain from the window centre")
       << "\nWorst case and yield of the best " << r.shortlisted << " by nominal: " << r.yieldTrials
       << " Monte Carlo trials each (uniform, seed " << r.seed << ")\n";
    if (r.targetsMet && !r.worstCaseMet)
        os << "No row meets every spec at the worst case over the tolerances\n";
    if (!r.yieldNote.empty())
        os << "Note: " << r.yieldNote << "\n";
    os << "\n";
    int rank = 1;
    for (const auto &s : r.suggestions) {
        os << rank++ << ".";
        for (const auto &[id, v] : s.values)
            os << " " << id << " = " << formatEngineering(v, 3);
        os << "\n   gain "
           << (s.metrics.gain ? formatEngineering(*s.metrics.gain, 5, gainUnit) : "none");
        if (s.gainErrorPct) {
            os << " (" << formatFixed(*s.gainErrorPct, 3) << " %)";
        }
        os << ", bandwidth "
           << (s.metrics.bandwidthHz ? formatEngineering(*s.metrics.bandwidthHz, 3, "Hz")
                                     : "above the sweep");
        os << ", phase margin ";
        if (s.metrics.phaseMarginDeg) {
            os << formatFixed(*s.metrics.phaseMarginDeg, 1) << " deg";
        } else {
            os << "none";
        }
        if (s.metrics.outputNoiseRms)
            os << ", output noise "
               << formatEngineering(*s.metrics.outputNoiseRms, 4,
                                    gainUnit.substr(0, gainUnit.find('/')))
               << " rms";
        if (s.metrics.snrDb)
            os << ", SNR " << formatFixed(*s.metrics.snrDb, 1) << " dB";
        os << (s.worstCasePass    ? ", meets the specs at the worst case"
                   : s.meetsSpecs ? ", meets the specs at nominal only"
                                  : ", misses a spec");
        if (!s.yieldProblem.empty())
            os << "; yield not computed\n";
        else
            os << "; yield " << formatFixed(100.0 * s.yield, 1) << " %"
               << (s.toleranced ? "" : " (no tolerances)") << "\n";
    }
    return os.str();
}

} // namespace loopsketch
