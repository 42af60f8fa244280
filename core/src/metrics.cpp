#include "loopsketch/metrics.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace loopsketch {

namespace {

constexpr double kPi = std::numbers::pi;
constexpr int kBisectionSteps = 60;

std::complex<double> jw(double hz)
{
    return {0.0, 2.0 * kPi * hz};
}

/// Root of f on [lo, hi] (Hz, f(lo) and f(hi) of opposite signs), in log f, to a relative
/// width of 1e-13. Regula falsi with the Illinois modification: on the smooth curves of one
/// sweep interval it needs about ten evaluations where halving needs some forty; where four
/// steps fail to halve the bracket the next one halves it, so it is never much slower.
template<typename F> double bisectLog(F f, double lo, double hi)
{
    double a = std::log(lo), b = std::log(hi);
    double fa = f(lo), fb = f(hi);
    if (!std::isfinite(fa) || !std::isfinite(fb) || fa == 0.0 || fb == 0.0
        || (fa < 0) == (fb < 0)) {
        // Not a clean bracket: plain halving on the sign of f(lo), as the sweep saw it.
        for (int i = 0; i < kBisectionSteps && std::exp(b - a) - 1.0 >= 1e-13; ++i) {
            const double mid = 0.5 * (a + b);
            const double fm = f(std::exp(mid));
            if (!std::isfinite(fm))
                break;
            if ((fm < 0) == (fa < 0)) {
                a = mid;
                fa = fm;
            } else {
                b = mid;
            }
        }
        return std::exp(0.5 * (a + b));
    }
    int kept = 0; // +1: the lower end moved last time, -1: the upper end
    double checkpoint = b - a; // bracket width four steps ago
    for (int i = 0; i < 2 * kBisectionSteps && std::exp(b - a) - 1.0 >= 1e-13; ++i) {
        const bool halve = i % 4 == 3 && b - a > 0.5 * checkpoint;
        if (i % 4 == 3)
            checkpoint = b - a;
        double x = halve ? 0.5 * (a + b) : (a * fb - b * fa) / (fb - fa);
        if (!(x > a && x < b))
            x = 0.5 * (a + b);
        const double fx = f(std::exp(x));
        if (!std::isfinite(fx))
            break;
        if (fx == 0.0)
            return std::exp(x);
        if ((fx < 0) == (fa < 0)) {
            a = x;
            fa = fx;
            if (kept == 1)
                fb *= 0.5;
            kept = 1;
        } else {
            b = x;
            fb = fx;
            if (kept == -1)
                fa *= 0.5;
            kept = -1;
        }
    }
    return std::exp(0.5 * (a + b));
}

/// The phase of v nearest to `reference` (rad), i.e. arg(v) + 2 pi k.
double phaseNear(std::complex<double> v, double reference)
{
    const double p = std::arg(v);
    return p + 2.0 * kPi * std::round((reference - p) / (2.0 * kPi));
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

} // namespace

std::vector<double> unwrapPhase(const Curve &values, double start)
{
    return unwrapPhaseWith(values, magnitudesOf(values), start);
}

Margins computeMargins(const LoopModel &model, const std::vector<double> &f, const Curve &t,
                       std::complex<double> tDc)
{
    Margins m;
    if (f.size() < 2)
        return m;
    const double startPhase
        = std::isfinite(std::abs(tDc)) && std::abs(tDc) > 0 ? std::arg(tDc) : std::arg(t.front());
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
        const double fc = bisectLog(logMag, f[i], f[i + 1]);
        const double ph = phaseNear(model.loopGainAt(jw(fc)), phase[i]);
        const double pm = 180.0 + ph * 180.0 / kPi;
        if (!m.phaseMarginDeg || pm < *m.phaseMarginDeg) {
            m.phaseMarginDeg = pm;
            m.crossoverHz = fc;
        }
    }
    // Phase crossovers: the unwrapped phase passes an odd multiple of -180 degrees.
    for (std::size_t i = 0; i + 1 < f.size(); ++i) {
        if (!std::isfinite(phase[i]) || !std::isfinite(phase[i + 1]))
            continue;
        const double k = std::floor((phase[i] + kPi) / (2 * kPi));
        const double target = 2 * kPi * k - kPi; // the -180 (mod 360) level just below
        if (!(phase[i] > target && phase[i + 1] <= target))
            continue;
        const auto offset = [&](double hz) {
            return phaseNear(model.loopGainAt(jw(hz)), phase[i]) - target;
        };
        const double fp = bisectLog(offset, f[i], f[i + 1]);
        const double gm = -20.0 * std::log10(std::abs(model.loopGainAt(jw(fp))));
        if (!m.gainMarginDb || gm < *m.gainMarginDb) {
            m.gainMarginDb = gm;
            m.phaseCrossoverHz = fp;
        }
    }
    return m;
}

