#include "loopsketch/analysis/suggest.h"

#include "loopsketch/base/value.h"

#include "base/jsonnumber.h"

#include <nlohmann/json.hpp>

#include <sstream>

// The JSON (schema loopsketch.suggest/1) and terminal text of a search.

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

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
