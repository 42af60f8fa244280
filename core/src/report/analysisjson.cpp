#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/report/noisenames.h"

#include "loopsketch/base/lookup.h"
#include "loopsketch/base/value.h"

#include "base/jsonnumber.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

// null where the quantity does not exist, the string "inf" where it is infinite (an open
// input), the number otherwise.
Json number(const OptionalNumber &v)
{
    return detail::jsonNumber(v);
}

Json topologyJson(const Analysis &a)
{
    if (!a.topology)
        return nullptr;
    const Topology &t = *a.topology;
    Json j;
    j["mixing"] = toString(t.mixing);
    j["sampling"] = toString(t.sampling);
    j["name"] = t.name();
    j["parameters"] = toString(t.parameters());
    j["gain_type"] = t.gainType();
    j["gain_unit"] = t.gainUnit();
    j["network"] = t.networkParts;
    j["port1"] = {t.port1Node, "0"};
    j["port2"] = {t.port2Node, "0"};
    return j;
}

Json twoPortJson(const Analysis &a)
{
    if (!a.twoPort)
        return nullptr;
    const TwoPortSummary &t = *a.twoPort;
    Json j;
    j["a"] = number(t.a);
    j["beta"] = number(t.beta);
    j["loop_gain"] = number(t.loopGain);
    j["closed_loop"] = number(t.closedLoop);
    j["gain"] = number(t.gain);
    j["z_in"] = number(t.zIn);
    j["z_out"] = number(t.zOut);
    j["error_pct"] = {{"gain", number(t.gainErrorPct)},
                      {"z_in", number(t.zInErrorPct)},
                      {"z_out", number(t.zOutErrorPct)}};
    j["loading"] = {{"input", number(t.inputLoading)},
                    {"output", number(t.outputLoading)},
                    {"input_db", number(t.inputLoadingDb)},
                    {"output_db", number(t.outputLoadingDb)}};
    return j;
}

const char *noiseKindName(NoiseSourceKind kind)
{
    static constexpr std::array<EnumName<NoiseSourceKind>, 4> kNames{
        {{NoiseSourceKind::Resistor, "resistor"},
         {NoiseSourceKind::VoltageNoise, "voltage_noise"},
         {NoiseSourceKind::CurrentNoise, "current_noise"},
         {NoiseSourceKind::Shot, "shot"}}};
    return nameOf(kNames, kind, "");
}

const char *noiseBandKindName(NoiseBandKind kind)
{
    static constexpr std::array<EnumName<NoiseBandKind>, 3> kNames{
        {{NoiseBandKind::Given, "noise_band"},
         {NoiseBandKind::Converged, "converged"},
         {NoiseBandKind::SweepStop, "sweep_stop"}}};
    return nameOf(kNames, kind, "");
}

constexpr const char *kBrickWallMethod
    = "input-referred density integrated from the sweep start to pi/2 times the closed-loop "
      "-3 dB bandwidth (single-pole equivalent noise bandwidth), times the gain at the sweep "
      "start";

constexpr const char *kLowFrequencyMethod
    = "output density integrated on the circuit model over 0.1 Hz to 10 Hz; peak-to-peak = "
      "6.6 x rms (Gaussian noise, exceeded 0.1 % of the time)";

