#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/report/noisenames.h"

#include "loopsketch/base/value.h"

#include "base/jsonnumber.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <numbers>
#include <sstream>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

// null where the quantity does not exist, the string "inf" where it is infinite (an open
// input), the number otherwise.
Json number(const OptionalNumber &v)
{
    return detail::jsonNumber(v);
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
    return detail::csvNumber(v);
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
        Json limit = v.isWindow ? Json::array({number(v.low), number(v.high)}) : number(v.low);
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
                  {"noise.contributions[].share_pct", "%"}});
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
    j["margins"] = {{"crossover_hz", number(a.margins.crossoverHz)},
                    {"phase_margin_deg", number(a.margins.phaseMarginDeg)},
                    {"gain_margin_db", number(a.margins.gainMarginDb)},
                    {"phase_crossover_hz", number(a.margins.phaseCrossoverHz)},
                    {"gain_margins_db", gainMargins}};
    Json poles = Json::array();
    for (const auto &p : a.poles)
        poles.push_back({{"re", number(p.s.real())},
                         {"im", number(p.s.imag())},
                         {"f_n_hz", number(p.naturalHz)},
                         {"damping", number(p.damping)},
                         {"q", number(p.q)}});
    j["closed_loop"]
        = {{"stable", a.stable},
           {"rhp_poles", a.rhpPoles},
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
             {"final_value",
              a.step.response.empty() ? Json(nullptr) : number(a.step.response.back())}}}};
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

namespace {

/// The text of one part's header line: "RF  resistor  a=in b=out".
std::string partHeader(const Part &p)
{
    const PartSpec &spec = partSpec(p.type);
    std::string line = p.id + "  " + std::string(spec.typeName) + " ";
    for (std::size_t i = 0; i < spec.terminals.size() && i < p.nodes.size(); ++i)
        line += " " + std::string(spec.terminals[i]) + "=" + p.nodes[i];
    return line;
}

std::string padded(const std::string &text, std::size_t columns)
{
    // column count in characters, not bytes (labels carry "Ω", "√", "–")
    std::size_t chars = 0;
    for (unsigned char c : text)
        chars += (c & 0xC0) != 0x80;
    return text + std::string(chars < columns ? columns - chars : 1, ' ');
}

} // namespace

std::string partsToText(const Design &design)
{
    std::ostringstream os;
    os << "Parts (every field the analysis uses; \"not given\": the default it uses)\n";
    for (const Part &p : design.parts) {
        os << "  " << partHeader(p) << "\n";
        for (const PartFieldText &f : partFieldTexts(p)) {
            std::string value = f.value;
            if (!f.rkm.empty())
                value += " (RKM " + f.rkm + ")";
            if (!f.note.empty())
                value += "  [" + f.note + "]";
            os << "    " << padded(f.field, 14) << padded(f.label, 40) << value << "\n";
        }
    }
    return os.str();
}

