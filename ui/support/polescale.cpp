#include "support/polescale.h"

#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

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

namespace {

/// "−860k" with a true minus sign.
QString signedEngineering(double value)
{
    QString text = toQString(formatEngineering(value, 3));
    if (text.startsWith(QLatin1Char('-')))
        text.replace(0, 1, QStringLiteral("−"));
    return text;
}

} // namespace

std::vector<PoleValueLabel> poleValueLabels(const std::vector<ClosedLoopPole> &poles)
{
    std::vector<PoleValueLabel> labels;
    std::vector<bool> done(poles.size(), false);
    for (std::size_t i = 0; i < poles.size(); ++i) {
        if (done[i] || poles[i].s.imag() < 0)
            continue;
        int same = 0;
        for (std::size_t j = i; j < poles.size(); ++j) {
            if (!done[j] && std::abs(poles[j].s - poles[i].s) <= 1e-9 * std::abs(poles[i].s)) {
                done[j] = true;
                ++same;
            }
        }
        const std::complex<double> s = poles[i].s;
        QString text = signedEngineering(s.real());
        if (s.imag() > 0)
            text += QStringLiteral(" ± j") + toQString(formatEngineering(s.imag(), 3));
        if (same > 1)
            text += QStringLiteral(" (×%1)").arg(same);
        labels.push_back({i, text, std::abs(s)});
    }
    std::stable_sort(
        labels.begin(), labels.end(),
        [](const PoleValueLabel &l, const PoleValueLabel &r) { return l.size < r.size; });
    return labels;
}

} // namespace loopsketch::ui
