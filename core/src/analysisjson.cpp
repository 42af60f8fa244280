#include "loopsketch/analysis.h"
#include "loopsketch/noisenames.h"

#include "loopsketch/value.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <numbers>
#include <sstream>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

Json number(const OptionalNumber &v)
{
    if (!v || !std::isfinite(*v))
        return nullptr;
    return *v;
}

double magnitudeDb(std::complex<double> v)
{
    return 20.0 * std::log10(std::abs(v));
}
double phaseDeg(std::complex<double> v)
{
    return std::arg(v) * 180.0 / std::numbers::pi;
}

std::string csvNumber(double v)
{
    if (!std::isfinite(v))
        return {};
    std::ostringstream os;
    os.precision(10);
    os << v;
    return os.str();
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
    switch (kind) {
    case NoiseSourceKind::Resistor:
        return "resistor";
    case NoiseSourceKind::VoltageNoise:
        return "voltage_noise";
    case NoiseSourceKind::CurrentNoise:
        return "current_noise";
    case NoiseSourceKind::Shot:
        return "shot";
    }
    return "";
}

const char *noiseBandKindName(NoiseBandKind kind)
{
    switch (kind) {
    case NoiseBandKind::Given:
        return "noise_band";
    case NoiseBandKind::Converged:
        return "converged";
    case NoiseBandKind::SweepStop:
        return "sweep_stop";
    }
    return "";
}

constexpr const char *kBrickWallMethod
    = "input-referred density integrated from the sweep start to pi/2 times the closed-loop "
      "-3 dB bandwidth (single-pole equivalent noise bandwidth), times the gain at the sweep "
      "start";

Json noiseJson(const Analysis &a)
{
    if (!a.noise || a.noise->frequenciesHz.empty())
        return nullptr;
    const NoiseAnalysis &n = *a.noise;
    const auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
    Json j;
    j["temperature_k"] = n.temperatureK;
    j["output_unit"] = outUnit;
    j["input_unit"] = inUnit;
    j["band"] = {{"low_hz", number(n.bandLowHz)},
                 {"high_hz", number(n.bandHighHz)},
                 {"kind", noiseBandKindName(n.bandKind)},
                 {"method", n.bandMethod}};
    j["output_rms"] = number(n.outputRms);
    j["input_rms"] = number(n.inputRms);
    j["input_rms_gain_at_hz"] = number(n.inputGainHz);
    if (n.brickWall)
        j["brick_wall_equivalent"] = {{"high_hz", number(n.brickWall->highHz)},
                                      {"output_rms", number(n.brickWall->outputRms)},
                                      {"input_rms", number(n.brickWall->inputRms)},
                                      {"method", kBrickWallMethod}};
    else
        j["brick_wall_equivalent"] = nullptr;
    j["at_hz"] = n.frequenciesHz.front();
    j["output_density"] = number(n.outputDensity.front());
    j["input_density"] = number(n.inputDensity.front());
    j["noise_gain"] = number(n.noiseGain.front());
    const double total = n.outputRms ? *n.outputRms * *n.outputRms : 0.0;
    Json sources = Json::array();
    for (const NoiseContribution &c : n.contributions) {
        sources.push_back(
            {{"name", c.name},
             {"part", c.partId},
             {"kind", noiseKindName(c.kind)},
             {"output_density", number(std::sqrt(c.outputPsd.front()))},
             {"rms", number(c.rms)},
             {"share_pct", total > 0 ? number(100.0 * c.rms * c.rms / total) : Json(nullptr)}});
    }
    j["contributions"] = sources;
    return j;
}

} // namespace

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
    j["margins"] = {{"crossover_hz", number(a.margins.crossoverHz)},
                    {"phase_margin_deg", number(a.margins.phaseMarginDeg)},
                    {"gain_margin_db", number(a.margins.gainMarginDb)},
                    {"phase_crossover_hz", number(a.margins.phaseCrossoverHz)}};
    Json poles = Json::array();
    for (const auto &p : a.poles)
        poles.push_back({{"re", p.s.real()},
                         {"im", p.s.imag()},
                         {"f_n_hz", p.naturalHz},
                         {"damping", p.damping},
                         {"q", number(p.q)}});
    j["closed_loop"] = {{"bandwidth_hz", number(a.bandwidthHz)},
                        {"peaking_db", number(a.peakingDb)},
                        {"poles", poles},
                        {"step",
                         {{"rise_time_s", number(a.step.riseTimeS)},
                          {"overshoot_pct", number(a.step.overshootPct)},
                          {"settling_time_s", number(a.step.settlingTimeS)}}}};
    j["desensitivity_db"] = number(a.desensitivityDb);
    Json sens = Json::object();
    for (const auto &[id, v] : a.sensitivity)
        sens[id] = number(v);
    j["sensitivity"] = sens;
    j["noise"] = noiseJson(a);
    if (!a.noise && !a.noiseProblem.empty())
        j["noise_problem"] = a.noiseProblem;
    return j.dump(2) + "\n";
}

