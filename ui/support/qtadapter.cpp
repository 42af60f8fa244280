#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QStringList>

#include <cmath>
#include <numbers>

namespace loopsketch::ui {

QList<QPointF> curvePoints(const std::vector<double> &frequenciesHz, const Curve &curve,
                           CurvePart part)
{
    QList<QPointF> points;
    const std::size_t n = std::min(frequenciesHz.size(), curve.size());
    points.reserve(qsizetype(n));
    double previousPhase = 0.0;
    double unwrap = 0.0;
    bool havePhase = false;
    for (std::size_t i = 0; i < n; ++i) {
        const double f = frequenciesHz[i];
        const std::complex<double> v = curve[i];
        if (!(f > 0) || !std::isfinite(v.real()) || !std::isfinite(v.imag()))
            continue;
        double y = 0.0;
        switch (part) {
        case CurvePart::MagnitudeDb:
            y = toDecibels(std::abs(v));
            break;
        case CurvePart::Log10Magnitude:
            y = std::abs(v) > 0 ? std::log10(std::abs(v)) : -INFINITY;
            break;
        case CurvePart::PhaseDeg: {
            // Unwrapped from the lowest frequency so a phase that passes -180 deg reads on.
            const double raw = std::arg(v) * 180.0 / std::numbers::pi;
            if (havePhase) {
                double d = raw + unwrap - previousPhase;
                while (d > 180.0) {
                    unwrap -= 360.0;
                    d -= 360.0;
                }
                while (d < -180.0) {
                    unwrap += 360.0;
                    d += 360.0;
                }
            }
            y = raw + unwrap;
            previousPhase = y;
            havePhase = true;
            break;
        }
        }
        if (std::isfinite(y))
            points.append(QPointF(std::log10(f), y));
    }
    return points;
}

QList<QPointF> realPoints(const std::vector<double> &x, const std::vector<double> &y, double xScale,
                          double yScale)
{
    QList<QPointF> points;
    const std::size_t n = std::min(x.size(), y.size());
    points.reserve(qsizetype(n));
    for (std::size_t i = 0; i < n; ++i) {
        const double px = x[i] * xScale;
        const double py = y[i] * yScale;
        if (std::isfinite(px) && std::isfinite(py))
            points.append(QPointF(px, py));
    }
    return points;
}

QString engineering(const OptionalNumber &value, std::string_view unit, int digits)
{
    if (!value)
        return QStringLiteral("—");
    return toQString(formatEngineering(*value, digits, unit));
}

QString degrees(const OptionalNumber &valueDeg)
{
    if (!valueDeg || !std::isfinite(*valueDeg))
        return QStringLiteral("—");
    return toQString(formatEngineering(*valueDeg, 3)) + QStringLiteral("°");
}

ScalePrefix scalePrefixFor(double magnitude)
{
    static const struct
    {
        double factor;
        const char *prefix;
    } table[] = {{1e-12, "T"}, {1e-9, "G"}, {1e-6, "M"}, {1e-3, "k"}, {1.0, ""},
                 {1e3, "m"},   {1e6, "µ"},  {1e9, "n"},  {1e12, "p"}, {1e15, "f"}};
    if (!(magnitude > 0) || !std::isfinite(magnitude))
        return {};
    for (const auto &row : table) {
        if (magnitude * row.factor >= 0.9995)
            return {QString::fromUtf8(row.prefix), row.factor};
    }
    return {QStringLiteral("f"), 1e15};
}

QString topologyBadge(const Analysis &analysis)
{
    if (!analysis.topology)
        return QStringLiteral("no two-port form: ") + toQString(analysis.topologyReason);
    const Topology &t = *analysis.topology;
    return toQString(t.name()) + QStringLiteral(" · ") + toQString(toString(t.parameters()))
        + QStringLiteral(" parameters · ") + toQString(t.gainType());
}

QString unstablePolesText(const Analysis &a, int limit)
{
    QStringList shown;
    int more = 0;
    for (const ClosedLoopPole &p : a.poles) {
        if (p.s.real() < -1e-9 * std::abs(p.s) || p.s.imag() < 0)
            continue; // stable, or the lower half of a pair shown with its upper half
        if (static_cast<int>(shown.size()) >= limit) {
            ++more;
            continue;
        }
        QString text = toQString(formatEngineering(p.s.real(), 3));
        if (p.s.imag() > 0)
            text += QStringLiteral(" ± j") + toQString(formatEngineering(p.s.imag(), 3));
        shown << text + QStringLiteral(" rad/s");
    }
    QString text = shown.join(QStringLiteral(", "));
    if (more > 0)
        text += QStringLiteral(" and %1 more").arg(more);
    return text;
}

} // namespace loopsketch::ui
