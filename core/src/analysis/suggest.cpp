#include "loopsketch/analysis/suggest.h"

#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/base/value.h"

#include "base/jsonnumber.h"

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

/// Ordering key: meets every spec, then |gain error|, then larger phase margin.
bool better(const Suggestion &a, const Suggestion &b)
{
    if (a.meetsSpecs != b.meetsSpecs)
        return a.meetsSpecs;
    const double ea = a.gainErrorPct ? std::abs(*a.gainErrorPct) : HUGE_VAL;
    const double eb = b.gainErrorPct ? std::abs(*b.gainErrorPct) : HUGE_VAL;
    if (ea != eb)
        return ea < eb;
    const double pa = a.metrics.phaseMarginDeg.value_or(-HUGE_VAL);
    const double pb = b.metrics.phaseMarginDeg.value_or(-HUGE_VAL);
    return pa > pb;
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

} // namespace

Result<SuggestResult> suggestValues(const Design &design, const SuggestOptions &o,
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
    auto ranges = searchRanges(design, o, file);
    if (!ranges)
        problems.insert(problems.end(), ranges.diagnostics().begin(), ranges.diagnostics().end());
    if (!problems.empty())
        return problems;

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

    std::vector<Suggestion> all;
    bool anyBandwidth = false, anyMargin = false;
    for (std::size_t i = 0; i < chosen.size(); ++i) {
        if (done[i] != 1)
            continue;
        Suggestion s;
        std::size_t left = chosen[i];
        for (const auto &range : r.ranges) {
            s.values.emplace_back(range.part, range.values[left % range.values.size()]);
            left /= range.values.size();
        }
        s.metrics = metrics[i];
        if (s.metrics.gain && std::isfinite(r.targetGain) && r.targetGain != 0)
            s.gainErrorPct = (*s.metrics.gain - r.targetGain) / std::abs(r.targetGain) * 100.0;
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
    r.cancelled = r.evaluated < r.combinations;
    const std::size_t keep = std::min(all.size(), static_cast<std::size_t>(o.best));
    std::partial_sort(all.begin(), all.begin() + static_cast<std::ptrdiff_t>(keep), all.end(),
                      better);
    all.resize(keep);
    r.suggestions = std::move(all);
    if (!r.targetsMet)
        r.unmet = unmetText(design.specs, anyGain, anyBandwidth, anyMargin);
    return r;
}

namespace {

Json number(const OptionalNumber &v)
{
    return detail::jsonNumber(v);
}

} // namespace

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
    Json list = Json::array();
    for (const auto &s : r.suggestions) {
        Json values = Json::object();
        for (const auto &[id, v] : s.values)
            values[id] = v;
        list.push_back({{"values", values},
                        {"gain", number(s.metrics.gain)},
                        {"gain_error_pct", number(s.gainErrorPct)},
                        {"bandwidth_hz", number(s.metrics.bandwidthHz)},
                        {"phase_margin_deg", number(s.metrics.phaseMarginDeg)},
                        {"meets_specs", s.meetsSpecs},
                        {"meets",
                         {{"gain", s.specs.gain},
                          {"bandwidth", s.specs.bandwidth},
                          {"phase_margin", s.specs.phaseMargin}}}});
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
        os << (s.meetsSpecs ? ", meets the specs" : ", misses a spec") << "\n";
    }
    return os.str();
}

} // namespace loopsketch
