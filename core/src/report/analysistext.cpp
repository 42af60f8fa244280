// analysisToText() and partsToText(): the analysis as a terminal reads it (`loopsketch
// analyze`), the same numbers as analysisToJson() in engineering notation.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"
#include "loopsketch/report/noisenames.h"

#include <algorithm>
#include <cmath>
#include <sstream>

namespace loopsketch {

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

/// The lines of the text summary: a label padded to 26 columns, then the value.
class TextLines
{
public:
    TextLines(std::ostringstream &os, const Analysis &a) : m_os(os), m_a(a) { }

    /// A number with its unit; "—" where it does not exist, "∞" where it is infinite.
    /// Unit "ratio": a pure ratio with its decibels.
    void show(const std::string &label, const OptionalNumber &v, const std::string &unit)
    {
        m_os << "  " << padded(label, 26);
        if (!v || std::isnan(*v)) {
            m_os << "\u2014\n"; // the quantity does not exist
        } else if (std::isinf(*v)) {
            m_os << (*v > 0 ? "\u221E" : "-\u221E") << (unit == "ratio" ? "" : " " + unit) << "\n";
        } else if (unit == "ratio") {
            // A pure ratio (loop gain): no unit, named as such, with its decibels.
            std::ostringstream db;
            db.precision(4);
            if (*v == 0.0)
                db << "-\u221E"; // the decibels of an exact zero
            else
                db << toDecibels(std::abs(*v));
            m_os << formatEngineering(*v, 5) << " (ratio, " << db.str() << " dB)\n";
        } else if (unit == "%" || unit == "dB" || unit == "\u00B0") {
            // Percentages, decibels and degrees read best without SI prefixes.
            m_os << formatPlain(*v, std::abs(*v) < 1e-3 ? 2 : 5) << " " << unit << "\n";
        } else {
            m_os << formatEngineering(*v, 5, unit) << "\n";
        }
    }

    /// A ready-made text.
    void row(const std::string &label, const std::string &value)
    {
        m_os << "  " << label << std::string(label.size() < 26 ? 26 - label.size() : 1, ' ')
             << value << "\n";
    }

    /// " (above the sweep stop)" or " (below the sweep start)" for a frequency found on the
    /// model beyond the sweep; empty inside it.
    std::string where(double hz) const
    {
        const std::vector<double> &f = m_a.frequenciesHz;
        const double start = f.empty() ? 0.0 : f.front();
        const double stop = f.empty() ? 0.0 : f.back();
        if (hz > stop * (1 + 1e-12))
            return " (above the sweep stop)";
        if (hz < start * (1 - 1e-12))
            return " (below the sweep start)";
        return "";
    }