std::string analysisToText(const Analysis &a)
{
    std::ostringstream os;
    const auto show
        = [&](const std::string &label, const OptionalNumber &v, const std::string &unit) {
              os << "  " << label;
              for (std::size_t i = label.size(); i < 26; ++i)
                  os << ' ';
              if (!v) {
                  os << "none\n";
              } else if (unit == "%" || unit == "dB" || unit == "°") {
                  // Percentages, decibels and degrees read best without SI prefixes.
                  std::ostringstream plain;
                  plain.precision(std::abs(*v) < 1e-3 ? 2 : 5);
                  plain << *v;
                  os << plain.str() << " " << unit << "\n";
              } else {
                  os << formatEngineering(*v, 5, unit) << "\n";
              }
          };
    os << a.title << "\n\n";
    if (a.topology)
        os << "Topology: " << a.topology->name() << " · " << toString(a.topology->parameters())
           << " parameters · " << a.topology->gainType() << "\n\n";
    else
        os << "Topology: no single-loop two-port form (" << a.topologyReason << ")\n\n";
    os << "Exact solution (DC)\n";
    show("gain", a.exact.gain, a.gainUnit);
    show("z_in", a.exact.zIn, "Ω");
    show("z_out", a.exact.zOut, "Ω");
    if (a.twoPort) {
        const auto &t = *a.twoPort;
        os << "\nTwo-port estimate (DC)\n";
        show("A", t.a, a.topology->gainUnit());
        show("beta", t.beta, "");
        show("loop gain A·beta", t.loopGain, "");
        show("gain", t.gain, a.gainUnit);
        show("  error vs exact", t.gainErrorPct, "%");
        show("z_in", t.zIn, "Ω");
        show("z_out", t.zOut, "Ω");
        show("input loading", t.inputLoadingDb, "dB");
        show("output loading", t.outputLoadingDb, "dB");
    } else if (!a.twoPortProblem.empty()) {
        os << "\nTwo-port estimate: " << a.twoPortProblem << "\n";
    }
    os << "\nReturn ratio (DC)\n";
    show("loop gain T", a.returnRatio.loopGain, "");
    show("gain (asymptotic model)", a.returnRatio.gain, a.gainUnit);
    show("z_in (Blackman)", a.returnRatio.zIn, "Ω");
    show("z_out (Blackman)", a.returnRatio.zOut, "Ω");
    os << "\nStability and response\n";
    show("desensitivity 1+T", a.desensitivityDb, "dB");
    show("loop crossover", a.margins.crossoverHz, "Hz");
    show("phase margin", a.margins.phaseMarginDeg, "°");
    show("gain margin", a.margins.gainMarginDb, "dB");
    show("closed-loop bandwidth", a.bandwidthHz, "Hz");
    show("peaking", a.peakingDb, "dB");
    show("step rise time", a.step.riseTimeS, "s");
    show("step overshoot", a.step.overshootPct, "%");
    show("step settling (1 %)", a.step.settlingTimeS, "s");
    if (a.noise && !a.noise->frequenciesHz.empty()) {
        const NoiseAnalysis &n = *a.noise;
        const auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
        std::ostringstream kelvin;
        kelvin << n.temperatureK;
        os << "\nNoise (" << kelvin.str() << " K)\n";
        show("output, rms", n.outputRms, outUnit);
        show("input-referred, rms", n.inputRms, inUnit);
        const auto line = [&](const std::string &label, const std::string &text) {
            os << "  " << label << std::string(label.size() < 26 ? 26 - label.size() : 1, ' ')
               << text << "\n";
        };
        line("band",
             formatEngineering(n.bandLowHz, 5, "Hz") + " – "
                 + formatEngineering(n.bandHighHz, 5, "Hz"));
        line("band method", n.bandMethod);
        if (n.brickWall && n.brickWall->outputRms)
            line("brick-wall equivalent",
                 formatEngineering(*n.brickWall->outputRms, 5, outUnit)
                     + " rms (input-referred density to pi/2 f_-3dB = "
                     + formatEngineering(n.brickWall->highHz, 4, "Hz")
                     + ", times the gain at the sweep start)");
        // The three largest sources by their share of the output power over the band.
        std::vector<const NoiseContribution *> order;
        for (const NoiseContribution &c : n.contributions)
            order.push_back(&c);
        std::stable_sort(order.begin(), order.end(),
                         [](const auto *l, const auto *r) { return l->rms > r->rms; });
        const double total = n.outputRms ? *n.outputRms * *n.outputRms : 0.0;
        for (std::size_t i = 0; i < order.size() && i < 3 && total > 0; ++i) {
            const double pct = 100.0 * order[i]->rms * order[i]->rms / total;
            std::ostringstream share;
            share.precision(pct < 1e-3 ? 2 : 4);
            share << pct;
            line(i == 0 ? "largest sources" : "",
                 noiseSourceLabel(*order[i]) + ": " + share.str() + " % of the power, "
                     + formatEngineering(order[i]->rms, 5, outUnit) + " rms");
        }
    } else if (!a.noiseProblem.empty()) {
        os << "\nNoise: " << a.noiseProblem << "\n";
    }
    return os.str();
}

