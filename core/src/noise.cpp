#include "loopsketch/noise.h"

#include "noisesweep.h"

#include "loopsketch/reducedsystem.h"

#include "loopsketch/circuit.h"
#include "loopsketch/loopcircuit.h"

#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>

namespace loopsketch {

double thermalNoiseVoltage(double ohms, double kelvin)
{
    return std::sqrt(4.0 * kBoltzmann * kelvin * ohms);
}

double thermalNoiseCurrent(double ohms, double kelvin)
{
    return std::sqrt(4.0 * kBoltzmann * kelvin / ohms);
}

double flickerDensity(double white, double cornerHz, double hz)
{
    if (cornerHz == 0.0) // white noise (every resistor): skip the root of exactly 1
        return white;
    return white * std::sqrt(1.0 + cornerHz / hz);
}

namespace {

/// ln(hz[i + 1] / hz[i]) for each interval: the same for every density integrated over one
/// sweep, so the noise analysis takes them once for all its sources.
std::vector<double> logSpans(const std::vector<double> &hz)
{
    std::vector<double> spans(hz.size() > 1 ? hz.size() - 1 : 0);
    for (std::size_t i = 0; i < spans.size(); ++i)
        spans[i] = std::log(hz[i + 1] / hz[i]);
    return spans;
}

/// integratePsd() with the intervals' logarithms given.
double integrateWithSpans(const std::vector<double> &hz, const std::vector<double> &spans,
                          const std::vector<double> &psd, double low, double high)
{
    if (hz.size() < 2 || psd.size() != hz.size())
        return 0.0;
    low = std::max(low, hz.front());
    high = std::min(high, hz.back());
    if (!(high > low))
        return 0.0;
    double sum = 0.0;
    for (std::size_t i = 0; i + 1 < hz.size(); ++i) {
        const double f1 = hz[i], f2 = hz[i + 1];
        const double a = std::max(f1, low), b = std::min(f2, high);
        if (!(b > a))
            continue;
        const double span = spans[i];
        if (a == f1 && b == f2) { // a whole interval: no interpolation, one logarithm
            sum += 0.5 * (psd[i] * f1 + psd[i + 1] * f2) * span;
            continue;
        }
        const auto at = [&](double f) {
            const double t = span > 0 ? std::log(f / f1) / span : 0.0;
            return (psd[i] + t * (psd[i + 1] - psd[i])) * f;
        };
        sum += 0.5 * (at(a) + at(b)) * std::log(b / a);
    }
    return sum;
}

} // namespace

double integratePsd(const std::vector<double> &hz, const std::vector<double> &psd, double low,
                    double high)
{
    if (hz.size() < 2 || psd.size() != hz.size())
        return 0.0;
    return integrateWithSpans(hz, logSpans(hz), psd, low, high);
}

namespace {

std::string partIdOf(const std::string &elementName)
{
    return elementName.substr(0, elementName.find(':'));
}

struct Source
{
    NoiseContribution contribution;
    int plus = -1; ///< unknown whose adjoint entry is added (-1: ground)
    int minus = -1; ///< unknown whose adjoint entry is subtracted
    double whiteDensity = 0; ///< A/sqrt(Hz) for currents, V/sqrt(Hz) for en
    double cornerHz = 0;
};

// First frequency where |H| falls below |H(f0)| / sqrt(2), interpolated in log f.
std::optional<double> bandwidthFromGain(const std::vector<double> &f,
                                        const std::vector<std::complex<double>> &h)
{
    if (h.empty() || !(std::abs(h.front()) > 0))
        return std::nullopt;
    const double level = std::abs(h.front()) / std::numbers::sqrt2;
    for (std::size_t i = 1; i < h.size(); ++i) {
        const double m0 = std::abs(h[i - 1]), m1 = std::abs(h[i]);
        if (m1 < level && m0 >= level) {
            const double t = (std::log(m0) - std::log(level)) / (std::log(m0) - std::log(m1));
            return std::exp(std::log(f[i - 1]) + t * std::log(f[i] / f[i - 1]));
        }
    }
    return std::nullopt;
}

} // namespace

Result<NoiseAnalysis> analyzeNoise(const Design &design, const NoiseOptions &options)
{
    const std::vector<double> hz = design.sweep.frequencies();
    std::vector<std::complex<double>> points(hz.size());
    for (std::size_t i = 0; i < hz.size(); ++i)
        points[i] = {0.0, 2.0 * std::numbers::pi * hz[i]};
    return detail::analyzeNoiseOver(design, options, hz, points);
}

Result<NoiseAnalysis> detail::analyzeNoiseOver(const Design &design, const NoiseOptions &options,
                                               const std::vector<double> &frequenciesHz,
                                               std::span<const std::complex<double>> points)
{
    const Part *gb = design.uniquePart(PartType::GainBlock);
    if (!gb || !design.signalSource() || !design.uniquePart(PartType::Load))
        return Diagnostic{{}, {}, {}, "noise needs one gain block, one signal source and one load"};

    Netlist netlist = buildLoopNetlist(design);
    // en in series with in_p: the pin stays on the design's node, the block's input
    // resistance, capacitance and controlled source move behind the zero-valued source.
    const std::string pinP = gb->node("in_p");
    const std::string pinN = gb->node("in_n");
    const std::string behind = gb->id + ":en+";
    const std::string enName = gb->id + ":en";
    for (ControlledSourceElement &cs : netlist.controlled) {
        if (cs.inP == pinP)
            cs.inP = behind;
    }
    for (NetlistElement &e : netlist.elements) {
        if ((e.name == gb->id + ":r_in" || e.name == gb->id + ":c_in") && e.a == pinP)
            e.a = behind;
    }
    NetlistElement &en = netlist.addVoltageSource(enName, behind, pinP, -1);
    en.part = gb->id;
    en.field = "en";

    auto assembled = assembleSystem(netlist);
    if (!assembled)
        return assembled.diagnostics();
    const DescriptorSystem &sys = *assembled;

    std::map<std::string, int> nodeIndex;
    for (std::size_t i = 0; i < sys.nodes.size(); ++i)
        nodeIndex[sys.nodes[i]] = static_cast<int>(i);
    const auto indexOf = [&](const std::string &node) {
        auto it = nodeIndex.find(node);
        return it == nodeIndex.end() ? -1 : it->second;
    };
    int enRow = -1;
    for (std::size_t i = 0; i < sys.unknowns.size(); ++i) {
        if (sys.unknowns[i] == "i(" + enName + ")")
            enRow = static_cast<int>(i);
    }

    NoiseAnalysis result;
    result.temperatureK = design.temperatureK();
    result.frequenciesHz = frequenciesHz;
    const double fourKT = 4.0 * kBoltzmann * result.temperatureK;

    std::vector<Source> sources;
    for (const NetlistElement &e : netlist.elements) {
        if (e.kind != NetlistElement::Kind::Resistor)
            continue;
        Source s;
        s.contribution.name = e.name;
        s.contribution.partId = partIdOf(e.name);
        s.contribution.kind = NoiseSourceKind::Resistor;
        s.plus = indexOf(e.a);
        s.minus = indexOf(e.b);
        s.whiteDensity = std::sqrt(fourKT / e.value);
        sources.push_back(std::move(s));
    }
    if (gb->number("en") > 0) {
        Source s;
        s.contribution = {enName, gb->id, NoiseSourceKind::VoltageNoise, {}, 0};
        s.plus = enRow;
        s.whiteDensity = gb->number("en");
        s.cornerHz = gb->number("en_corner_hz");
        sources.push_back(std::move(s));
    }
    if (gb->number("in") > 0) {
        for (const auto &[terminal, pin] : {std::pair{"in_p", pinP}, std::pair{"in_n", pinN}}) {
            Source s;
            s.contribution
                = {gb->id + ":in(" + terminal + ")", gb->id, NoiseSourceKind::CurrentNoise, {}, 0};
            s.plus = indexOf(pin);
            s.whiteDensity = gb->number("in");
            s.cornerHz = gb->number("in_corner_hz");
            sources.push_back(std::move(s));
        }
    }

    const std::size_t count = result.frequenciesHz.size();
    for (Source &s : sources)
        s.contribution.outputPsd.reserve(count);
    result.outputDensity.reserve(count);
    result.inputDensity.reserve(count);
    result.noiseGain.reserve(count);
    result.gain.reserve(count);

    // One injection column per noise source (a unit current across a resistor or at an
    // input, a unit voltage on en's row) plus the signal source, one output row: the
    // reduced fast path then gives every source's transfer per frequency with one small
    // LU, instead of a full transposed LU (the adjoint) at every frequency.
    DescriptorSystem injections = sys;
    const int n = sys.size();
    injections.B = Eigen::MatrixXd::Zero(n, static_cast<Eigen::Index>(sources.size()) + 1);
    for (std::size_t k = 0; k < sources.size(); ++k) {
        const auto col = static_cast<Eigen::Index>(k);
        if (sources[k].plus >= 0)
            injections.B(sources[k].plus, col) += 1.0;
        if (sources[k].minus >= 0)
            injections.B(sources[k].minus, col) -= 1.0;
    }
    const auto gainColumn = static_cast<Eigen::Index>(sources.size());
    injections.B.col(gainColumn) = sys.B.col(loopio::kSource);
    Eigen::Index enColumn = -1;
    for (std::size_t k = 0; k < sources.size(); ++k)
        if (sources[k].plus == enRow && enRow >= 0)
            enColumn = static_cast<Eigen::Index>(k);
    if (enRow >= 0 && enColumn < 0) {
        // No en given: still report the noise gain, from an extra column on en's row.
        injections.B.conservativeResize(Eigen::NoChange, injections.B.cols() + 1);
        injections.B.col(injections.B.cols() - 1).setZero();
        injections.B(enRow, injections.B.cols() - 1) = 1.0;
        enColumn = injections.B.cols() - 1;
    }
    injections.L = sys.L.row(loopio::kOutput);
    auto reduced = ReducedSystem::build(injections);
    if (!reduced)
        return Diagnostic{{}, {}, {}, "noise: " + reduced.errorText()};
    const auto columns = static_cast<std::size_t>(injections.B.cols());
    std::vector<TransferEntry> entries(columns);
    for (std::size_t k = 0; k < columns; ++k)
        entries[k] = {0, static_cast<int>(k)};
    const std::vector<std::complex<double>> transfer = reduced->sweepEntries(points, entries);
    const auto h = [&](std::size_t column, std::size_t i) {
        return transfer[column * count + i];
    };
    for (std::size_t i = 0; i < count; ++i) {
        const double f = result.frequenciesHz[i];
        for (std::size_t k = 0; k < columns; ++k) {
            if (!std::isfinite(h(k, i).real()) || !std::isfinite(h(k, i).imag())) {
                const std::string why = describeSingularity(sys, points[i]);
                return Diagnostic{{},
                                  {},
                                  {},
                                  "noise: the circuit has no solution at " + std::to_string(f)
                                      + " Hz" + (why.empty() ? std::string() : " (" + why + ")")};
            }
        }
        const std::complex<double> gain = h(static_cast<std::size_t>(gainColumn), i);
        double total = 0.0;
        for (std::size_t k = 0; k < sources.size(); ++k) {
            Source &src = sources[k];
            const double density = flickerDensity(src.whiteDensity, src.cornerHz, f);
            const double psd = std::norm(density * h(k, i));
            src.contribution.outputPsd.push_back(psd);
            total += psd;
        }
        // Magnitudes as roots of the squared norms: finite transfers of a circuit are far
        // from the range where the square overflows, and this skips hypot's scaling.
        result.gain.push_back(gain);
        result.noiseGain.push_back(
            enColumn >= 0 ? std::sqrt(std::norm(h(static_cast<std::size_t>(enColumn), i))) : 0.0);
        const double outputDensity = std::sqrt(total);
        result.outputDensity.push_back(outputDensity);
        const double g = std::sqrt(std::norm(gain));
        result.inputDensity.push_back(g > 0 ? outputDensity / g
                                            : std::numeric_limits<double>::quiet_NaN());
    }

    const std::vector<double> &hz = result.frequenciesHz;
    if (hz.size() < 2)
        return Diagnostic{{}, {}, "sweep", "noise: the sweep needs at least two frequencies"};
    const double gain0 = std::abs(result.gain.front());
    if (options.bandLowHz || options.bandHighHz) {
        const double low = options.bandLowHz.value_or(hz.front());
        const double high = options.bandHighHz.value_or(hz.back());
        const double slack = 1e-9 * hz.back();
        if (!(std::isfinite(low) && std::isfinite(high) && low < high)
            || low < hz.front() * (1 - 1e-12) || high > hz.back() + slack) {
            return Diagnostic{{},
                              {},
                              "noise band",
                              "noise band must lie within the sweep and have its low end below "
                              "its high end"};
        }
        result.bandLowHz = low;
        result.bandHighHz = high;
        result.brickWall = false;
        result.bandMethod = "the given band, output and input-referred density integrated";
    } else {
        std::optional<double> bw = options.closedLoopBandwidthHz;
        if (!bw)
            bw = bandwidthFromGain(hz, result.gain);
        result.bandLowHz = hz.front();
        if (bw && *bw > 0) {
            result.bandHighHz = std::min(std::numbers::pi / 2.0 * *bw, hz.back());
            result.brickWall = true;
            result.bandMethod
                = "sweep start to pi/2 times the closed-loop -3 dB bandwidth (brick-wall "
                  "equivalent of a single-pole roll-off): input-referred density integrated, "
                  "output = that times the gain at the sweep start";
            if (std::numbers::pi / 2.0 * *bw > hz.back())
                result.bandMethod += "; cut at the sweep stop";
        } else {
            result.bandHighHz = hz.back();
            result.brickWall = false;
            result.bandMethod = "no closed-loop -3 dB frequency in the sweep: the whole sweep, "
                                "output and input-referred density integrated";
        }
    }

    const std::vector<double> spans = logSpans(hz);
    const auto integrate = [&](const std::vector<double> &psd) {
        return integrateWithSpans(hz, spans, psd, result.bandLowHz, result.bandHighHz);
    };
    const bool gainEverywhere = std::all_of(result.inputDensity.begin(), result.inputDensity.end(),
                                            [](double v) { return std::isfinite(v); });
    std::vector<double> inputPsd(hz.size());
    if (gainEverywhere) {
        for (std::size_t i = 0; i < hz.size(); ++i)
            inputPsd[i] = result.inputDensity[i] * result.inputDensity[i];
        result.inputRms = std::sqrt(integrate(inputPsd));
    }
    if (result.brickWall) {
        if (gainEverywhere) {
            result.outputRms = *result.inputRms * gain0;
            std::vector<double> gainNorm(hz.size()), referred(hz.size());
            for (std::size_t i = 0; i < hz.size(); ++i)
                gainNorm[i] = std::norm(result.gain[i]);
            for (Source &src : sources) {
                for (std::size_t i = 0; i < hz.size(); ++i)
                    referred[i] = src.contribution.outputPsd[i] / gainNorm[i];
                src.contribution.rms = std::sqrt(integrate(referred)) * gain0;
            }
        }
    } else {
        std::vector<double> outputPsd(hz.size());
        for (std::size_t i = 0; i < hz.size(); ++i)
            outputPsd[i] = result.outputDensity[i] * result.outputDensity[i];
        result.outputRms = std::sqrt(integrate(outputPsd));
        for (Source &src : sources)
            src.contribution.rms = std::sqrt(integrate(src.contribution.outputPsd));
    }
    for (Source &src : sources)
        result.contributions.push_back(std::move(src.contribution));
    return result;
}

} // namespace loopsketch
