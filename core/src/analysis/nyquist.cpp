#include "loopsketch/analysis/nyquist.h"

#include "detail/phase.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>

namespace loopsketch {

namespace {

constexpr double kPi = std::numbers::pi;
/// A step of the phase of 1 + T (rad) above which the interval is halved: well below pi,
/// so the unwrapped sum cannot miss a turn between two samples.
constexpr double kLargestPhaseStep = 0.5;
constexpr int kMostHalvings = 48;

bool onAxis(std::complex<double> s)
{
    return std::abs(s.real()) <= 1e-9 * std::abs(s);
}

std::string hertz(double hz)
{
    char text[32];
    std::snprintf(text, sizeof text, "%.4g Hz", hz);
    return text;
}

} // namespace

NyquistCount countEncirclements(const LoopModel &model,
                                const std::vector<std::complex<double>> &loopGainPoles,
                                const std::vector<std::complex<double>> &closedLoopPoles)
{
    NyquistCount n;
    for (const std::complex<double> &p : loopGainPoles) {
        if (onAxis(p)) {
            n.reason = "not counted: T has a pole on the imaginary axis (at "
                + hertz(std::abs(p.imag()) / (2 * kPi))
                + "), which the contour would have to pass around";
            return n;
        }
        if (p.real() > 0)
            ++n.openLoopRhpPoles;
    }
    for (const std::complex<double> &p : closedLoopPoles)
        if (onAxis(p)) {
            n.reason = "not counted: T passes through -1 (a closed-loop pole on the imaginary "
                       "axis, at "
                + hertz(std::abs(p.imag()) / (2 * kPi)) + ")";
            return n;
        }

    // The frequencies where T may turn fast: every pole's natural frequency and the band its
    // damping spreads over, on a grid from far below the slowest to far above the fastest.
    std::vector<double> marks;
    for (const auto *poles : {&loopGainPoles, &closedLoopPoles})
        for (const std::complex<double> &p : *poles) {
            const double size = std::abs(p) / (2 * kPi), im = std::abs(p.imag()) / (2 * kPi);
            const double re = std::abs(p.real()) / (2 * kPi);
            for (double hz : {size, im, im - re, im + re})
                if (std::isfinite(hz) && hz > 0)
                    marks.push_back(hz);
        }
    double lo = 1e-3, hi = 1e12;
    if (!marks.empty()) {
        lo = *std::min_element(marks.begin(), marks.end()) * 1e-4;
        hi = *std::max_element(marks.begin(), marks.end()) * 1e4;
    }
    std::vector<double> f;
    const double decades = std::log10(hi / lo);
    const int points = static_cast<int>(std::ceil(decades * 20.0));
    for (int i = 0; i <= points; ++i)
        f.push_back(lo * std::pow(10.0, decades * i / points));
    f.insert(f.end(), marks.begin(), marks.end());
    std::sort(f.begin(), f.end());
    f.erase(std::unique(f.begin(), f.end()), f.end());

    std::vector<std::complex<double>> s(f.size());
    for (std::size_t i = 0; i < f.size(); ++i)
        s[i] = detail::jw(f[i]);
    std::vector<std::complex<double>> t = model.loopGainOver(s);
    f.insert(f.begin(), 0.0);
    t.insert(t.begin(), model.loopGainAt(0.0));

    bool lost = false;
    // The phase change of 1 + T from fa to fb, halving in log f where it moves fast.
    const auto change = [&](auto &self, double fa, std::complex<double> ta, double fb,
                            std::complex<double> tb, int depth) -> double {
        const double step = std::arg((1.0 + tb) / (1.0 + ta));
        if (!std::isfinite(step)) {
            lost = true;
            return 0;
        }
        if (std::abs(step) <= kLargestPhaseStep)
            return step;
        if (depth >= kMostHalvings) {
            lost = true;
            return step;
        }
        const double fm = fa > 0 ? std::sqrt(fa * fb) : 0.5 * fb;
        const std::complex<double> tm = model.loopGainAt(detail::jw(fm));
        return self(self, fa, ta, fm, tm, depth + 1) + self(self, fm, tm, fb, tb, depth + 1);
    };
    double total = 0;
    for (std::size_t i = 0; i + 1 < f.size() && !lost; ++i)
        total += change(change, f[i], t[i], f[i + 1], t[i + 1], 0);
    // From -infinity to +infinity: twice the change from 0 to +infinity, since
    // T(-jw) = conj T(jw); counter-clockwise turns are positive there, clockwise ones here.
    const double turns = -total / kPi;
    const double whole = std::round(turns);
    if (lost || std::abs(turns - whole) > 0.05) {
        n.reason = "not counted: the phase of 1 + T could not be followed to its end";
        return n;
    }
    n.encirclements = static_cast<int>(whole);
    return n;
}

} // namespace loopsketch
