#include "loopsketch/analysis/trialmetrics.h"

#include "loopsketch/analysis/metrics.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/circuit/reducedsystem.h"

#include "analysis/noisefigures.h"
#include "analysis/noisesweep.h"
#include "detail/phase.h"
#include "detail/rootfinder.h"

#include <algorithm>
#include <cmath>

namespace loopsketch {

namespace {

using detail::jw;
using detail::logRoot;
using detail::phaseNear;

Result<ReducedSystem> reduce(const Design &design, const LoopCircuitOptions &options)
{
    auto system = assembleSystem(buildLoopNetlist(design, options));
    if (!system)
        return system.diagnostics();
    return ReducedSystem::build(*system);
}

/// "V" or "A": the output's unit, the numerator of the gain unit ("V/A" -> "V").
std::string outputUnit(std::string_view gainUnit)
{
    return std::string(gainUnit.substr(0, gainUnit.find('/')));
}

OptionalNumber finite(double v)
{
    return std::isfinite(v) ? OptionalNumber(v) : std::nullopt;
}

} // namespace

std::vector<double> coarseGrid(const Sweep &sweep, int pointsPerDecade)
{
    const double start = sweep.start.si, stop = sweep.stop.si;
    std::vector<double> f;
    if (!(start > 0) || !(stop > start) || pointsPerDecade < 1)
        return f;
    const double decades = std::log10(stop / start);
    const int n = std::max(1, static_cast<int>(std::ceil(decades * pointsPerDecade - 1e-9)));
    f.reserve(static_cast<std::size_t>(n) + 1);
    for (int i = 0; i <= n; ++i)
        f.push_back(start * std::pow(10.0, decades * i / n));
    f.back() = stop;
    return f;
}

namespace {

Result<TrialMetrics> trialOn(const Design &design, const std::vector<double> &f,
                             const ReducedSystem &full, const ReducedSystem &rr);

/// The systems of a trial: re-stamped from the cache's where only its fields changed (and
/// restampable()), else assembled; the cache then holds them.
Result<TrialMetrics> cachedTrial(const Design &design, const std::vector<double> &f,
                                 TrialCache &cache)
{
    bool reuse = cache.full && cache.returnRatio;
    for (FieldChange &c : cache.fields) {
        const Part *p = design.findPart(c.part);
        c.to = p ? p->number(c.field) : 0.0;
        reuse = reuse && restampable(design, c);
    }
    // Both or neither: a refusal of the second leaves the first re-stamped, so both are
    // assembled afresh then.
    reuse
        = reuse && restamp(*cache.full, cache.fields) && restamp(*cache.returnRatio, cache.fields);
    if (!reuse) {
        LoopCircuitOptions rrOptions;
        rrOptions.testDriven = true;
        auto full = assembleSystem(buildLoopNetlist(design, {}));
        auto rr = assembleSystem(buildLoopNetlist(design, rrOptions));
        if (!full || !rr) {
            cache.full.reset();
            return full ? rr.diagnostics() : full.diagnostics();
        }
        cache.full = std::make_shared<DescriptorSystem>(std::move(full).value());
        cache.returnRatio = std::make_shared<DescriptorSystem>(std::move(rr).value());
    }
    for (FieldChange &c : cache.fields)
        c.from = c.to;
    auto full = ReducedSystem::build(std::shared_ptr<const DescriptorSystem>(cache.full));
    if (!full)
        return full.diagnostics();
    auto rr = ReducedSystem::build(std::shared_ptr<const DescriptorSystem>(cache.returnRatio));
    if (!rr)
        return rr.diagnostics();
    return trialOn(design, f, *full, *rr);
}

} // namespace

Result<TrialMetrics> evaluateTrial(const Design &design, const std::vector<double> &f,
                                   TrialCache &cache)
{
    return cachedTrial(design, f, cache);
}

Result<TrialMetrics> evaluateTrial(const Design &design, const std::vector<double> &f)
{
    auto full = reduce(design, {});
    if (!full)
        return full.diagnostics();
    LoopCircuitOptions rrOptions;
    rrOptions.testDriven = true;
    auto rr = reduce(design, rrOptions);
    if (!rr)
        return rr.diagnostics();
    return trialOn(design, f, *full, *rr);
}

namespace {

Result<TrialMetrics> trialOn(const Design &design, const std::vector<double> &f,
                             const ReducedSystem &fullSystem, const ReducedSystem &rrSystem)
{
    const ReducedSystem *full = &fullSystem, *rr = &rrSystem;
    const auto gainAt = [&](double hz) {
        return full->entry(jw(hz), loopio::kOutput, loopio::kSource);
    };
    const auto loopAt = [&](double hz) {
        return -rr->entry(jw(hz), loopio::kReturned, loopio::kTest);
    };

    TrialMetrics m;
    for (const auto &s : full->naturalFrequencies())
        if (s.real() >= -1e-9 * std::abs(s))
            m.stable = false; // as assessStability(): right half-plane or jw axis
    if (m.stable && full->unconfirmedPoles() > 0) { // as analyze(): poles not all located
        m.stable = false;
        m.stabilityKnown = false;
    }
    const double g0 = full->entry(0.0, loopio::kOutput, loopio::kSource).real();
    m.gain = finite(g0);
    const std::complex<double> t0 = -rr->entry(0.0, loopio::kReturned, loopio::kTest);
    if (f.size() < 2)
        return m;

    // The grid in one sweep per system (the same values as one point at a time: the lanes of
    // the sweep kernel do not mix), the root finding below one point at a time.
    thread_local std::vector<std::complex<double>> grid;
    grid.resize(f.size());
    for (std::size_t i = 0; i < f.size(); ++i)
        grid[i] = jw(f[i]);
    const TransferEntry gainEntry[] = {{loopio::kOutput, loopio::kSource}};
    const TransferEntry loopEntry[] = {{loopio::kReturned, loopio::kTest}};
    const Curve gain = full->sweepEntries(grid, gainEntry);
    Curve loop = rr->sweepEntries(grid, loopEntry);
    for (std::complex<double> &t : loop)
        t = -t;

    // Bandwidth: the first fall through |G(0)|/sqrt(2), as computeBandwidth() finds it.
    if (m.gain && std::abs(g0) > 0) {
        const double level = std::abs(g0) / std::sqrt(2.0);
        for (std::size_t i = 0; i + 1 < f.size(); ++i) {
            if (std::abs(gain[i]) >= level && std::abs(gain[i + 1]) < level) {
                m.bandwidthHz
                    = logRoot([&](double hz) { return std::abs(gainAt(hz)) - level; }, f[i],
                              f[i + 1], std::abs(gain[i]) - level, std::abs(gain[i + 1]) - level);
                break;
            }
        }
    }

    // Phase margin: phase unwrapped from DC, worst over all |T| = 1 crossings, as
    // computeMargins() does on the full sweep.
    const double startPhase
        = std::isfinite(std::abs(t0)) && std::abs(t0) > 0 ? std::arg(t0) : std::arg(loop.front());
    const std::vector<double> phase = unwrapPhase(loop, startPhase);
    for (std::size_t i = 0; i + 1 < f.size(); ++i) {
        const double a = std::log(std::abs(loop[i])), b = std::log(std::abs(loop[i + 1]));
        if (!std::isfinite(a) || !std::isfinite(b) || (a < 0) == (b < 0))
            continue;
        const double fc = logRoot([&](double hz) { return std::log(std::abs(loopAt(hz))); }, f[i],
                                  f[i + 1], a, b);
        const double pm = detail::phaseMarginDeg(detail::degrees(phaseNear(loopAt(fc), phase[i])));
        if (std::isfinite(pm) && (!m.phaseMarginDeg || pm < *m.phaseMarginDeg))
            m.phaseMarginDeg = pm;
    }
    if (hasNoiseSpec(design.specs) && m.stable) {
        // the band rms on the model; two grid points only, no brick-wall figure
        const std::vector<double> ends{f.front(), f.back()};
        const std::complex<double> points[] = {jw(ends[0]), jw(ends[1])};
        NoiseOptions options;
        options.closedLoopBandwidthHz = 0.0;
        auto model = detail::NoiseModel::build(design);
        auto noise = model ? detail::analyzeNoiseOver(*model, design, options, ends, points)
                           : Result<NoiseAnalysis>(model.diagnostics());
        if (noise) {
            NoiseAnalysis n = std::move(noise).value();
            detail::addSignalFigures(design, n);
            m.outputNoiseRms = n.outputRms;
            m.inputNoiseRms = n.inputRms;
            m.snrDb = n.snrDb;
        }
    }
    return m;
}

} // namespace

Result<double> evaluateDcGain(const Design &design)
{
    auto full = reduce(design, {});
    if (!full)
        return full.diagnostics();
    return full->entry(0.0, loopio::kOutput, loopio::kSource).real();
}

bool hasSpecs(const Specs &specs)
{
    return specCount(specs) > 0;
}

bool hasNoiseSpec(const Specs &specs)
{
    return specs.outputNoiseMax || specs.snrMinDb;
}

int specCount(const Specs &specs)
{
    return (specs.gainMin || specs.gainMax ? 1 : 0) + (specs.bandwidthMin ? 1 : 0)
        + (specs.phaseMarginMinDeg ? 1 : 0) + (specs.outputNoiseMax ? 1 : 0)
        + (specs.snrMinDb ? 1 : 0);
}

int SpecCheck::met(const Specs &specs) const
{
    if (!stable)
        return 0;
    return (specs.gainMin || specs.gainMax ? gain : 0) + (specs.bandwidthMin ? bandwidth : 0)
        + (specs.phaseMarginMinDeg ? phaseMargin : 0) + (specs.outputNoiseMax ? outputNoise : 0)
        + (specs.snrMinDb ? snr : 0);
}

SpecCheck &SpecCheck::operator&=(const SpecCheck &o)
{
    gain = gain && o.gain;
    bandwidth = bandwidth && o.bandwidth;
    phaseMargin = phaseMargin && o.phaseMargin;
    outputNoise = outputNoise && o.outputNoise;
    snr = snr && o.snr;
    if (stable && !o.stable)
        reason = o.reason;
    stable = stable && o.stable;
    return *this;
}

TrialMetrics trialMetricsOf(const Analysis &a)
{
    TrialMetrics m{a.exact.gain, a.bandwidthHz, a.margins.phaseMarginDeg, {}, {},
                   {},           a.stable,      a.stabilityKnown};
    if (a.noise) {
        m.outputNoiseRms = a.noise->outputRms;
        m.inputNoiseRms = a.noise->inputRms;
        m.snrDb = a.noise->snrDb;
    }
    return m;
}

SpecCheck checkSpecs(const Specs &specs, const Sweep &sweep, const TrialMetrics &m)
{
    SpecCheck c;
    if (!m.stable) {
        c.stable = false;
        c.reason = m.stabilityKnown ? "unstable" : "stability unknown";
        c.gain = !(specs.gainMin || specs.gainMax);
        c.bandwidth = !specs.bandwidthMin;
        c.phaseMargin = !specs.phaseMarginMinDeg;
        c.outputNoise = !specs.outputNoiseMax;
        c.snr = !specs.snrMinDb;
        return c;
    }
    if (specs.gainMin || specs.gainMax) {
        c.gain = m.gain.has_value();
        if (m.gain && specs.gainMin && *m.gain < specs.gainMin->si)
            c.gain = false;
        if (m.gain && specs.gainMax && *m.gain > specs.gainMax->si)
            c.gain = false;
    }
    if (specs.bandwidthMin) {
        if (m.bandwidthHz)
            c.bandwidth = *m.bandwidthHz >= specs.bandwidthMin->si;
        else
            c.bandwidth = m.gain.has_value() && sweep.stop.si >= specs.bandwidthMin->si;
    }
    if (specs.phaseMarginMinDeg)
        c.phaseMargin = m.phaseMarginDeg && *m.phaseMarginDeg >= *specs.phaseMarginMinDeg;
    if (specs.outputNoiseMax)
        c.outputNoise = m.outputNoiseRms && *m.outputNoiseRms <= specs.outputNoiseMax->si;
    if (specs.snrMinDb)
        c.snr = m.snrDb && *m.snrDb >= *specs.snrMinDb;
    return c;
}

std::vector<SpecVerdict> specVerdicts(const Specs &specs, const Sweep &sweep, const TrialMetrics &m,
                                      std::string_view gainUnit)
{
    const SpecCheck check = checkSpecs(specs, sweep, m);
    const auto verdict = [](std::string name, std::string label, std::string unit) {
        SpecVerdict v;
        v.name = std::move(name);
        v.label = std::move(label);
        v.unit = std::move(unit);
        return v;
    };
    std::vector<SpecVerdict> out;
    if (specs.gainMin || specs.gainMax) {
        SpecVerdict v = verdict("gain", "gain", std::string(gainUnit));
        if (specs.gainMin)
            v.low = specs.gainMin->si;
        if (specs.gainMax)
            v.high = specs.gainMax->si;
        v.isWindow = true;
        v.value = m.gain;
        v.pass = check.gain;
        if (!m.gain)
            v.reason = "no DC gain";
        else if (specs.gainMin && *m.gain < specs.gainMin->si)
            v.reason = "below the minimum";
        else if (specs.gainMax && *m.gain > specs.gainMax->si)
            v.reason = "above the maximum";
        out.push_back(std::move(v));
    }
    if (specs.bandwidthMin) {
        SpecVerdict v = verdict("bandwidth_min", "bandwidth", "Hz");
        v.low = specs.bandwidthMin->si;
        v.value = m.bandwidthHz;
        v.pass = check.bandwidth;
        if (m.bandwidthHz && !v.pass)
            v.reason = "below the minimum";
        else if (!m.bandwidthHz && !m.gain)
            v.reason = "no DC gain";
        else if (!m.bandwidthHz)
            v.reason = v.pass ? "no -3 dB point inside the sweep, which ends above the minimum"
                              : "no -3 dB point inside the sweep, which ends below the minimum";
        out.push_back(std::move(v));
    }
    // The specs with one bound: name, label, unit, the bound (a minimum or a maximum), the
    // design's value, the check's verdict and why a missing value fails.
    struct OneBound
    {
        const char *name;
        const char *label;
        std::string unit;
        std::optional<double> limit;
        bool isMinimum;
        OptionalNumber value;
        bool pass;
        const char *missing;
    };
    const auto si = [](const std::optional<Value> &v) {
        return v ? std::optional<double>(v->si) : std::nullopt;
    };
    const OneBound oneBound[] = {
        {"phase_margin_min_deg", "phase margin", "\u00B0", specs.phaseMarginMinDeg, true,
         m.phaseMarginDeg, check.phaseMargin, "no loop crossover"},
        {"output_noise_max", "output noise", outputUnit(gainUnit), si(specs.outputNoiseMax), false,
         m.outputNoiseRms, check.outputNoise, "no output noise rms"},
        {"snr_min_db", "SNR", "dB", specs.snrMinDb, true, m.snrDb, check.snr,
         "no SNR (no signal_level or no input-referred noise)"},
    };
    for (const OneBound &spec : oneBound) {
        if (!spec.limit)
            continue;
        SpecVerdict v = verdict(spec.name, spec.label, spec.unit);
        (spec.isMinimum ? v.low : v.high) = *spec.limit;
        v.value = spec.value;
        v.pass = spec.pass;
        if (!spec.value)
            v.reason = spec.missing;
        else if (!v.pass)
            v.reason = spec.isMinimum ? "below the minimum" : "above the maximum";
        out.push_back(std::move(v));
    }
    if (!check.stable) {
        // checkSpecs() fails every spec of an unstable loop, for that one reason
        for (SpecVerdict &v : out) {
            v.pass = false;
            v.reason = check.reason;
        }
    }
    return out;
}

std::string failingSpecLabels(const std::vector<SpecVerdict> &verdicts)
{
    std::string text;
    for (const SpecVerdict &v : verdicts) {
        if (!v.pass)
            text += (text.empty() ? "" : ", ") + v.label;
    }
    return text;
}

} // namespace loopsketch
