#include "loopsketch/analysis/analysis.h"

#include "loopsketch/analysis/metrics.h"
#include "loopsketch/analysis/nyquist.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/design/designvalidation.h"
#include "loopsketch/design/partlimits.h"

#include "analysis/analyzemodelwith.h"
#include "analysis/noisefigures.h"
#include "analysis/noisesweep.h"
#include "analysis/sensitivity.h"

#include <Eigen/LU>

#include <cmath>
#include <limits>
#include <numbers>
#include <set>
#include <span>

namespace loopsketch {

namespace {

/// The capacitances that sit straight across ideal voltage sources: both ends on nodes whose
/// voltage an ideal source fixes (ground; a voltage source without r_series from such a
/// node; the gain block's output with r_out 0). A step drives an unbounded current into
/// them, the higher-index mode the step model refuses. "RF value", "U1 c_in" ...
std::vector<std::string> capacitancesAcrossIdealSources(const Design &design)
{
    std::set<std::string> held{std::string(kGroundNode)};
    const Part *gainBlock = design.uniquePart(PartType::GainBlock);
    if (gainBlock && !(gainBlock->number("r_out") > 0))
        held.insert(gainBlock->node("out"));
    for (bool grew = true; grew;) {
        grew = false;
        for (const Part &p : design.parts) {
            if (p.type != PartType::VSource || p.number("r_series") > 0)
                continue;
            const std::string a = p.node("pos"), b = p.node("neg");
            if (held.count(a) != held.count(b)) {
                held.insert(held.count(a) ? b : a);
                grew = true;
            }
        }
    }
    std::vector<std::string> found;
    const auto across = [&](const std::string &a, const std::string &b, const Part &p,
                            const char *field, double farads) {
        if (farads > 0 && a != b && held.count(a) && held.count(b))
            found.push_back(p.id + " " + field);
    };
    const std::string ground(kGroundNode);
    for (const Part &p : design.parts) {
        switch (p.type) {
        case PartType::Capacitor:
            across(p.node("a"), p.node("b"), p, "value", p.number("value"));
            break;
        case PartType::Load:
            across(p.node("a"), p.node("b"), p, "c", p.number("c"));
            break;
        case PartType::ISource:
            across(p.node("to"), p.node("from"), p, "c_parallel", p.number("c_parallel"));
            break;
        case PartType::GainBlock:
            across(p.node("in_p"), p.node("in_n"), p, "c_in", p.number("c_in"));
            across(p.node("in_p"), ground, p, "c_cm", p.number("c_cm"));
            if (found.empty() || found.back() != p.id + " c_cm")
                across(p.node("in_n"), ground, p, "c_cm", p.number("c_cm"));
            break;
        default:
            break;
        }
    }
    return found;
}

/// The step model's refusal in the designer's words, naming the parts where they are found.
std::string stepProblem(const Design &design, const std::string &message)
{
    if (message.find("higher-index") == std::string::npos)
        return message;
    const std::vector<std::string> parts = capacitancesAcrossIdealSources(design);
    std::string text = "no step response: ";
    if (parts.empty()) {
        text += "a capacitance sits straight across an ideal voltage source, so a step would "
                "drive an unbounded current spike into it, which the time-domain model cannot "
                "follow; a series resistance (r_series, r_out) in the source removes that mode";
    } else {
        for (std::size_t i = 0; i < parts.size(); ++i)
            text += (i == 0 ? "" : i + 1 == parts.size() ? " and " : ", ") + parts[i];
        text += parts.size() == 1 ? " sits" : " sit";
        text += " straight across an ideal voltage source, so a step would drive an unbounded "
                "current spike into it, which the time-domain model cannot follow; a series "
                "resistance (r_series, r_out) in the source removes that mode";
    }
    return text;
}

/// A DC value that exists only when finite.
OptionalNumber finiteOrNone(double value)
{
    if (!std::isfinite(value))
        return std::nullopt;
    return value;
}

OptionalNumber realPart(std::complex<double> v)
{
    return finiteOrNone(v.real());
}

/// An impedance at DC: its real part, +infinity when it has no finite DC value and grows
/// as the frequency falls (an open node at DC: a capacitance only, or nothing), nullopt when
/// it does not exist at all. `low` and `lower` are the model at two falling frequencies far
/// below any pole (1 µHz and 1 nHz): a capacitive impedance grows 1000x between them.
OptionalNumber dcImpedance(std::complex<double> dc, std::complex<double> low,
                           std::complex<double> lower)
{
    if (std::isfinite(dc.real()))
        return dc.real();
    const double a = std::abs(low), b = std::abs(lower);
    if (std::isfinite(a) && std::isfinite(b) && a > 0 && b > 100.0 * a)
        return std::numeric_limits<double>::infinity();
    if (std::isinf(dc.real()))
        return std::numeric_limits<double>::infinity();
    return std::nullopt;
}

OptionalNumber errorPct(const OptionalNumber &estimate, const OptionalNumber &exact)
{
    if (!estimate || !exact || *exact == 0.0)
        return std::nullopt;
    return finiteOrNone((*estimate - *exact) / *exact * 100.0);
}

OptionalNumber decibels(const OptionalNumber &factor)
{
    if (!factor || !(std::abs(*factor) > 0))
        return std::nullopt;
    return finiteOrNone(20.0 * std::log10(std::abs(*factor)));
}

/// The DC summaries of the three methods (exact, return ratio, two-port) and the
/// desensitivity into `a`; returns every quantity at DC. `exactOnly`: the model has no
/// Blackman or two-port impedances (LoopModelScope::Metrics), so only the exact ones count;
/// `impedances` false: nor those (LoopModelScope::GainAndLoop), which stay absent.
LoopPoint summariseDc(const LoopModel &model, Analysis &a, bool exactOnly, bool impedances)
{
    const LoopPoint dc = model.at(0.0);
    a.exact.gain = realPart(dc.gainExact);
    // Only when an impedance has no finite DC value: is it infinite (an open node) or absent?
    const bool openAtDc
        = (impedances
           && (!std::isfinite(dc.zInExact.real()) || !std::isfinite(dc.zOutExact.real())))
        || (!exactOnly
            && (!std::isfinite(dc.zInReturnRatio.real())
                || !std::isfinite(dc.zOutReturnRatio.real()) || !std::isfinite(dc.zInTwoPort.real())
                || !std::isfinite(dc.zOutTwoPort.real())));
    const std::complex<double> twoPi(0.0, 2.0 * std::numbers::pi);
    const LoopPoint low = openAtDc ? model.at(twoPi * 1e-6) : dc;
    const LoopPoint lower = openAtDc ? model.at(twoPi * 1e-9) : dc;
    const auto z = [&](std::complex<double> LoopPoint::*m) {
        return dcImpedance(dc.*m, low.*m, lower.*m);
    };
    a.exact.zIn = z(&LoopPoint::zInExact);
    a.exact.zOut = z(&LoopPoint::zOutExact);
    a.returnRatio = {realPart(dc.loopGain),         realPart(dc.gainInf),
                     realPart(dc.feedthrough),      realPart(dc.gainReturnRatio),
                     z(&LoopPoint::zInReturnRatio), z(&LoopPoint::zOutReturnRatio)};
    if (model.hasTwoPort()) {
        TwoPortSummary t;
        t.a = realPart(dc.a);
        t.beta = realPart(dc.beta);
        t.loopGain = realPart(dc.loopGainTwoPort);
        t.closedLoop = realPart(dc.closedLoop);
        t.gain = realPart(dc.gainTwoPort);
        t.zIn = z(&LoopPoint::zInTwoPort);
        t.zOut = z(&LoopPoint::zOutTwoPort);
        t.gainErrorPct = errorPct(t.gain, a.exact.gain);
        t.zInErrorPct = errorPct(t.zIn, a.exact.zIn);
        t.zOutErrorPct = errorPct(t.zOut, a.exact.zOut);
        t.inputLoading = realPart(dc.inputLoading);
        t.outputLoading = realPart(dc.outputLoading);
        t.inputLoadingDb = decibels(t.inputLoading);
        t.outputLoadingDb = decibels(t.outputLoading);
        a.twoPort = t;
    }
    if (a.returnRatio.loopGain)
        a.desensitivityDb = decibels(1.0 + *a.returnRatio.loopGain);
    return dc;
}

/// s = j 2 pi f (rad/s) for each of `hz` (Hz).
std::vector<Complex> pointsAt(const std::vector<double> &hz)
{
    std::vector<Complex> s(hz.size());
    for (std::size_t i = 0; i < hz.size(); ++i)
        s[i] = {0.0, 2.0 * std::numbers::pi * hz[i]};
    return s;
}

/// The noise analysis of `design` over the sweep (`points` its s = j 2 pi f) into `a`, or why
/// there is none; the band figures only for a stable loop.
void addNoise(const Design &design, NoiseOptions options, std::span<const Complex> points,
              const std::vector<Complex> &closedLoopPoles, Analysis &a,
              const Result<detail::NoiseModel> &model)
{
    const bool rmsOnly = options.rmsOnly;
    if (!options.closedLoopBandwidthHz)
        options.closedLoopBandwidthHz = a.bandwidthHz;
    auto noise = model ? detail::analyzeNoiseOver(*model, design, options, a.frequenciesHz, points,
                                                  &closedLoopPoles)
                       : Result<NoiseAnalysis>(model.diagnostics());
    if (!noise) {
        a.noiseProblem = noise.diagnostics().front().message;
        return;
    }
    a.noise = std::move(noise).value();
    if (!a.stable) { // the densities exist; a noise power over a band does not
        a.noise->outputRms.reset();
        a.noise->inputRms.reset();
        for (NoiseContribution &contribution : a.noise->contributions)
            contribution.rms.reset();
    }
    if (rmsOnly)
        detail::addSignalFigures(design, *a.noise); // the SNR, for the spec check
    else
        detail::addNoiseFigures(*model, design, *a.noise, a.stable);
}

/// The noise options of a run: a scan's (metricsOnly) reads the band rms figures alone.
NoiseOptions noiseOptionsOf(const AnalysisOptions &options)
{
    NoiseOptions noiseOptions = options.noiseOptions;
    noiseOptions.rmsOnly = noiseOptions.rmsOnly || options.metricsOnly;
    return noiseOptions;
}

/// The rate of closure at the crossover, the level where |A_ol| meets the closure curve and
/// whether the closure is steep, into `m` (whose crossover is known).
void addClosure(const LoopModel &model, Margins &m)
{
    m.rateOfClosureDbPerDecade = rateOfClosure(model, m.crossoverHz);
    if (m.crossoverHz) {
        const double level = 20.0
            * std::log10(std::abs(
                model.openLoopGainAt({0.0, 2.0 * std::numbers::pi * *m.crossoverHz})));
        if (std::isfinite(level))
            m.closureLevelDb = level;
    }
    m.steepClosure
        = m.rateOfClosureDbPerDecade && *m.rateOfClosureDbPerDecade >= kSteepClosureDbPerDecade;
}

} // namespace

Result<Analysis> analyze(const Design &design, std::string_view file,
                         const AnalysisOptions &options)
{
    if (auto problems = validateDesign(design, file); !problems.empty())
        return problems;
    if (auto over = checkAnalysisBudget(design, file, options.sensitivity); !over.empty())
        return over;
    auto built = LoopModel::build(design, options.solver, detail::loopModelScope(options));
    if (!built) {
        Diagnostics d = built.diagnostics();
        for (auto &x : d)
            x.file = std::string(file);
        return d;
    }
    return analyzeModel(*built, design, options);
}

Analysis analyzeModel(const LoopModel &model, const Design &design, const AnalysisOptions &options)
{
    std::optional<Result<detail::NoiseModel>> noiseModel;
    return detail::analyzeModelWith(
        model, design, options, [&]() -> const Result<detail::NoiseModel> & {
            return noiseModel.emplace(detail::NoiseModel::build(design));
        });
}

Analysis detail::analyzeModelWith(const LoopModel &model, const Design &design,
                                  const AnalysisOptions &options,
                                  const std::function<const Result<NoiseModel> &()> &noiseModel)
{
    Analysis a;
    a.warnings = partLimitWarnings(design);
    for (const Diagnostic &w : model.warnings())
        a.warnings.push_back(w);
    a.title = design.title;
    a.gainUnit = gainUnit(design);
    a.frequenciesHz = design.sweep.frequencies();
    a.topology = model.topology().topology;
    a.topologyReason = model.topology().reason;
    a.twoPortProblem = model.twoPortProblem();

    const LoopPoint dc
        = summariseDc(model, a, options.metricsOnly,
                      detail::loopModelScope(options) != LoopModelScope::GainAndLoop);

    LoopCurves &c = a.curves;
    const std::vector<Complex> points = pointsAt(a.frequenciesHz);
    // A doubtful point of the sweeps from here on that even the careful solve cannot assure
    // warns (collected below); summariseDc()'s evaluations far below the sweep, which only
    // tell an open port from a closed one, do not count.
    model.forgetUnassuredPoints();
    // What a scan row reads (metricsOnly): the two curves the metrics read, each the same
    // values as in the full sweep, and only where a metric read needs them.
    const AnalysisOptions::Reads reads
        = options.metricsOnly ? options.reads : AnalysisOptions::Reads{};
    if (!options.metricsOnly)
        c = options.allCurves ? model.sweep(points) : model.sweepLoop(points);
    else if (reads.margins)
        c.loopGain = model.loopGainOver(points);

    const std::vector<Complex> closedLoopPoles = model.closedLoopPoles();
    if (std::optional<Diagnostic> w = model.closedLoopPolesWarning())
        a.warnings.push_back(std::move(*w));
    a.poles = describePoles(closedLoopPoles);
    const Stability verdict = assessStability(a.poles);
    a.stable = verdict.stable;
    a.rhpPoles = verdict.rhpPoles;
    a.closedLoopReason = verdict.reason;
    if (const int unlocated = model.unlocatedClosedLoopPoles(); unlocated > 0 && a.stable) {
        // Poles that were not found may lie anywhere: no verdict, and nothing that needs one.
        const Part *gainBlock = design.uniquePart(PartType::GainBlock);
        a.stable = false;
        a.stabilityKnown = false;
        a.closedLoopReason = "stability unknown: " + std::to_string(unlocated)
            + (unlocated == 1 ? " closed-loop pole" : " closed-loop poles")
            + " could not be located"
            + (gainBlock ? " (rounding in the circuit equations; the largest entry comes from "
                           "the gain of "
                       + gainBlock->id + ")"
                         : std::string(" (rounding in the circuit equations)"));
    }

    // The loop beyond the sweep, where crossings may lie: as far as its poles and the
    // closed loop's reach (for the margins and the peaking alike, so both or neither).
    const std::vector<Complex> loopGainPoles
        = reads.margins || reads.peaking ? model.loopGainPoles() : std::vector<Complex>{};
    std::vector<Complex> loopPoles = loopGainPoles;
    loopPoles.insert(loopPoles.end(), closedLoopPoles.begin(), closedLoopPoles.end());
    const BeyondSweep beyond = frequenciesBeyondSweep(a.frequenciesHz, loopPoles);
    const std::vector<Complex> below = pointsAt(beyond.below), above = pointsAt(beyond.above);
    if (reads.margins) {
        std::vector<double> f = beyond.below;
        f.insert(f.end(), a.frequenciesHz.begin(), a.frequenciesHz.end());
        f.insert(f.end(), beyond.above.begin(), beyond.above.end());
        Curve t = model.loopGainOver(below);
        t.insert(t.end(), c.loopGain.begin(), c.loopGain.end());
        const Curve tAbove = model.loopGainOver(above);
        t.insert(t.end(), tAbove.begin(), tAbove.end());
        a.margins
            = computeMargins(model, f, t, dc.loopGain, {reads.gainMargins, !options.metricsOnly});
    }
    if (!options.metricsOnly)
        addClosure(model, a.margins);
    if (!options.metricsOnly)
        a.nyquist = countEncirclements(model, loopGainPoles, closedLoopPoles);
    a.step.settlingBand = design.settlingBandFraction();
    if (a.exact.gain && a.stable && (reads.bandwidth || reads.peaking || reads.step)) {
        // A scan sweeps the gain only here, an unstable loop having none of these metrics,
        // and without the peaking only as far as the bandwidth.
        const bool wholeGain = !options.metricsOnly || reads.peaking;
        if (options.metricsOnly && wholeGain)
            c.gainExact = model.gainOver(points);
        if (reads.bandwidth || reads.step) // the step's time span starts from the bandwidth
            a.bandwidthHz = wholeGain
                ? computeBandwidth(model, a.frequenciesHz, c.gainExact, *a.exact.gain)
                : bandwidthSweptToFall(model, a.frequenciesHz, points, *a.exact.gain);
        if (reads.peaking) {
            std::vector<double> f = a.frequenciesHz;
            f.insert(f.end(), beyond.above.begin(), beyond.above.end());
            Curve g = c.gainExact;
            const Curve gAbove = model.gainOver(above);
            g.insert(g.end(), gAbove.begin(), gAbove.end());
            const Peaking peaking = computePeaking(model, f, g, *a.exact.gain);
            a.peakingDb = peaking.db;
            a.peakingHz = peaking.hz;
            a.feedthroughDb = peaking.feedthroughDb;
            a.feedthroughHz = peaking.feedthroughHz;
        }
        if (reads.step) {
            if (auto step = model.stepModel())
                a.step = computeStep(*step, a.poles, a.bandwidthHz, *a.exact.gain,
                                     design.settlingBandFraction());
            else
                a.step.problem = stepProblem(design, step.diagnostics().front().message);
        }
    }
    if (a.exact.gain && options.sensitivity)
        a.sensitivity = detail::gainSensitivity(design, *a.exact.gain, options.solver);
    if (options.noise && (a.stable || !options.metricsOnly))
        addNoise(design, noiseOptionsOf(options), points, closedLoopPoles, a, noiseModel());
    for (Diagnostic &w : model.unassuredPointWarnings())
        a.warnings.push_back(std::move(w));
    // The same check as the Candidates panel and the spread yield (checkSpecs()).
    a.specs = specVerdicts(design.specs, design.sweep, trialMetricsOf(a), a.gainUnit);
    return a;
}

void addNoiseAnalysis(const Design &design, Analysis &a, const AnalysisOptions &options)
{
    // The inputs analyzeModel() hands addNoise(): describePoles() keeps each pole's s as found.
    std::vector<Complex> closedLoopPoles;
    closedLoopPoles.reserve(a.poles.size());
    for (const ClosedLoopPole &p : a.poles)
        closedLoopPoles.push_back(p.s);
    a.noise.reset();
    a.noiseProblem.clear();
    addNoise(design, noiseOptionsOf(options), pointsAt(a.frequenciesHz), closedLoopPoles, a,
             detail::NoiseModel::build(design));
    a.specs = specVerdicts(design.specs, design.sweep, trialMetricsOf(a), a.gainUnit);
}

} // namespace loopsketch
