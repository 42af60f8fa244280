#pragma once

// The one root finder of core: regula falsi with the Illinois modification. In log f it
// locates the crossings of the metrics (crossover, phase crossings, bandwidth) and of the
// lean per-trial metrics of spread and suggest, so the two agree to its tolerance; in time,
// the step response's crossings.

#include <cmath>

namespace loopsketch::detail {

/// Relative width in frequency to which logRoot() narrows its bracket.
inline constexpr double kLogRootTolerance = 1e-13;
/// Halving steps of the fallback; regula falsi takes at most twice as many.
inline constexpr int kLogRootSteps = 60;

/// Regula falsi with the Illinois modification on [a, b], where fa = f(a) and fb = f(b) have
/// opposite signs: on a smooth function about ten evaluations where halving needs some forty
/// or fifty; where four steps fail to halve the bracket the next one halves it, so it is
/// never much slower. Runs until `narrow(a, b)` holds or after `maxSteps` evaluations, and
/// stops where f is not finite. Returns an exact zero found, else the middle of the bracket.
template<typename F, typename Narrow>
double illinoisRoot(F f, double a, double b, double fa, double fb, Narrow narrow, int maxSteps)
{
    int kept = 0; // +1: the lower end moved last time, -1: the upper end
    double checkpoint = b - a; // bracket width four steps ago
    for (int i = 0; i < maxSteps && !narrow(a, b); ++i) {
        const bool halve = i % 4 == 3 && b - a > 0.5 * checkpoint;
        if (i % 4 == 3)
            checkpoint = b - a;
        double x = halve ? 0.5 * (a + b) : (a * fb - b * fa) / (fb - fa);
        if (!(x > a && x < b))
            x = 0.5 * (a + b);
        const double fx = f(x);
        if (!std::isfinite(fx))
            break;
        if (fx == 0.0)
            return x;
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
    return 0.5 * (a + b);
}

/// logRoot() with f(lo) and f(hi) already known (from a sweep that computed the same values),
/// so that they are not evaluated again.
template<typename F> double logRoot(F f, double lo, double hi, double fLo, double fHi)
{
    double a = std::log(lo), b = std::log(hi);
    double fa = fLo, fb = fHi;
    const auto narrow = [](double x0, double x1) {
        return std::exp(x1 - x0) - 1.0 < kLogRootTolerance;
    };
    if (!std::isfinite(fa) || !std::isfinite(fb) || fa == 0.0 || fb == 0.0
        || (fa < 0) == (fb < 0)) {
        for (int i = 0; i < kLogRootSteps && !narrow(a, b); ++i) {
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
    const auto inLog = [&f](double x) {
        return f(std::exp(x));
    };
    return std::exp(illinoisRoot(inLog, a, b, fa, fb, narrow, 2 * kLogRootSteps));
}

/// Root of f on [lo, hi] (Hz, f(lo) and f(hi) of opposite signs), in log f, to a relative
/// width of kLogRootTolerance, by illinoisRoot(). Without a clean bracket (an end not finite
/// or zero, or no sign change) it halves on the sign of f(lo), as the sweep saw it. Stops
/// where f is not finite.
template<typename F> double logRoot(F f, double lo, double hi)
{
    return logRoot(f, lo, hi, f(lo), f(hi));
}

} // namespace loopsketch::detail
