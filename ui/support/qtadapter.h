#pragma once

// The one place where core types become Qt types and back: strings, curves as chart points.

#include "loopsketch/analysis/analysis.h"

#include <QList>
#include <QPointF>
#include <QString>

#include <complex>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch::ui {

inline QString toQString(std::string_view text)
{
    return QString::fromUtf8(text.data(), qsizetype(text.size()));
}

inline std::string toStdString(const QString &text)
{
    return text.toStdString();
}

/// What a chart draws of a complex curve.
enum class CurvePart { MagnitudeDb, PhaseDeg, Log10Magnitude };

/// Chart points (x = log10 of the frequency in Hz) of one part of a curve. Points where the
/// value is not finite are left out, so a chart never receives NaN or infinity.
QList<QPointF> curvePoints(const std::vector<double> &frequenciesHz, const Curve &curve,
                           CurvePart part);

/// Points of two real arrays, non-finite pairs left out; x and y scaled by the factors.
QList<QPointF> realPoints(const std::vector<double> &x, const std::vector<double> &y,
                          double xScale = 1.0, double yScale = 1.0);

/// Engineering text with unit for an optional number, "—" when absent.
QString engineering(const OptionalNumber &value, std::string_view unit, int digits = 3);

/// An angle in degrees with three significant digits ("63.4°"), "—" when absent or not
/// finite: the one way the window and the review sheet write phase and phase margin.
QString degrees(const OptionalNumber &valueDeg);

/// The prefix letter and factor that show `magnitude` with 1 to 3 digits before the point
/// (1.2e-6 -> {"µ", 1e6}).
struct ScalePrefix
{
    QString prefix;
    double factor = 1.0;
};
ScalePrefix scalePrefixFor(double magnitude);

/// The closed-loop poles that make the loop unstable (right half-plane, then the jω axis),
/// a conjugate pair as one "a ± jb rad/s"; at most `limit` entries, then "and n more".
QString unstablePolesText(const Analysis &analysis, int limit = 3);

/// "shunt-shunt · y parameters · transresistance", or the reason there is no two-port form.
QString topologyBadge(const Analysis &analysis);

} // namespace loopsketch::ui
