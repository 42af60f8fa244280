#include "loopsketch/analysis/metrics.h"

#include "detail/phase.h"
#include "detail/rootfinder.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <numbers>
#include <string>

namespace loopsketch {

namespace {

using detail::jw;
using detail::logRoot;
using detail::phaseNear;

constexpr double kPi = std::numbers::pi;

/// The frequency (Hz) in [lo, hi] where f is largest, by golden-section search in log f to
/// a relative width of 1e-12 (f unimodal there: the grid maximum and its neighbours).
template<typename F> double maximiseLog(F f, double lo, double hi)
{
    const double r = (std::sqrt(5.0) - 1.0) / 2.0;
    double a = std::log(lo), b = std::log(hi);
    double x1 = b - r * (b - a), x2 = a + r * (b - a);
    double f1 = f(std::exp(x1)), f2 = f(std::exp(x2));
    for (int i = 0; i < 200 && b - a > 1e-12; ++i) {
        if (f1 < f2) {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + r * (b - a);
            f2 = f(std::exp(x2));
        } else {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - r * (b - a);
            f1 = f(std::exp(x1));
        }
    }
    return std::exp(0.5 * (a + b));
}

/// unwrapPhase() with each value's magnitude given.
std::vector<double> unwrapPhaseWith(const Curve &values, const std::vector<double> &magnitudes,
                                    double start)
{
    std::vector<double> out;
    out.reserve(values.size());
    double previous = start;
    for (std::size_t i = 0; i < values.size(); ++i) {
        const double magnitude = magnitudes[i];
        if (!std::isfinite(magnitude) || magnitude == 0.0) {
            out.push_back(std::nan(""));
            continue;
        }
        previous = phaseNear(values[i], previous);
        out.push_back(previous);
    }
    return out;
}

std::vector<double> magnitudesOf(const Curve &values)
{
    std::vector<double> m(values.size());
    for (std::size_t i = 0; i < values.size(); ++i)
        m[i] = std::abs(values[i]);
    return m;
}

/// A sign change of f(t) between lo and hi (s), refined on the model by illinoisRoot() (about
/// ten evaluations of the exact response where halving needs fifty) to a relative width of
/// 1e-14. The middle when f does not change sign there.
template<typename F> double crossingIn(const F &f, double lo, double hi)
{
    const double flo = f(lo), fhi = f(hi);
    if (!((flo < 0) != (fhi < 0)))
        return 0.5 * (lo + hi);
    const auto narrow = [](double a, double b) {
        return !(b - a > 1e-14 * b);
    };
    return detail::illinoisRoot(f, lo, hi, flo, fhi, narrow, 100);
}

} // namespace

std::vector<double> unwrapPhase(const Curve &values, double start)
{
    return unwrapPhaseWith(values, magnitudesOf(values), start);
}

BeyondSweep frequenciesBeyondSweep(const std::vector<double> &f,
                                   const std::vector<std::complex<double>> &poles)
{
    BeyondSweep out;
    if (f.size() < 2)
        return out;
    double slowest = std::numeric_limits<double>::infinity(), fastest = 0.0;
    for (const auto &p : poles) {
        const double hz = std::abs(p) / (2 * kPi);
        if (std::isfinite(hz) && hz > 0) {
            slowest = std::min(slowest, hz);
            fastest = std::max(fastest, hz);
        }
    }
    constexpr double kPerDecade = 10.0, kMaxDecades = 6.0;
    const double start = f.front(), stop = f.back();
    if (std::isfinite(slowest)) {
        const double low = std::max(slowest / 100.0, start * std::pow(10.0, -kMaxDecades));
        const int n = static_cast<int>(std::ceil(std::log10(start / low) * kPerDecade));
        for (int i = n; i >= 1; --i)
            out.below.push_back(start * std::pow(10.0, -i / kPerDecade));
    }
    if (fastest > 0) {
        const double high = std::min(fastest * 100.0, stop * std::pow(10.0, kMaxDecades));
        const int n = static_cast<int>(std::ceil(std::log10(high / stop) * kPerDecade));
        for (int i = 1; i <= n; ++i)
            out.above.push_back(stop * std::pow(10.0, i / kPerDecade));
    }
    return out;
}

namespace {

/// T at the samples Margins::nearCrossover lists, each phase unwrapped next to the one the
/// margin it belongs to was read with (the crossover's, or -180 deg at a phase crossing).
std::vector<LoopGainSample> loopGainNearCrossings(const LoopModel &model, const Margins &m)
{
    // The frequencies with the phase each is unwrapped next to.
    std::vector<std::pair<double, double>> at;
    if (m.crossoverHz && m.crossoverPhaseDeg) {
        const double atCrossover = *m.crossoverPhaseDeg * kPi / 180.0;
        for (double factor : {0.25, 0.5, 1.0, 2.0, 4.0})
            at.push_back({*m.crossoverHz * factor, atCrossover});
    }
    for (const GainMargin &g : m.gainMargins)
        at.push_back({g.frequencyHz, -kPi});
    if (at.empty())
        return {};
    // Shown as they are: solved as a sweep, so that a point even the careful solve cannot
    // assure warns like a sweep point (fuzz seed 102), which single evaluations do not.
    std::vector<std::complex<double>> s;
    for (const auto &[hz, reference] : at)
        s.push_back(jw(hz));
    const std::vector<std::complex<double>> t = model.loopGainOver(s);
    std::vector<LoopGainSample> samples;
    for (std::size_t i = 0; i < at.size(); ++i) {
        const double magnitude = std::abs(t[i]);
        if (std::isfinite(magnitude))
            samples.push_back(
                {at[i].first, magnitude, detail::degrees(phaseNear(t[i], at[i].second))});
    }
    std::sort(samples.begin(), samples.end(),
              [](const auto &a, const auto &b) { return a.frequencyHz < b.frequencyHz; });
    return samples;
}

} // namespace

Margins computeMargins(const LoopModel &model, const std::vector<double> &f, const Curve &t,
                       std::complex<double> tDc, MarginParts parts)
{
    Margins m;
    if (f.size() < 2)
        return m;
    double startPhase
        = std::isfinite(std::abs(tDc)) && std::abs(tDc) > 0 ? std::arg(tDc) : std::arg(t.front());
    // A loop gain negative at DC (positive feedback) starts at -180 degrees, not +180: its
    // phase margin at a crossover near DC is about 0, not 360.
    if (startPhase > kPi / 2)
        startPhase -= 2 * kPi;
    const std::vector<double> magnitude = magnitudesOf(t);
    const std::vector<double> phase = unwrapPhaseWith(t, magnitude, startPhase);
    const auto logMag = [&](double hz) {
        return std::log(std::abs(model.loopGainAt(jw(hz))));
    };
    // Gain crossovers: |T| passes 1. The logarithm is finite exactly for a finite, non-zero
    // magnitude and negative exactly below 1, so the magnitudes decide without it.
    const auto usable = [](double v) {
        return std::isfinite(v) && v > 0.0;
    };
    for (std::size_t i = 0; i + 1 < f.size(); ++i) {
        const double a = magnitude[i], b = magnitude[i + 1];
        if (!usable(a) || !usable(b) || (a < 1.0) == (b < 1.0))
            continue;
        const double fc = logRoot(logMag, f[i], f[i + 1]);
        const double ph = detail::degrees(phaseNear(model.loopGainAt(jw(fc)), phase[i]));
        const double pm = detail::phaseMarginDeg(ph);
        if (!m.phaseMarginDeg || pm < *m.phaseMarginDeg) {
            m.phaseMarginDeg = pm;
            m.crossoverPhaseDeg = ph;
            m.crossoverHz = fc;
        }
    }
    // Phase crossings: the unwrapped phase passes an odd multiple of -180 degrees, in
    // either direction (a conditionally stable loop's phase dips below -180 and comes back
    // before the crossover).
    for (std::size_t i = 0; parts.gainMargins && i + 1 < f.size(); ++i) {
        if (!std::isfinite(phase[i]) || !std::isfinite(phase[i + 1]))
            continue;
        const double lo = std::min(phase[i], phase[i + 1]), hi = std::max(phase[i], phase[i + 1]);
        // Odd multiples of pi in (lo, hi]: pi (2k + 1) for k from ceil((lo/pi - 1)/2).
        for (double k = std::ceil((lo / kPi - 1.0) / 2.0); (2 * k + 1) * kPi <= hi; ++k) {
            const double target = (2 * k + 1) * kPi;
            if (!(target > lo))
                continue;
            const double reference = phase[i];
            const auto offset = [&](double hz) {
                return phaseNear(model.loopGainAt(jw(hz)), reference) - target;
            };
            const double fp = logRoot(offset, f[i], f[i + 1]);
            const double gm = -20.0 * std::log10(std::abs(model.loopGainAt(jw(fp))));
            if (std::isfinite(gm))
                m.gainMargins.push_back({gm, fp});
        }
    }
    for (const GainMargin &g : m.gainMargins) {
        if (!m.gainMarginDb || std::abs(g.db) < std::abs(*m.gainMarginDb)) {
            m.gainMarginDb = g.db;
            m.phaseCrossoverHz = g.frequencyHz;
        }
    }
    if (parts.nearCrossover)
        m.nearCrossover = loopGainNearCrossings(model, m);
    return m;
}

OptionalNumber rateOfClosure(const LoopModel &model, OptionalNumber crossoverHz)
{
    if (!crossoverHz || !(*crossoverHz > 0))
        return std::nullopt;
    constexpr double kHalfStepDecades = 1e-4;
    const double step = std::pow(10.0, kHalfStepDecades);
    const double up = std::abs(model.loopGainAt(jw(*crossoverHz * step)));
    const double down = std::abs(model.loopGainAt(jw(*crossoverHz / step)));
    const double rate = -20.0 * (std::log10(up) - std::log10(down)) / (2 * kHalfStepDecades);
    if (!std::isfinite(rate))
        return std::nullopt;
    return rate;
}

Stability assessStability(const std::vector<ClosedLoopPole> &poles)
{
    Stability v;
    for (const ClosedLoopPole &p : poles) {
        const double re = p.s.real(), size = std::abs(p.s);
        if (re > 1e-9 * size)
            ++v.rhpPoles;
        else if (re >= -1e-9 * size)
            ++v.axisPoles;
    }
    v.stable = v.rhpPoles == 0 && v.axisPoles == 0;
    const auto count = [](int n, const char *what) {
        return std::to_string(n) + " closed-loop pole" + (n == 1 ? " " : "s ") + what;
    };
    if (v.rhpPoles > 0)
        v.reason = "unstable: " + count(v.rhpPoles, "in the right half-plane")
            + " (the output grows without bound)";
    else if (v.axisPoles > 0)
        v.reason = "unstable: " + count(v.axisPoles, "on the imaginary axis")
            + " (the output never settles)";
    return v;
}

namespace {

/// The first i from `from` where |gain| falls from `level` or above at i to below it at i + 1
/// (a NaN neither), or gain.size() when there is none.
std::size_t firstFall(const Curve &gain, std::size_t from, double level)
{
    double here = from < gain.size() ? std::abs(gain[from]) : 0.0;
    for (std::size_t i = from; i + 1 < gain.size(); ++i) {
        const double next = std::abs(gain[i + 1]);
        if (here >= level && next < level)
            return i;
        here = next;
    }
    return gain.size();
}

/// The -3 dB level of a DC gain, or nullopt where there is none.
OptionalNumber bandwidthLevel(double gainDc)
{
    if (!(std::abs(gainDc) > 0) || !std::isfinite(gainDc))
        return std::nullopt;
    return std::abs(gainDc) / std::sqrt(2.0);
}

/// The fall between f[i] and f[i + 1], refined on the model.
double refinedFall(const LoopModel &model, const std::vector<double> &f, std::size_t i,
                   double level)
{
    return logRoot([&](double hz) { return std::abs(model.gainAt(jw(hz))) - level; }, f[i],
                   f[i + 1]);
}

} // namespace

OptionalNumber computeBandwidth(const LoopModel &model, const std::vector<double> &f,
                                const Curve &gain, double gainDc)
{
    const OptionalNumber level = bandwidthLevel(gainDc);
    if (!level)
        return std::nullopt;
    const std::size_t i = firstFall(gain, 0, *level);
    if (i >= gain.size() || i + 1 >= f.size())
        return std::nullopt;
    return refinedFall(model, f, i, *level);
}

OptionalNumber bandwidthSweptToFall(const LoopModel &model, const std::vector<double> &f,
                                    std::span<const std::complex<double>> points, double gainDc)
{
    const OptionalNumber level = bandwidthLevel(gainDc);
    if (!level)
        return std::nullopt;
    // A block of the sweep at a time, up to the block where the gain first falls: each point
    // is solved on its own (ReducedSystem::sweepEntries), so the values, and the fall found
    // among them, are those of the whole sweep.
    constexpr std::size_t kBlock = 128;
    Curve gain;
    for (std::size_t start = 0; start < points.size() && start < f.size(); start += kBlock) {
        const Curve block
            = model.gainOver(points.subspan(start, std::min(kBlock, points.size() - start)));
        gain.insert(gain.end(), block.begin(), block.end());
        if (const std::size_t i = firstFall(gain, start == 0 ? 0 : start - 1, *level);
            i < gain.size() && i + 1 < f.size())
            return refinedFall(model, f, i, *level);
    }
    return std::nullopt;
}

Peaking computePeaking(const LoopModel &model, const std::vector<double> &f, const Curve &gain,
                       double gainDc)
{
    Peaking out;
    const double g0 = std::abs(gainDc);
    if (!(g0 > 0) || !std::isfinite(g0) || f.empty())
        return out;
    const std::vector<double> m = magnitudesOf(gain);
    const double level = g0 / std::sqrt(2.0);
    std::size_t end = 0; // the passband: indices below `end`
    while (end < m.size() && !(m[end] < level))
        ++end;
    const auto refine = [&](std::size_t i, std::size_t lastIndex) {
        if (i == 0 || i >= lastIndex)
            return std::pair{m[i], f[i]};
        const double hz = maximiseLog([&](double x) { return std::abs(model.gainAt(jw(x))); },
                                      f[i - 1], f[i + 1]);
        const double v = std::abs(model.gainAt(jw(hz)));
        return v >= m[i] ? std::pair{v, hz} : std::pair{m[i], f[i]};
    };
    const auto largest = [&](std::size_t from, std::size_t to) {
        std::size_t best = from;
        for (std::size_t i = from; i < to; ++i)
            if (std::isfinite(m[i]) && !(m[i] <= m[best]))
                best = i;
        return best;
    };
    out.db = 0.0;
    if (end > 0) {
        const std::size_t peak = largest(0, end);
        const auto [v, hz] = refine(peak, m.size() - 1);
        if (v > g0 * (1 + 1e-12) && peak > 0) {
            out.db = 20.0 * std::log10(v / g0);
            out.hz = hz;
        }
    }
    if (end < m.size()) {
        std::size_t dip = end;
        for (std::size_t i = end; i < m.size(); ++i)
            if (std::isfinite(m[i]) && m[i] < m[dip])
                dip = i;
        const std::size_t rise = largest(dip, m.size());
        if (m[rise] > m[dip] * std::pow(10.0, 1.0 / 20.0)) {
            const auto [v, hz] = refine(rise, m.size() - 1);
            out.feedthroughDb = 20.0 * std::log10(v / g0);
            if (rise + 1 < m.size())
                out.feedthroughHz = hz;
        }
    }
    return out;
}

std::vector<ClosedLoopPole> describePoles(const std::vector<std::complex<double>> &poles)
{
    std::vector<ClosedLoopPole> out;
    for (const auto &s : poles) {
        ClosedLoopPole p;
        p.s = s;
        const double wn = std::abs(s);
        p.naturalHz = wn / (2 * kPi);
        p.damping = wn > 0 ? -s.real() / wn : 1.0;
        // A pole at the origin is real: Q = 1/(2 damping) = 0.5 as for any real pole.
        p.q = s.real() != 0.0 ? wn / (-2.0 * s.real())
            : wn > 0          ? std::numeric_limits<double>::infinity()
                              : 0.5;
        out.push_back(p);
    }
    return out;
}

namespace {

/// Uniform steps over the display span in the step response's scan grid.
constexpr int kStepPoints = 2000;

/// The times the step response is sampled at (s), and the display span among them.
struct StepGrid
{
    double span = 0.0; ///< the display span (s)
    std::vector<double> t; ///< the scan grid (s), from 0
};

StepGrid stepGrid(const StepModel &model, const std::vector<ClosedLoopPole> &poles,
                  OptionalNumber bandwidthHz)
{
    // Display span: 20 closed-loop time constants, stretched for slow, lightly damped poles
    // that sit below the bandwidth, capped so that one stray slow pole cannot flatten the
    // plot (the settling time stretches it again below).
    double fast = bandwidthHz ? 2 * kPi * *bandwidthHz : 0.0;
    double slowest = std::numeric_limits<double>::infinity();
    for (const auto &p : poles)
        if (p.s.real() < 0)
            slowest = std::min(slowest, -p.s.real());
    for (const auto &p : model.modes())
        if (p.real() < 0)
            slowest = std::min(slowest, -p.real());
    if (!(fast > 0))
        fast = std::isfinite(slowest) ? slowest : 1.0;
    double span = 20.0 / fast;
    for (const auto &p : poles)
        if (p.s.real() < 0 && -p.s.real() < fast)
            span = std::max(span, 7.0 / -p.s.real());
    span = std::min(span, 2e3 / fast);
    // Scan grid: kStepPoints uniform steps over the span, then runs of 16 steps whose length
    // doubles from run to run, until the slowest mode has decayed by e^-30 (1e-13):
    // exact at each point (sample() squares the propagator as the step doubles).
    StepGrid g;
    g.span = span;
    std::vector<double> &t = g.t;
    t.resize(kStepPoints + 1);
    for (int i = 0; i <= kStepPoints; ++i)
        t[i] = span * i / kStepPoints;
    const double end = std::isfinite(slowest) ? 30.0 / slowest : span;
    double dt = span / kStepPoints;
    while (t.back() < end && t.size() < 100000) {
        for (int i = 0; i < 16; ++i)
            t.push_back(t.back() + dt);
        dt *= 2.0;
    }
    return g;
}

/// Why the sampled response `y` cannot carry the step metrics, or nothing where it can.
std::optional<std::string> stepUnresolved(const std::vector<double> &y, double finalValue,
                                          double band)
{
    // The grid runs on until every mode has decayed, so its last value is the final value
    // up to round-off of the largest swing; anything else (a stiff propagator that lost its
    // accuracy over long times) makes every metric untrustworthy: none is reported.
    double swing = std::abs(finalValue);
    bool finite = true;
    for (double v : y) {
        finite = finite && std::isfinite(v);
        swing = std::max(swing, std::abs(v));
    }
    if (!finite || !(std::abs(y.back() - finalValue) <= 1e-6 * swing))
        return "the step response could not be computed accurately on this stiff "
               "loop (its time-domain model does not settle to the DC gain)";
    // Round-off of the largest swing (about 1e-10 of it, with the cancellation between
    // modes) must stay well inside the settling band, or rise, overshoot and settling
    // would be read off round-off.
    if (!(1e-10 * swing <= 0.1 * band * std::abs(finalValue))) {
        char ratio[32];
        std::snprintf(ratio, sizeof ratio, "%.2g", swing / std::abs(finalValue));
        return std::string("the step response swings to ") + ratio
            + " times its final value: the metrics cannot be resolved within the "
              "settling band";
    }
    return std::nullopt;
}

} // namespace

StepResult computeStep(const StepModel &model, const std::vector<ClosedLoopPole> &poles,
                       OptionalNumber bandwidthHz, double finalValue, double band)
{
    StepResult r;
    r.finalValue = finalValue;
    r.settlingBand = band;
    if (!std::isfinite(finalValue) || finalValue == 0.0)
        return r;
    const StepGrid grid = stepGrid(model, poles, bandwidthHz);
    const double span = grid.span;
    const std::vector<double> &t = grid.t;
    const std::vector<double> y = model.sample(t);
    if (auto problem = stepUnresolved(y, finalValue, band)) {
        r.problem = std::move(*problem);
        return r;
    }
    const auto normalised = [&](double time) {
        return model.valueAt(time) / finalValue;
    };
    const auto at = [&](std::size_t i) {
        return y[i] / finalValue;
    };
    const auto cross = [&](std::size_t i, const auto &offset) {
        return crossingIn(offset, t[i], t[i + 1]);
    };
    const auto firstCrossing = [&](double level) -> OptionalNumber {
        for (std::size_t i = 0; i + 1 < y.size(); ++i)
            if (at(i) < level && at(i + 1) >= level)
                return cross(i, [&](double time) { return normalised(time) - level; });
        return std::nullopt;
    };
    const auto t10 = firstCrossing(0.1), t90 = firstCrossing(0.9);
    if (t10 && t90)
        r.riseTimeS = *t90 - *t10;
    // Overshoot: the largest grid value, refined where the slope changes sign.
    std::size_t peak = 0;
    for (std::size_t i = 0; i < y.size(); ++i)
        if (at(i) > at(peak))
            peak = i;
    double peakValue = at(peak);
    if (peak > 0 && peak + 1 < y.size()) {
        const auto slope = [&](double time) {
            return -model.slopeAt(time) / finalValue;
        };
        for (std::size_t i : {peak - 1, peak}) {
            if ((slope(t[i]) < 0) != (slope(t[i + 1]) < 0))
                peakValue = std::max(peakValue, normalised(cross(i, slope)));
        }
    }
    r.overshootPct = std::max(0.0, (peakValue - 1.0) * 100.0);
    // Settling: the last time the response leaves the band, refined on the model.
    std::size_t lastOutside = y.size();
    for (std::size_t i = y.size(); i-- > 0;) {
        if (std::abs(at(i) - 1.0) > band) {
            lastOutside = i;
            break;
        }
    }
    if (lastOutside == y.size())
        r.settlingTimeS = 0.0;
    else if (lastOutside + 1 < y.size())
        r.settlingTimeS = cross(
            lastOutside, [&](double time) { return std::abs(normalised(time) - 1.0) - band; });
    // The curve shown: the display span, stretched to 1.25 times the settling time and on
    // until the response stays within 1e-10 of the final value (so the curve ends at the
    // DC gain), but to no more than 100 spans: a slow mode of tiny weight must not flatten
    // the plot.
    std::size_t lastAway = 0;
    for (std::size_t i = y.size(); i-- > 0;) {
        if (std::abs(at(i) - 1.0) > 1e-10) {
            lastAway = std::min(i + 1, y.size() - 1);
            break;
        }
    }
    double shown = std::max(span, r.settlingTimeS ? 1.25 * *r.settlingTimeS : 0.0);
    shown = std::max(shown, std::min(t[lastAway], 100.0 * span));
    for (std::size_t i = 0; i < y.size() && (i <= kStepPoints || t[i] <= shown); ++i) {
        r.timeS.push_back(t[i]);
        r.response.push_back(y[i]);
    }
    return r;
}

} // namespace loopsketch