std::string analysisToText(const Analysis &a, const Design *design)
{
    std::ostringstream os;
    const auto show = [&](const std::string &label, const OptionalNumber &v,
                          const std::string &unit) {
        os << "  " << padded(label, 26);
        if (!v || std::isnan(*v)) {
            os << "\u2014\n"; // the quantity does not exist
        } else if (std::isinf(*v)) {
            os << (*v > 0 ? "\u221E" : "-\u221E") << (unit == "ratio" ? "" : " " + unit) << "\n";
        } else if (unit == "ratio") {
            // A pure ratio (loop gain): no unit, named as such, with its decibels.
            std::ostringstream db;
            db.precision(4);
            if (*v == 0.0)
                db << "-\u221E"; // the decibels of an exact zero
            else
                db << toDecibels(std::abs(*v));
            os << formatEngineering(*v, 5) << " (ratio, " << db.str() << " dB)\n";
        } else if (unit == "%" || unit == "dB" || unit == "\u00B0") {
            // Percentages, decibels and degrees read best without SI prefixes.
            os << formatPlain(*v, std::abs(*v) < 1e-3 ? 2 : 5) << " " << unit << "\n";
        } else {
            os << formatEngineering(*v, 5, unit) << "\n";
        }
    };
    os << a.title << "\n\n";
    if (!a.stable)
        os << "UNSTABLE: " << a.closedLoopReason.substr(a.closedLoopReason.find(':') + 2)
           << ".\nNo bandwidth, peaking, step response or noise rms: they do not exist for an "
              "unstable loop.\n\n";
    if (design) {
        if (!design->revision.empty())
            os << "Revision: " << design->revision << "\n\n";
        os << partsToText(*design) << "\n";
    }
    if (!a.warnings.empty()) {
        os << "Warnings\n";
        for (const Diagnostic &w : a.warnings)
            os << "  " << w.toString() << "\n";
        os << "\n";
    }
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
        show("feedback factor \u03B2", t.beta, a.topology->feedbackUnit());
        show("loop gain A\u00B7\u03B2", t.loopGain, "ratio");
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
    show("loop gain T", a.returnRatio.loopGain, "ratio");
    show("gain (asymptotic model)", a.returnRatio.gain, a.gainUnit);
    show("z_in (Blackman)", a.returnRatio.zIn, "Ω");
    show("z_out (Blackman)", a.returnRatio.zOut, "Ω");
    os << "\nStability and response\n";
    const auto row = [&](const std::string &label, const std::string &value) {
        os << "  " << label << std::string(label.size() < 26 ? 26 - label.size() : 1, ' ') << value
           << "\n";
    };
    row("closed loop", a.stable ? "stable" : "UNSTABLE");
    for (const ClosedLoopPole &p : a.poles) {
        if (p.s.real() < 0)
            continue;
        std::ostringstream pole;
        pole << formatEngineering(p.s.real(), 5, "") << (p.s.imag() < 0 ? " - j" : " + j")
             << formatEngineering(std::abs(p.s.imag()), 5, "") << " rad/s ("
             << formatEngineering(p.naturalHz, 5, "Hz") << ")";
        row(p.s.real() > 0 ? "  right-half-plane pole" : "  pole on the jw axis", pole.str());
    }
    show("desensitivity 1+T", a.desensitivityDb, "dB");
    // A crossing found on the model beyond the sweep says so.
    const double start = a.frequenciesHz.empty() ? 0.0 : a.frequenciesHz.front();
    const double stop = a.frequenciesHz.empty() ? 0.0 : a.frequenciesHz.back();
    const auto where = [&](double hz) -> std::string {
        if (hz > stop * (1 + 1e-12))
            return " (above the sweep stop)";
        if (hz < start * (1 - 1e-12))
            return " (below the sweep start)";
        return "";
    };
    const auto frequency = [&](const std::string &label, const OptionalNumber &hz) {
        if (!hz)
            show(label, hz, "Hz");
        else
            row(label, formatEngineering(*hz, 5, "Hz") + where(*hz));
    };
    frequency("loop crossover", a.margins.crossoverHz);
    show("phase margin", a.margins.phaseMarginDeg, "°");
    show("gain margin", a.margins.gainMarginDb, "dB");
    if (a.margins.gainMargins.size() > 1) {
        for (const GainMargin &g : a.margins.gainMargins) {
            row("  phase crossing",
                formatPlain(g.db, 5) + " dB at " + formatEngineering(g.frequencyHz, 5, "Hz")
                    + where(g.frequencyHz));
        }
    } else {
        frequency("phase crossover", a.margins.phaseCrossoverHz);
    }
    const std::string absent = a.stable ? "" : "none (unstable)";
    if (!a.stable) {
        for (const char *label : {"closed-loop bandwidth", "peaking", "step rise time",
                                  "step overshoot", "step settling"})
            row(label, absent);
    } else {
        if (!a.bandwidthHz && !a.curves.gainExact.empty() && a.exact.gain
            && std::abs(a.curves.gainExact.back()) >= std::abs(*a.exact.gain) / std::sqrt(2.0))
            row("closed-loop bandwidth", "above the sweep stop");
        else
            show("closed-loop bandwidth", a.bandwidthHz, "Hz");
        show("peaking", a.peakingDb, "dB");
        if (a.peakingHz)
            frequency("  at", a.peakingHz);
        if (a.feedthroughDb) {
            std::ostringstream db;
            db.precision(5);
            db << *a.feedthroughDb << " dB";
            if (a.feedthroughHz)
                db << " at " << formatEngineering(*a.feedthroughHz, 5, "Hz")
                   << where(*a.feedthroughHz);
            else
                db << " towards high frequency";
            row("feedthrough rise", db.str());
        }
        show("step rise time", a.step.riseTimeS, "s");
        show("step overshoot", a.step.overshootPct, "%");
        std::ostringstream band;
        band << "step settling (" << a.step.settlingBand * 100 << " %)";
        show(band.str(), a.step.settlingTimeS, "s");
    }
    if (a.noise && !a.noise->frequenciesHz.empty()) {
        const NoiseAnalysis &n = *a.noise;
        const auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
        os << "\nNoise (" << formatPlain(n.temperatureK, 6) << " K)\n";
        if (a.stable) {
            show("output, rms", n.outputRms, outUnit);
            show("input-referred, rms", n.inputRms, inUnit);
        } else {
            row("output, rms", absent);
            row("input-referred, rms", absent);
        }
        const auto line = [&](const std::string &label, const std::string &text) {
            os << "  " << label << std::string(label.size() < 26 ? 26 - label.size() : 1, ' ')
               << text << "\n";
        };
        if (!a.stable)
            return os.str(); // no band and no shares of a power that does not exist
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
        std::stable_sort(order.begin(), order.end(), [](const auto *l, const auto *r) {
            return l->rms.value_or(0) > r->rms.value_or(0);
        });
        const double total = n.outputRms ? *n.outputRms * *n.outputRms : 0.0;
        for (std::size_t i = 0; i < order.size() && i < 3 && total > 0 && order[i]->rms; ++i) {
            const double rms = *order[i]->rms;
            const double pct = 100.0 * rms * rms / total;
            line(i == 0 ? "largest sources" : "",
                 noiseSourceLabel(*order[i]) + ": " + formatPlain(pct, pct < 1e-3 ? 2 : 4)
                     + " % of the power, " + formatEngineering(rms, 5, outUnit) + " rms");
        }
    } else if (!a.noiseProblem.empty()) {
        os << "\nNoise: " << a.noiseProblem << "\n";
    }
    if (!a.specs.empty()) {
        os << "\nSpecs\n";
        for (const SpecVerdict &v : a.specs) {
            const auto limit = [&](const OptionalNumber &x, const char *open) {
                return x ? formatEngineering(*x, 4, v.unit) : std::string(open);
            };
            std::string text = v.isWindow
                ? limit(v.low, "-\u221E") + " \u2026 " + limit(v.high, "+\u221E")
                : "\u2265 " + limit(v.low, "\u2014");
            text += ", value "
                + (v.value ? formatEngineering(*v.value, 5, v.unit) : std::string("\u2014"));
            text += v.pass ? ": pass" : ": FAIL";
            if (!v.reason.empty())
                text += " (" + v.reason + ")";
            os << "  " << padded(v.label, 26) << text << "\n";
        }
        const std::string failing = failingSpecLabels(a.specs);
        if (!failing.empty())
            os << "  fails: " << failing << "\n";
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
