#include "support/polescale.h"

#include <algorithm>
#include <cmath>

namespace loopsketch::ui {

PoleScale PoleScale::fit(const std::vector<ClosedLoopPole> &poles)
{
    PoleScale scale;
    double smallest = 0;
    for (const ClosedLoopPole &p : poles) {
        if (!std::isfinite(p.s.real()) || !std::isfinite(p.s.imag()))
            continue;
        const double magnitude = std::abs(p.s);
        if (magnitude > 0 && (smallest == 0 || magnitude < smallest))
            smallest = magnitude;
    }
    scale.r0 = smallest > 0 ? std::pow(10.0, std::floor(std::log10(smallest))) : 1.0;
    for (const ClosedLoopPole &p : poles) {
        if (!std::isfinite(p.s.real()) || !std::isfinite(p.s.imag()))
            continue;
        const QPointF at = scale.map(p.s);
        scale.outer = std::max(scale.outer, std::hypot(at.x(), at.y()));
        scale.rightMost = std::max(scale.rightMost, at.x());
    }
    scale.rings
        = smallest > 0 ? std::min(40, int(std::floor(scale.outer - kInnerRadius + 1e-9)) + 1) : 0;
    return scale;
}

QPointF PoleScale::map(std::complex<double> s) const
{
    const double magnitude = std::abs(s);
    if (!(magnitude > 0))
        return {0.0, 0.0};
    const double radius = kInnerRadius + std::log10(magnitude / r0);
    return {radius * s.real() / magnitude, radius * s.imag() / magnitude};
}

double PoleScale::ringValue(int k) const
{
    return r0 * std::pow(10.0, double(k));
}

} // namespace loopsketch::ui