OptionalNumber computeBandwidth(const LoopModel &model, const std::vector<double> &f,
                                const Curve &gain, double gainDc)
{
    if (!(std::abs(gainDc) > 0) || !std::isfinite(gainDc))
        return std::nullopt;
    const double level = std::abs(gainDc) / std::sqrt(2.0);
    double here = f.empty() ? 0.0 : std::abs(gain[0]);
    for (std::size_t i = 0; i + 1 < f.size(); ++i) {
        const double next = std::abs(gain[i + 1]);
        if (here >= level && next < level) {
            return bisectLog([&](double hz) { return std::abs(model.gainAt(jw(hz))) - level; },
                             f[i], f[i + 1]);
        }
        here = next;
    }
    return std::nullopt;
}

OptionalNumber computePeaking(const Curve &gain, double gainDc)
{
    if (!(std::abs(gainDc) > 0) || !std::isfinite(gainDc))
        return std::nullopt;
    // The decibel level rises with the magnitude: one logarithm, of the largest.
    double largest = -1.0;
    for (const auto &g : gain) {
        const double magnitude = std::abs(g);
        if (std::isfinite(magnitude))
            largest = std::max(largest, magnitude);
    }
    if (largest < 0.0)
        return 0.0;
    return std::max(0.0, 20.0 * std::log10(largest / std::abs(gainDc)));
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
        p.q = s.real() != 0.0 ? wn / (-2.0 * s.real()) : std::numeric_limits<double>::infinity();
        out.push_back(p);
    }
    return out;
}

StepResult computeStep(const LoopModel &model, const std::vector<ClosedLoopPole> &poles,
                       OptionalNumber bandwidthHz, double finalValue)
{
    StepResult r;
    r.finalValue = finalValue;
    // Span: 20 closed-loop time constants, stretched for slow, lightly damped poles that
    // sit below the bandwidth, capped so that one stray slow pole cannot flatten the plot.
    double fast = bandwidthHz ? 2 * kPi * *bandwidthHz : 0.0;
    double slowest = std::numeric_limits<double>::infinity();
    for (const auto &p : poles)
        if (p.s.real() < 0)
            slowest = std::min(slowest, -p.s.real());
    if (!(fast > 0))
        fast = std::isfinite(slowest) ? slowest : 1.0;
    double span = 20.0 / fast;
    for (const auto &p : poles)
        if (p.s.real() < 0 && -p.s.real() < fast)
            span = std::max(span, 7.0 / -p.s.real());
    span = std::min(span, 2e3 / fast);
    constexpr int kPoints = 2000;
    r.timeS.resize(kPoints + 1);
    for (int i = 0; i <= kPoints; ++i)
        r.timeS[i] = span * i / kPoints;
    auto y = model.stepResponse(r.timeS);
    if (!y || !std::isfinite(finalValue) || finalValue == 0.0) {
        r.timeS.clear();
        return r;
    }
    r.response = std::move(y).value();
    const auto &t = r.timeS;
    const auto &v = r.response;
    const auto normalised = [&](std::size_t i) {
        return v[i] / finalValue;
    };
    const auto crossing = [&](double level) -> OptionalNumber {
        for (std::size_t i = 0; i + 1 < v.size(); ++i) {
            const double a = normalised(i), b = normalised(i + 1);
            if (a < level && b >= level)
                return t[i] + (level - a) / (b - a) * (t[i + 1] - t[i]);
        }
        return std::nullopt;
    };
    const auto t10 = crossing(0.1), t90 = crossing(0.9);
    if (t10 && t90)
        r.riseTimeS = *t90 - *t10;
    double peak = -std::numeric_limits<double>::infinity();
    for (std::size_t i = 0; i < v.size(); ++i)
        peak = std::max(peak, normalised(i));
    r.overshootPct = std::max(0.0, (peak - 1.0) * 100.0);
    std::size_t lastOutside = v.size();
    for (std::size_t i = v.size(); i-- > 0;) {
        if (std::abs(normalised(i) - 1.0) > 0.01) {
            lastOutside = i;
            break;
        }
    }
    if (lastOutside == v.size())
        r.settlingTimeS = 0.0;
    else if (lastOutside + 1 < v.size() - 1) // settled well before the end of the span
        r.settlingTimeS = t[lastOutside + 1];
    return r;
}

} // namespace loopsketch