    /// A frequency, saying where it lies beyond the sweep.
    void frequency(const std::string &label, const OptionalNumber &hz)
    {
        if (!hz)
            show(label, hz, "Hz");
        else
            row(label, formatEngineering(*hz, 5, "Hz") + where(*hz));
    }

private:
    std::ostringstream &m_os;
    const Analysis &m_a;
};

void writeHeading(std::ostringstream &os, const Analysis &a, const Design *design)
{
    os << a.title << "\n\n";
    if (!a.stable && !a.stabilityKnown)
        os << "STABILITY UNKNOWN: " << a.closedLoopReason.substr(a.closedLoopReason.find(':') + 2)
           << ".\nNo bandwidth, peaking, step response or noise rms: they are not given for a "
              "loop whose stability is unknown.\n\n";
    else if (!a.stable)
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
}

void writeDc(std::ostringstream &os, TextLines &out, const Analysis &a)
{
    os << "Exact solution (DC)\n";
    out.show("gain", a.exact.gain, a.gainUnit);
    out.show("z_in", a.exact.zIn, "Ω");
    out.show("z_out", a.exact.zOut, "Ω");
    if (a.twoPort) {
        const auto &t = *a.twoPort;
        os << "\nTwo-port estimate (DC)\n";
        out.show("A", t.a, a.topology->gainUnit());
        out.show("feedback factor \u03B2", t.beta, a.topology->feedbackUnit());
        out.show("loop gain A\u00B7\u03B2", t.loopGain, "ratio");
        out.show("gain", t.gain, a.gainUnit);
        out.show("  error vs exact", t.gainErrorPct, "%");
        out.show("z_in", t.zIn, "Ω");
        out.show("z_out", t.zOut, "Ω");
        out.show("input loading", t.inputLoadingDb, "dB");
        out.show("output loading", t.outputLoadingDb, "dB");
    } else if (!a.twoPortProblem.empty()) {
        os << "\nTwo-port estimate: " << a.twoPortProblem << "\n";
    }
    os << "\nReturn ratio (DC)\n";
    out.show("loop gain T", a.returnRatio.loopGain, "ratio");
    out.show("gain (asymptotic model)", a.returnRatio.gain, a.gainUnit);
    out.show("z_in (Blackman)", a.returnRatio.zIn, "Ω");
    out.show("z_out (Blackman)", a.returnRatio.zOut, "Ω");
}

/// "|T| 2.1861 (ratio, 6.79 dB), phase -115.66°": a pure ratio named as such (as every
/// ratio in the text), its level and its phase.
std::string loopGainSampleText(const LoopGainSample &t)
{
    return "|T| " + formatPlain(t.magnitude, 5) + " (ratio, "
        + formatFixed(toDecibels(t.magnitude), 2) + " dB), phase " + formatFixed(t.phaseDeg, 2)
        + "°";
}

void writeStabilityAndMargins(std::ostringstream &os, TextLines &out, const Analysis &a)
{
    os << "\nStability and response\n";
    out.row("closed loop",
            a.stable               ? "stable"
                : a.stabilityKnown ? "UNSTABLE"
                                   : "stability unknown");
    for (const ClosedLoopPole &p : a.poles) {
        if (p.s.real() < 0)
            continue;
        std::ostringstream pole;
        pole << formatEngineering(p.s.real(), 5, "") << (p.s.imag() < 0 ? " - j" : " + j")
             << formatEngineering(std::abs(p.s.imag()), 5, "") << " rad/s ("
             << formatEngineering(p.naturalHz, 5, "Hz") << ")";
        out.row(p.s.real() > 0 ? "  right-half-plane pole" : "  pole on the jw axis", pole.str());
    }
    out.show("desensitivity 1+T", a.desensitivityDb, "dB");
    out.frequency("loop crossover", a.margins.crossoverHz);
    out.show("phase margin", a.margins.phaseMarginDeg, "°");
    out.show("gain margin", a.margins.gainMarginDb, "dB");
    if (a.margins.gainMargins.size() > 1) {
        for (const GainMargin &g : a.margins.gainMargins) {
            out.row("  phase crossing",
                    formatPlain(g.db, 5) + " dB at " + formatEngineering(g.frequencyHz, 5, "Hz")
                        + out.where(g.frequencyHz));
        }
    } else {
        out.frequency("phase crossover", a.margins.phaseCrossoverHz);
    }
    // T itself near the crossings, so that a reviewer can recompute the margins by hand.
    for (const LoopGainSample &t : a.margins.nearCrossover)
        out.row("  T at " + formatEngineering(t.frequencyHz, 4, "Hz"), loopGainSampleText(t));
}

void writeClosedLoop(TextLines &out, const Analysis &a)
{
    if (!a.stable) {
        for (const char *label : {"closed-loop bandwidth", "peaking", "step rise time",
                                  "step overshoot", "step settling"})
            out.row(label, a.stabilityKnown ? "none (unstable)" : "none (stability unknown)");
        return;
    }
    if (!a.bandwidthHz && !a.curves.gainExact.empty() && a.exact.gain
        && std::abs(a.curves.gainExact.back()) >= std::abs(*a.exact.gain) / std::sqrt(2.0))
        out.row("closed-loop bandwidth", "above the sweep stop");
    else
        out.show("closed-loop bandwidth", a.bandwidthHz, "Hz");
    out.show("peaking", a.peakingDb, "dB");
    if (a.peakingHz)
        out.frequency("  at", a.peakingHz);
    if (a.feedthroughDb) {
        std::ostringstream db;
        db.precision(5);
        db << *a.feedthroughDb << " dB";
        if (a.feedthroughHz)
            db << " at " << formatEngineering(*a.feedthroughHz, 5, "Hz")
               << out.where(*a.feedthroughHz);
        else
            db << " towards high frequency";
        out.row("feedthrough rise", db.str());
    }
    out.show("step rise time", a.step.riseTimeS, "s");
    out.show("step overshoot", a.step.overshootPct, "%");
    std::ostringstream band;
    band << "step settling (" << a.step.settlingBand * 100 << " %)";
    out.show(band.str(), a.step.settlingTimeS, "s");
    if (!a.step.problem.empty())
        out.row("step response", "— (" + a.step.problem + ")");
}

/// The noise section. An unstable loop has no band and no shares of a power that does not
/// exist: its section ends with the rms figures' absence.
void writeNoise(std::ostringstream &os, TextLines &out, const Analysis &a)
{
    if (!a.noise || a.noise->frequenciesHz.empty()) {
        if (!a.noiseProblem.empty())
            os << "\nNoise: " << a.noiseProblem << "\n";
        return;
    }
    const NoiseAnalysis &n = *a.noise;
    const auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
    os << "\nNoise (" << formatPlain(n.temperatureK, 6) << " K)\n";
    if (!a.stable) {
        const char *why = a.stabilityKnown ? "none (unstable)" : "none (stability unknown)";
        out.row("output, rms", why);
        out.row("input-referred, rms", why);
        return;
    }
    out.show("output, rms", n.outputRms, outUnit);
    if (n.inputProblem.empty())
        out.show("input-referred, rms", n.inputRms, inUnit);
    else
        out.row("input-referred, rms", "— (" + n.inputProblem + ")");
    out.row("band",
            formatEngineering(n.bandLowHz, 5, "Hz") + " – "
                + formatEngineering(n.bandHighHz, 5, "Hz"));
    out.row("band method", n.bandMethod);
    const std::string spotAt = " at " + formatEngineering(n.spot.atHz, 4, "Hz");
    out.show("spot output" + spotAt, n.spot.outputDensity, outUnit + "/\u221AHz");
    out.show("spot input" + spotAt, n.spot.inputDensity, inUnit + "/\u221AHz");
    if (n.lowFrequency)
        out.row("p-p, 0.1 Hz to 10 Hz",
                formatEngineering(n.lowFrequency->outputPeakToPeak, 4, outUnit) + " at the output"
                    + (n.lowFrequency->inputPeakToPeak
                           ? ", " + formatEngineering(*n.lowFrequency->inputPeakToPeak, 4, inUnit)
                               + " input-referred"
                           : std::string()));
    if (n.signalLevel) {
        out.show("full-scale signal (peak)", n.signalLevel, inUnit);
        out.show("SNR", n.snrDb, "dB");
        out.show("output peak", n.outputPeak, outUnit);
        if (n.slewRate)
            out.row("slew rate needed",
                    formatEngineering(*n.slewRate, 4, outUnit + "/s") + " (full-scale sine at "
                        + formatEngineering(n.bandHighHz, 4, "Hz") + ")");
    }
    if (n.noiseFigureDb || n.spot.noiseFigureDb) {
        out.show("noise figure (band)", n.noiseFigureDb, "dB");
        out.show("noise figure" + spotAt, n.spot.noiseFigureDb, "dB");
    }
    if (n.brickWall && n.brickWall->outputRms)
        out.row("brick-wall equivalent",
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
        out.row(i == 0 ? "largest sources" : "",
                noiseSourceLabel(*order[i]) + ": " + formatPlain(pct, pct < 1e-3 ? 2 : 4)
                    + " % of the power, " + formatEngineering(rms, 5, outUnit) + " rms");
    }
}

void writeSpecs(std::ostringstream &os, const Analysis &a)
{
    if (a.specs.empty())
        return;
    os << "\nSpecs\n";
    for (const SpecVerdict &v : a.specs) {
        const auto limit = [&](const OptionalNumber &x, const char *open) {
            return x ? formatEngineering(*x, 4, v.unit) : std::string(open);
        };
        std::string text = v.isWindow
            ? limit(v.low, "-\u221E") + " \u2026 " + limit(v.high, "+\u221E")
            : v.low ? "\u2265 " + limit(v.low, "\u2014")
                    : "\u2264 " + limit(v.high, "\u2014");
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
    TextLines out(os, a);
    writeHeading(os, a, design);
    writeDc(os, out, a);
    writeStabilityAndMargins(os, out, a);
    writeClosedLoop(out, a);
    writeNoise(os, out, a);
    writeSpecs(os, a);
    return os.str();
}

} // namespace loopsketch