Json noiseJson(const Analysis &a)
{
    if (!a.noise || a.noise->frequenciesHz.empty())
        return nullptr;
    const NoiseAnalysis &n = *a.noise;
    const auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
    Json j;
    j["temperature_k"] = number(n.temperatureK);
    j["output_unit"] = outUnit;
    j["input_unit"] = inUnit;
    j["band"] = {{"low_hz", number(n.bandLowHz)},
                 {"high_hz", number(n.bandHighHz)},
                 {"kind", noiseBandKindName(n.bandKind)},
                 {"method", n.bandMethod}};
    j["output_rms"] = number(n.outputRms);
    j["input_rms"] = number(n.inputRms);
    j["input_rms_gain_at_hz"] = number(n.inputGainHz);
    j["input_problem"] = n.inputProblem.empty() ? Json(nullptr) : Json(n.inputProblem);
    if (n.brickWall)
        j["brick_wall_equivalent"] = {{"high_hz", number(n.brickWall->highHz)},
                                      {"output_rms", number(n.brickWall->outputRms)},
                                      {"input_rms", number(n.brickWall->inputRms)},
                                      {"method", kBrickWallMethod}};
    else
        j["brick_wall_equivalent"] = nullptr;
    j["at_hz"] = number(n.frequenciesHz.front());
    j["output_density"] = number(n.outputDensity.front());
    j["input_density"] = number(n.inputDensity.front());
    j["noise_gain"] = number(n.noiseGain.front());
    j["spot"] = {{"at_hz", number(n.spot.atHz)},
                 {"output_density", number(n.spot.outputDensity)},
                 {"input_density", number(n.spot.inputDensity)},
                 {"noise_figure_db", number(n.spot.noiseFigureDb)}};
    if (n.lowFrequency)
        j["low_frequency"] = {{"low_hz", number(n.lowFrequency->lowHz)},
                              {"high_hz", number(n.lowFrequency->highHz)},
                              {"output_rms", number(n.lowFrequency->outputRms)},
                              {"output_peak_to_peak", number(n.lowFrequency->outputPeakToPeak)},
                              {"input_peak_to_peak", number(n.lowFrequency->inputPeakToPeak)},
                              {"method", kLowFrequencyMethod}};
    else
        j["low_frequency"] = nullptr;
    j["signal_level"] = number(n.signalLevel);
    j["output_peak"] = number(n.outputPeak);
    j["slew_rate"] = number(n.slewRate);
    j["snr_db"] = number(n.snrDb);
    j["noise_figure_db"] = number(n.noiseFigureDb);
    const double total = n.outputRms ? *n.outputRms * *n.outputRms : 0.0;
    Json sources = Json::array();
    for (const NoiseContribution &c : n.contributions) {
        sources.push_back(
            {{"name", c.name},
             {"part", c.partId},
             {"kind", noiseKindName(c.kind)},
             {"output_density", number(std::sqrt(c.outputPsd.front()))},
             {"rms", number(c.rms)},
             {"share_pct",
              total > 0 && c.rms ? number(100.0 * *c.rms * *c.rms / total) : Json(nullptr)}});
    }
    j["contributions"] = sources;
    return j;
}

Json specsJson(const Analysis &a)
{
    Json list = Json::array();
    for (const SpecVerdict &v : a.specs) {
        Json limit = v.isWindow ? Json::array({number(v.low), number(v.high)})
                                : number(v.low ? v.low : v.high);
        list.push_back({{"name", v.name},
                        {"limit", limit},
                        {"value", number(v.value)},
                        {"pass", v.pass},
                        {"reason", v.reason}});
    }
    return list;
}

} // namespace