std::string sweepToCsv(const Analysis &a)
{
    const AnalysisCurves &c = a.curves;
    const std::pair<const char *, const Curve *> columns[] = {
        {"a", &c.a},
        {"loop_gain", &c.loopGain},
        {"gain_two_port", &c.gainTwoPort},
        {"gain_exact", &c.gainExact},
        {"z_in", &c.zInExact},
        {"z_out", &c.zOutExact},
        {"desensitivity", &c.desensitivity},
    };
    std::ostringstream os;
    os << "f_hz";
    for (const auto &[name, curve] : columns)
        os << ',' << name << "_db," << name << "_deg";
    const bool noise = a.noise && a.noise->outputDensity.size() == a.frequenciesHz.size();
    // Densities per sqrt(Hz) in the output's and the signal source's unit, named with
    // that unit as the other columns are (f_hz, _db, _deg): output_noise_v_per_rthz,
    // input_noise_a_per_rthz for a transimpedance stage.
    if (noise) {
        auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
        const auto lower = [](std::string u) {
            for (char &ch : u)
                ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
            return u;
        };
        os << ",output_noise_" << lower(outUnit) << "_per_rthz,input_noise_" << lower(inUnit)
           << "_per_rthz";
    }
    os << '\n';
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i) {
        os << csvNumber(a.frequenciesHz[i]);
        for (const auto &[name, curve] : columns)
            os << ',' << csvNumber(magnitudeDb((*curve)[i])) << ','
               << csvNumber(phaseDeg((*curve)[i]));
        if (noise)
            os << ',' << csvNumber(a.noise->outputDensity[i]) << ','
               << csvNumber(a.noise->inputDensity[i]);
        os << '\n';
    }
    return os.str();
}

} // namespace loopsketch