std::vector<std::pair<std::string, std::string>> analysisUnits(const Analysis &a)
{
    const std::string g = a.gainUnit, ohm = "\u03A9", ratio = "1";
    std::vector<std::pair<std::string, std::string>> u{
        {"dc.exact.gain", g},
        {"dc.exact.z_in", ohm},
        {"dc.exact.z_out", ohm},
    };
    if (a.twoPort && a.topology) {
        const std::string tg = a.topology->gainUnit();
        u.insert(u.end(),
                 {{"dc.two_port.a", tg},
                  {"dc.two_port.beta", a.topology->feedbackUnit()},
                  {"dc.two_port.loop_gain", ratio},
                  {"dc.two_port.closed_loop", tg},
                  {"dc.two_port.gain", g},
                  {"dc.two_port.z_in", ohm},
                  {"dc.two_port.z_out", ohm},
                  {"dc.two_port.error_pct.gain", "%"},
                  {"dc.two_port.error_pct.z_in", "%"},
                  {"dc.two_port.error_pct.z_out", "%"},
                  {"dc.two_port.loading.input", ratio},
                  {"dc.two_port.loading.output", ratio},
                  {"dc.two_port.loading.input_db", "dB"},
                  {"dc.two_port.loading.output_db", "dB"}});
    }
    u.insert(u.end(),
             {{"dc.return_ratio.loop_gain", ratio},
              {"dc.return_ratio.gain_inf", g},
              {"dc.return_ratio.feedthrough", g},
              {"dc.return_ratio.gain", g},
              {"dc.return_ratio.z_in", ohm},
              {"dc.return_ratio.z_out", ohm},
              {"margins.crossover_hz", "Hz"},
              {"margins.phase_margin_deg", "\u00B0"},
              {"margins.gain_margin_db", "dB"},
              {"margins.phase_crossover_hz", "Hz"},
              {"margins.gain_margins_db[].db", "dB"},
              {"margins.gain_margins_db[].frequency_hz", "Hz"},
              {"margins.rate_of_closure_db_per_decade", "dB/decade"},
              {"margins.closure_level_db", "dB"},
              {"margins.loop_gain_near_crossover[].frequency_hz", "Hz"},
              {"margins.loop_gain_near_crossover[].magnitude", ratio},
              {"margins.loop_gain_near_crossover[].magnitude_db", "dB"},
              {"margins.loop_gain_near_crossover[].phase_deg", "\u00B0"},
              {"closed_loop.bandwidth_hz", "Hz"},
              {"closed_loop.peaking_db", "dB"},
              {"closed_loop.poles[].re", "rad/s"},
              {"closed_loop.poles[].im", "rad/s"},
              {"closed_loop.poles[].f_n_hz", "Hz"},
              {"closed_loop.poles[].damping", ratio},
              {"closed_loop.poles[].q", ratio},
              {"closed_loop.step.rise_time_s", "s"},
              {"closed_loop.step.overshoot_pct", "%"},
              {"closed_loop.step.settling_time_s", "s"},
              {"closed_loop.feedthrough_db", "dB"},
              {"closed_loop.step.settling_band", ratio},
              {"closed_loop.step.final_value", g},
              {"desensitivity_db", "dB"},
              {"sensitivity.*", "%/%"}});
    if (a.noise && !a.noise->frequenciesHz.empty()) {
        const auto [out, in] = noiseUnits(a.gainUnit);
        const std::string outDensity = out + "/\u221AHz", inDensity = in + "/\u221AHz";
        u.insert(u.end(),
                 {{"noise.temperature_k", "K"},
                  {"noise.band.low_hz", "Hz"},
                  {"noise.band.high_hz", "Hz"},
                  {"noise.output_rms", out},
                  {"noise.input_rms", in},
                  {"noise.input_rms_gain_at_hz", "Hz"},
                  {"noise.brick_wall_equivalent.high_hz", "Hz"},
                  {"noise.brick_wall_equivalent.output_rms", out},
                  {"noise.brick_wall_equivalent.input_rms", in},
                  {"noise.at_hz", "Hz"},
                  {"noise.output_density", outDensity},
                  {"noise.input_density", inDensity},
                  {"noise.noise_gain", out + "/V"},
                  {"noise.contributions[].output_density", outDensity},
                  {"noise.contributions[].rms", out},
                  {"noise.contributions[].share_pct", "%"},
                  {"noise.spot.at_hz", "Hz"},
                  {"noise.spot.output_density", outDensity},
                  {"noise.spot.input_density", inDensity},
                  {"noise.spot.noise_figure_db", "dB"},
                  {"noise.low_frequency.low_hz", "Hz"},
                  {"noise.low_frequency.high_hz", "Hz"},
                  {"noise.low_frequency.output_rms", out},
                  {"noise.low_frequency.output_peak_to_peak", out},
                  {"noise.low_frequency.input_peak_to_peak", in},
                  {"noise.signal_level", in},
                  {"noise.output_peak", out},
                  {"noise.slew_rate", out + "/s"},
                  {"noise.snr_db", "dB"},
                  {"noise.noise_figure_db", "dB"}});
    }
    for (std::size_t i = 0; i < a.specs.size(); ++i) {
        const std::string key = "specs[" + std::to_string(i) + "]";
        u.push_back({key + ".limit", a.specs[i].unit});
        u.push_back({key + ".value", a.specs[i].unit});
    }
    return u;
}

std::string analysisToJson(const Analysis &a)
{
    Json j;
    j["schema"] = kAnalysisSchema;
    j["title"] = a.title;
    j["gain_unit"] = a.gainUnit;
    j["topology"] = topologyJson(a);
    if (!a.topology)
        j["reason"] = a.topologyReason;
    else if (!a.twoPort)
        j["reason"] = a.twoPortProblem;
    Json dc;
    dc["exact"] = {{"gain", number(a.exact.gain)},
                   {"z_in", number(a.exact.zIn)},
                   {"z_out", number(a.exact.zOut)}};
    dc["two_port"] = twoPortJson(a);
    const ReturnRatioSummary &r = a.returnRatio;
    dc["return_ratio"] = {{"loop_gain", number(r.loopGain)},
                          {"gain_inf", number(r.gainInf)},
                          {"feedthrough", number(r.feedthrough)},
                          {"gain", number(r.gain)},
                          {"z_in", number(r.zIn)},
                          {"z_out", number(r.zOut)}};
    j["dc"] = dc;
    Json gainMargins = Json::array();
    for (const GainMargin &g : a.margins.gainMargins)
        gainMargins.push_back({{"db", number(g.db)}, {"frequency_hz", number(g.frequencyHz)}});
    Json nearCrossover = Json::array();
    for (const LoopGainSample &t : a.margins.nearCrossover)
        nearCrossover.push_back({{"frequency_hz", number(t.frequencyHz)},
                                 {"magnitude", number(t.magnitude)},
                                 {"magnitude_db", number(20.0 * std::log10(t.magnitude))},
                                 {"phase_deg", number(t.phaseDeg)}});
    j["margins"] = {{"crossover_hz", number(a.margins.crossoverHz)},
                    {"phase_margin_deg", number(a.margins.phaseMarginDeg)},
                    {"gain_margin_db", number(a.margins.gainMarginDb)},
                    {"phase_crossover_hz", number(a.margins.phaseCrossoverHz)},
                    {"gain_margins_db", gainMargins},
                    {"rate_of_closure_db_per_decade", number(a.margins.rateOfClosureDbPerDecade)},
                    {"closure_level_db", number(a.margins.closureLevelDb)},
                    {"steep_closure", a.margins.steepClosure},
                    {"loop_gain_near_crossover", nearCrossover}};
    Json poles = Json::array();
    for (const auto &p : a.poles)
        poles.push_back({{"re", number(p.s.real())},
                         {"im", number(p.s.imag())},
                         {"f_n_hz", number(p.naturalHz)},
                         {"damping", number(p.damping)},
                         {"q", number(p.q)}});
    j["closed_loop"] = {
        {"stable", a.stabilityKnown ? Json(a.stable) : Json(nullptr)},
        {"rhp_poles", a.rhpPoles},
        {"nyquist",
         {{"encirclements",
           a.nyquist.encirclements ? Json(*a.nyquist.encirclements) : Json(nullptr)},
          {"open_loop_rhp_poles", a.nyquist.openLoopRhpPoles},
          {"reason", a.nyquist.reason.empty() ? Json(nullptr) : Json(a.nyquist.reason)}}},
        {"reason", a.closedLoopReason.empty() ? Json(nullptr) : Json(a.closedLoopReason)},
        {"bandwidth_hz", number(a.bandwidthHz)},
        {"peaking_db", number(a.peakingDb)},
        {"peaking_hz", number(a.peakingHz)},
        {"feedthrough_db", number(a.feedthroughDb)},
        {"feedthrough_hz", number(a.feedthroughHz)},
        {"poles", poles},
        {"step",
         {{"rise_time_s", number(a.step.riseTimeS)},
          {"overshoot_pct", number(a.step.overshootPct)},
          {"settling_time_s", number(a.step.settlingTimeS)},
          {"settling_band", number(a.step.settlingBand)},
          {"final_value", a.step.response.empty() ? Json(nullptr) : number(a.step.response.back())},
          {"reason", a.step.problem.empty() ? Json(nullptr) : Json(a.step.problem)}}}};
    j["desensitivity_db"] = number(a.desensitivityDb);
    Json sens = Json::object();
    for (const auto &[id, v] : a.sensitivity)
        sens[id] = number(v);
    j["sensitivity"] = sens;
    j["noise"] = noiseJson(a);
    if (!a.noise && !a.noiseProblem.empty())
        j["noise_problem"] = a.noiseProblem;
    Json warnings = Json::array();
    for (const Diagnostic &w : a.warnings)
        warnings.push_back({{"part", w.part.empty() ? Json(nullptr) : Json(w.part)},
                            {"field", w.field.empty() ? Json(nullptr) : Json(w.field)},
                            {"message", w.message}});
    j["warnings"] = warnings;
    j["specs"] = specsJson(a);
    Json units = Json::object();
    for (const auto &[key, unit] : analysisUnits(a))
        units[key] = unit;
    j["units"] = units;
    return j.dump(2) + "\n";
}

} // namespace loopsketch
