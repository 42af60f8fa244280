#include "sheet/sheetplots.h"

#include "panels/noisepanel.h"
#include "sheet/sheetwriter.h"
#include "support/plotstyle.h"
#include "support/polescale.h"

#include "loopsketch/analysis/metrics.h"

#include <QFontMetricsF>
#include <QImage>
#include <QPolygonF>

#include <algorithm>
#include <cmath>
#include <numbers>
#include <vector>

namespace loopsketch::ui {

using namespace sheet;

namespace {

// ---------------------------------------------------------------------------------------
// Plots

struct Series
{
    QString name;
    std::vector<double> x, y; // x in Hz (log axes) or s; NaN breaks the line
    QColor colour;
    Qt::PenStyle style = Qt::SolidLine;
    int overlay = -1; ///< the candidate's index for an overlay curve
    PlotCurve curve = PlotCurve::A; ///< the table's curve (overlays)
    enum class Marker { None, Filled, Hollow };
    Marker marker = Marker::None; ///< drawn as markers (poles), not as a line
};

struct Axis
{
    double lo = 0, hi = 1;
    bool log = false;
    double step = 1; // linear axes
};

double mapAxis(const Axis &a, double v, double from, double to)
{
    const double t = a.log ? (std::log10(v) - a.lo) / (a.hi - a.lo) : (v - a.lo) / (a.hi - a.lo);
    return from + t * (to - from);
}

void finiteRange(const std::vector<Series> &series, bool useX, double &lo, double &hi)
{
    lo = INFINITY;
    hi = -INFINITY;
    for (const auto &s : series)
        for (double v : useX ? s.x : s.y)
            if (std::isfinite(v)) {
                lo = std::min(lo, v);
                hi = std::max(hi, v);
            }
}

/// One panel: frame, grid, tick labels, curves. `yFormat` gives a tick label.
void drawPanel(QPainter &p, const QRectF &area, double k, const Axis &xa, const Axis &ya,
               const std::vector<Series> &series, const QString &yTitle, bool xLabels,
               const QString &xTitle, bool yLogOhm)
{
    const QFont tick = sheetFont(6.5);
    p.setFont(tick);
    const QFontMetricsF fm(tick, p.device());
    const double pad = 1.2 * k;

    p.setPen(QPen(kGrid, 0.15 * k));
    // x grid and labels
    std::vector<std::pair<double, QString>> xt;
    if (xa.log) {
        for (int d = static_cast<int>(std::ceil(xa.lo - 1e-9));
             d <= static_cast<int>(std::floor(xa.hi + 1e-9)); ++d)
            xt.emplace_back(std::pow(10.0, d),
                            QString::fromStdString(formatEngineering(std::pow(10.0, d), 3)));
        for (int d = static_cast<int>(std::floor(xa.lo)); d < static_cast<int>(std::ceil(xa.hi));
             ++d)
            for (int m = 2; m <= 9; ++m) {
                const double v = m * std::pow(10.0, d);
                if (std::log10(v) <= xa.lo || std::log10(v) >= xa.hi)
                    continue;
                const double x = mapAxis(xa, v, area.left(), area.right());
                p.setPen(QPen(QColor(235, 235, 235), 0.1 * k));
                p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
            }
    } else {
        for (double v = std::ceil(xa.lo / xa.step) * xa.step; v <= xa.hi + 1e-12 * std::abs(xa.hi);
             v += xa.step)
            xt.emplace_back(v, QString::fromStdString(formatEngineering(v, 3, "s")));
    }
    for (const auto &[v, label] : xt) {
        const double x = mapAxis(xa, v, area.left(), area.right());
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
        if (xLabels) {
            p.setPen(kInk);
            const double w = fm.horizontalAdvance(label);
            p.drawText(QPointF(x - w / 2, area.bottom() + pad + fm.ascent()), label);
        }
    }
    if (xLabels && !xTitle.isEmpty()) {
        p.setPen(kInk);
        const double w = fm.horizontalAdvance(xTitle);
        p.drawText(QPointF(area.right() - w, area.bottom() + pad + fm.ascent() + fm.height()),
                   xTitle);
    }
    // y grid and labels
    double maxLabel = 0;
    for (double v = std::ceil(ya.lo / ya.step - 1e-9) * ya.step; v <= ya.hi + 1e-9 * ya.step;
         v += ya.step) {
        const double y = mapAxis(ya, v, area.bottom(), area.top());
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(area.left(), y), QPointF(area.right(), y));
        const QString label = yLogOhm
            ? QString::fromStdString(formatEngineering(std::pow(10.0, v), 3))
            : QString::fromStdString(formatEngineering(std::abs(v) < 1e-9 * ya.step ? 0.0 : v, 3));
        const double w = fm.horizontalAdvance(label);
        maxLabel = std::max(maxLabel, w);
        p.setPen(kInk);
        p.drawText(QPointF(area.left() - pad - w, y + fm.ascent() / 2 - fm.descent() / 2), label);
    }
    if (!yTitle.isEmpty()) {
        p.save();
        p.translate(area.left() - pad * 2 - maxLabel - fm.descent(), area.center().y());
        p.rotate(-90);
        p.setPen(kInk);
        p.drawText(QPointF(-fm.horizontalAdvance(yTitle) / 2, 0), yTitle);
        p.restore();
    }
    // curves
    p.save();
    p.setClipRect(area);
    p.setRenderHint(QPainter::Antialiasing);
    for (const auto &s : series) {
        QPen pen(s.colour, 0.35 * k, s.style);
        pen.setJoinStyle(Qt::RoundJoin);
        p.setPen(pen);
        QPolygonF line;
        const auto flush = [&] {
            if (line.size() > 1)
                p.drawPolyline(line);
            line.clear();
        };
        for (std::size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
            if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i]) || (xa.log && s.x[i] <= 0)) {
                flush();
                continue;
            }
            const double yv
                = std::clamp(s.y[i], ya.lo - 10 * (ya.hi - ya.lo), ya.hi + 10 * (ya.hi - ya.lo));
            line << QPointF(mapAxis(xa, s.x[i], area.left(), area.right()),
                            mapAxis(ya, yv, area.bottom(), area.top()));
        }
        flush();
    }
    p.restore();
    p.setPen(QPen(kRule, 0.25 * k));
    p.setBrush(Qt::NoBrush);
    p.drawRect(area);
}

Axis linearAxis(const std::vector<Series> &series, std::initializer_list<double> steps,
                double minSpan, int maxTicks = 6)
{
    Axis a;
    double lo, hi;
    finiteRange(series, false, lo, hi);
    if (!std::isfinite(lo)) {
        lo = 0;
        hi = 1;
    }
    if (hi - lo < minSpan) {
        const double mid = (hi + lo) / 2;
        lo = mid - minSpan / 2;
        hi = mid + minSpan / 2;
    }
    a.step = niceStep(hi - lo, maxTicks, steps);
    a.lo = std::floor(lo / a.step) * a.step;
    a.hi = std::ceil(hi / a.step) * a.step;
    if (a.hi <= a.lo)
        a.hi = a.lo + a.step;
    return a;
}

Axis frequencyAxis(const Analysis &a)
{
    Axis x;
    x.log = true;
    if (a.frequenciesHz.empty() || !(a.frequenciesHz.front() > 0)) {
        x.lo = 0;
        x.hi = 9;
        return x;
    }
    x.lo = std::log10(a.frequenciesHz.front());
    x.hi = std::log10(a.frequenciesHz.back());
    if (x.hi <= x.lo)
        x.hi = x.lo + 1;
    return x;
}

/// A curve's name, colour and style from the one curve table, or an overlay's (candidate
/// `overlay` >= 0: its colour and dash, "candidate: quantity").
Series styled(PlotCurve curve, int overlay = -1, const QString &candidate = {})
{
    const CurveStyle &c = curveStyle(curve);
    if (overlay < 0)
        return {c.name, {}, {}, c.colour, c.style};
    return {overlayName(candidate, curve), {},      {},   overlayColour(overlay),
            overlayStyle(overlay),         overlay, curve};
}

/// The legend's entries: the own curves, then one per candidate naming its quantities
/// ("Fast: T, gain"), as the panels' legends do.
std::vector<Series> legendEntries(const std::vector<Series> &series,
                                  const std::vector<SheetOverlay> &overlays)
{
    std::vector<Series> entries;
    std::vector<std::vector<PlotCurve>> quantities(overlays.size());
    std::vector<std::size_t> at(overlays.size(), std::size_t(-1));
    for (const Series &s : series) {
        if (s.overlay < 0 || std::size_t(s.overlay) >= overlays.size()) {
            entries.push_back(s);
            continue;
        }
        const auto i = std::size_t(s.overlay);
        quantities[i].push_back(s.curve);
        if (at[i] == std::size_t(-1)) {
            at[i] = entries.size();
            entries.push_back(s);
        }
        entries[at[i]].name = overlayLegendText(overlays[i].name, quantities[i]);
    }
    return entries;
}

Series dbSeries(Series s, const Analysis &a, const Curve &c)
{
    s.x = a.frequenciesHz;
    s.y.reserve(c.size());
    for (const auto &v : c)
        s.y.push_back(std::isfinite(std::abs(v)) ? toDecibels(std::abs(v)) : NAN);
    s.x.resize(s.y.size());
    return s;
}

Series logOhmSeries(Series s, const Analysis &a, const Curve &c)
{
    s.x = a.frequenciesHz;
    for (const auto &v : c)
        s.y.push_back(std::abs(v) > 0 && std::isfinite(std::abs(v)) ? std::log10(std::abs(v))
                                                                    : NAN);
    s.x.resize(s.y.size());
    return s;
}

Series phaseSeries(Series s, const Analysis &a, const Curve &c)
{
    s.x = a.frequenciesHz;
    if (c.empty())
        return s;
    const std::vector<double> ph = unwrapPhase(c, std::arg(c.front()));
    for (std::size_t i = 0; i < ph.size(); ++i)
        s.y.push_back(std::isfinite(std::abs(c[i])) ? ph[i] * 180.0 / std::numbers::pi : NAN);
    s.x.resize(s.y.size());
    return s;
}

bool hasFinite(const Curve &c)
{
    return std::any_of(c.begin(), c.end(),
                       [](const auto &v) { return std::isfinite(std::abs(v)); });
}

/// A pole's marker as the Poles panel draws it: the design's a filled square, a candidate's
/// a ring in its colour.
void drawPoleMarker(QPainter &p, QPointF at, double k, const Series &s)
{
    const double r = 0.9 * k;
    p.save();
    p.setRenderHint(QPainter::Antialiasing);
    if (s.marker == Series::Marker::Filled) {
        p.setPen(QPen(s.colour.darker(130), 0.12 * k));
        p.setBrush(s.colour);
        p.drawRect(QRectF(at.x() - r, at.y() - r, 2 * r, 2 * r));
    } else {
        p.setPen(QPen(s.colour, 0.3 * k));
        p.setBrush(Qt::NoBrush);
        p.drawEllipse(at, 1.15 * r, 1.15 * r);
    }
    p.restore();
}

/// Lays the legend out in rows within `width`; returns the rows' entries (indices).
std::vector<std::vector<std::size_t>> legendRows(const QFontMetricsF &fm, double width, double k,
                                                 const std::vector<Series> &series)
{
    std::vector<std::vector<std::size_t>> rows(1);
    double x = 0;
    for (std::size_t i = 0; i < series.size(); ++i) {
        const double w = 7 * k + fm.horizontalAdvance(series[i].name) + 4 * k;
        if (x > 0 && x + w > width) {
            rows.emplace_back();
            x = 0;
        }
        rows.back().push_back(i);
        x += w;
    }
    return rows;
}

constexpr double kLegendRowMm = 3.6;

/// The legend's rows at `area`'s top; returns the height used (device units).
double drawLegend(QPainter &p, const QRectF &area, double k, const std::vector<Series> &series)
{
    const QFont f = sheetFont(6.5);
    p.setFont(f);
    const QFontMetricsF fm(f, p.device());
    const auto rows = legendRows(fm, area.width(), k, series);
    double y = area.top() + kLegendRowMm * k / 2;
    for (const auto &row : rows) {
        double x = area.left();
        for (std::size_t i : row) {
            const Series &s = series[i];
            if (s.marker == Series::Marker::None) {
                p.setPen(QPen(s.colour, 0.5 * k, s.style));
                p.drawLine(QPointF(x, y), QPointF(x + 6 * k, y));
            } else {
                drawPoleMarker(p, QPointF(x + 3 * k, y), k, s);
            }
            x += 7 * k;
            p.setPen(kInk);
            p.drawText(QPointF(x, y + fm.ascent() / 2 - fm.descent() / 2), s.name);
            x += fm.horizontalAdvance(s.name) + 4 * k;
        }
        y += kLegendRowMm * k;
    }
    return double(rows.size()) * kLegendRowMm * k;
}

/// log10 of a density per sweep frequency; NaN where there is none (breaks the line).
Series logDensitySeries(Series s, const std::vector<double> &hz, const std::vector<double> &density)
{
    s.x = hz;
    s.y.reserve(hz.size());
    for (std::size_t i = 0; i < hz.size(); ++i) {
        const double v = i < density.size() ? density[i] : NAN;
        s.y.push_back(std::isfinite(v) && v > 0 ? std::log10(v) : NAN);
    }
    return s;
}

/// Decades from the first series' peak down to at most `decades` below it.
Axis decadeAxis(const std::vector<Series> &series, int decades)
{
    Axis a;
    double lo = INFINITY, hi = -INFINITY;
    finiteRange(series, false, lo, hi);
    double peak = -INFINITY;
    for (double v : series.front().y)
        if (std::isfinite(v))
            peak = std::max(peak, v);
    if (!std::isfinite(peak)) {
        a.lo = -9;
        a.hi = -6;
        return a;
    }
    a.hi = std::ceil(std::max(peak, hi) + 0.05);
    a.lo = std::max(std::floor(lo), a.hi - decades);
    if (a.hi - a.lo < 2)
        a.lo = a.hi - 2;
    a.step = a.hi - a.lo > 5 ? 2 : 1;
    return a;
}

} // namespace

namespace sheet {

double niceStep(double span, int maxTicks, std::initializer_list<double> steps)
{
    for (double s : steps)
        if (span / s <= maxTicks)
            return s;
    return *(steps.end() - 1) * std::ceil(span / (maxTicks * *(steps.end() - 1)));
}

std::size_t noiseReferenceIndex(const NoiseAnalysis &n)
{
    const double want
        = n.bandLowHz <= 1e3 && n.bandHighHz >= 1e3 ? 1e3 : std::sqrt(n.bandLowHz * n.bandHighHz);
    std::size_t best = 0;
    for (std::size_t i = 0; i < n.frequenciesHz.size(); ++i) {
        if (std::abs(std::log(n.frequenciesHz[i] / want))
            < std::abs(std::log(n.frequenciesHz[best] / want)))
            best = i;
    }
    return best;
}

} // namespace sheet

QString sheetPlotFileStem(SheetPlot plot)
{
    switch (plot) {
    case SheetPlot::LoopGain:
        return QStringLiteral("loop-gain");
    case SheetPlot::Impedance:
        return QStringLiteral("impedance");
    case SheetPlot::Desensitivity:
        return QStringLiteral("desensitivity");
    case SheetPlot::Step:
        return QStringLiteral("step");
    case SheetPlot::Poles:
        return QStringLiteral("poles");
    case SheetPlot::Noise:
        return QStringLiteral("noise");
    }
    return {};
}

namespace {

/// Where a plot draws: the panels' frame below the title and the legend.
struct PlotFrame
{
    double left, right, top, bottom, k;
    Axis frequency;
};

/// Loop gain and closed-loop gain in dB over frequency, the phase of T below.
std::vector<Series> loopGainPlot(QPainter &p, const PlotFrame &f, const Analysis &a,
                                 const std::vector<SheetOverlay> &overlays)
{
    std::vector<Series> mag{dbSeries(styled(PlotCurve::LoopGain), a, a.curves.loopGain),
                            dbSeries(styled(PlotCurve::GainExact), a, a.curves.gainExact)};
    if (hasFinite(a.curves.gainTwoPort))
        mag.push_back(dbSeries(styled(PlotCurve::GainTwoPort), a, a.curves.gainTwoPort));
    Series phase = phaseSeries(styled(PlotCurve::LoopGain), a, a.curves.loopGain);
    phase.name = QStringLiteral("phase of ") + phase.name;
    std::vector<Series> ph{phase};
    for (std::size_t i = 0; i < overlays.size(); ++i) {
        const Analysis &o = *overlays[i].analysis;
        mag.push_back(
            dbSeries(styled(PlotCurve::LoopGain, int(i), overlays[i].name), o, o.curves.loopGain));
        mag.push_back(dbSeries(styled(PlotCurve::GainExact, int(i), overlays[i].name), o,
                               o.curves.gainExact));
    }
    const double k = f.k, mid = f.top + (f.bottom - f.top) * 0.58;
    Axis ym = linearAxis(mag, {10, 20, 40, 50, 100}, 20, 6);
    Axis yp = linearAxis(ph, {45, 90, 180, 360}, 90, 5);
    drawPanel(p, QRectF(QPointF(f.left, f.top), QPointF(f.right, mid - 3 * k)), k, f.frequency, ym,
              mag, QStringLiteral("dB"), false, {}, false);
    drawPanel(p, QRectF(QPointF(f.left, mid + 3 * k), QPointF(f.right, f.bottom)), k, f.frequency,
              yp, ph, QStringLiteral("phase of T (°)"), true, QStringLiteral("Hz"), false);
    return mag;
}

/// One panel of curves over frequency: the design's, then each candidate's.
std::vector<Series> frequencyPlot(
    QPainter &p, const PlotFrame &f, const Analysis &a, const std::vector<SheetOverlay> &overlays,
    const std::vector<std::pair<PlotCurve, const Curve LoopCurves::*>> &curves, bool logOhm)
{
    std::vector<Series> series;
    const auto add = [&](const Analysis &from, PlotCurve curve, const Curve &c, int overlay,
                         const QString &candidate) {
        Series s = styled(curve, overlay, candidate);
        series.push_back(logOhm ? logOhmSeries(std::move(s), from, c)
                                : dbSeries(std::move(s), from, c));
    };
    for (const auto &[curve, member] : curves)
        add(a, curve, a.curves.*member, -1, {});
    for (std::size_t i = 0; i < overlays.size(); ++i) {
        for (const auto &[curve, member] : curves)
            add(*overlays[i].analysis, curve, overlays[i].analysis->curves.*member, int(i),
                overlays[i].name);
    }
    const Axis y = logOhm ? linearAxis(series, {1, 2, 3, 4, 5}, 1, 6)
                          : linearAxis(series, {10, 20, 40, 50, 100}, 20, 6);
    const QRectF area(QPointF(f.left, f.top), QPointF(f.right, f.bottom));
    drawPanel(p, area, f.k, f.frequency, y, series,
              logOhm ? QStringLiteral("Ω") : QStringLiteral("dB"), true, QStringLiteral("Hz"),
              logOhm);
    // A curve with nothing to draw on a log scale (an ideal input's infinite impedance, an
    // ideal output's zero) is said in words, or the reviewer reads an empty plot.
    QStringList notes;
    for (const auto &[curve, member] : curves) {
        const Curve &c = a.curves.*member;
        const auto drawable = [](Complex z) {
            return std::isfinite(std::abs(z)) && std::abs(z) > 0;
        };
        if (c.empty() || std::any_of(c.begin(), c.end(), drawable))
            continue;
        const bool zero
            = std::all_of(c.begin(), c.end(), [](Complex z) { return std::abs(z) == 0.0; });
        const bool infinite
            = std::all_of(c.begin(), c.end(), [](Complex z) { return std::isinf(std::abs(z)); });
        notes << QStringLiteral("%1: %2").arg(curveName(curve),
                                              zero ? QStringLiteral("zero at every frequency")
                                                  : infinite
                                                  ? QStringLiteral("infinite at every frequency")
                                                  : QStringLiteral("no finite value to draw"));
    }
    if (!notes.isEmpty()) {
        p.setFont(sheetFont(kBodyPt));
        p.setPen(kInk);
        p.drawText(area, Qt::AlignCenter | Qt::TextWordWrap, notes.join(QLatin1Char('\n')));
    }
    return series;
}

/// The unit-step response over time, the candidates' beside it.
std::vector<Series> stepPlot(QPainter &p, const PlotFrame &f, const Analysis &a,
                             const std::vector<SheetOverlay> &overlays)
{
    std::vector<Series> st;
    const auto add = [&](const Analysis &from, int overlay, const QString &candidate) {
        Series s = styled(PlotCurve::Step, overlay, candidate);
        s.x = from.step.timeS;
        s.y = from.step.response;
        st.push_back(std::move(s));
    };
    add(a, -1, {});
    if (!a.stable || !std::any_of(a.step.response.begin(), a.step.response.end(), [](double v) {
            return std::isfinite(v);
        })) {
        // No axes for a response that does not exist: they would read as a flat one.
        const QRectF area(QPointF(f.left, f.top), QPointF(f.right, f.bottom));
        p.setPen(QPen(kRule, 0.25 * f.k));
        p.setBrush(Qt::NoBrush);
        p.drawRect(area);
        p.setFont(sheetFont(kBodyPt));
        p.setPen(kInk);
        p.drawText(area, Qt::AlignCenter | Qt::TextWordWrap,
                   a.stable ? QStringLiteral("No step response: %1")
                                  .arg(a.step.problem.empty() ? QStringLiteral("not computed")
                                                              : q(a.step.problem))
                            : QStringLiteral("No step response: the loop is unstable (its "
                                             "closed-loop poles are on the Poles plot)"));
        return {};
    }
    for (std::size_t i = 0; i < overlays.size(); ++i) {
        if (overlays[i].analysis->stable)
            add(*overlays[i].analysis, int(i), overlays[i].name);
    }
    Axis x;
    double lo, hi;
    finiteRange({st.front()}, true, lo, hi);
    if (!std::isfinite(lo) || hi <= lo) {
        lo = 0;
        hi = 1;
    }
    x.lo = lo;
    x.hi = hi;
    const double mag = std::pow(10.0, std::floor(std::log10(hi - lo)));
    x.step = mag * niceStep((hi - lo) / mag, 6, {0.5, 1, 2, 2.5, 5, 10});
    finiteRange(st, false, lo, hi);
    if (!std::isfinite(lo)) {
        lo = 0;
        hi = 1;
    }
    lo = std::min(lo, 0.0);
    hi = std::max(hi, 0.0);
    if (hi - lo <= 0)
        hi = lo + 1;
    Axis y;
    const double ymag = std::pow(10.0, std::floor(std::log10(hi - lo)));
    y.step = ymag * niceStep((hi - lo) / ymag, 6, {0.2, 0.25, 0.5, 1, 2, 2.5, 5, 10});
    y.lo = std::floor(lo / y.step) * y.step;
    y.hi = std::ceil(hi / y.step) * y.step;
    drawPanel(p, QRectF(QPointF(f.left, f.top), QPointF(f.right, f.bottom)), f.k, x, y, st,
              q(a.gainUnit), true, QStringLiteral("time"), false);
    return st;
}

/// "−860k" with a true minus sign.
QString signedEngineering(double value)
{
    QString text = QString::fromStdString(formatEngineering(value, 3));
    if (text.startsWith(QLatin1Char('-')))
        text.replace(0, 1, QStringLiteral("−"));
    return text;
}

/// The closed-loop poles on the Poles panel's log-magnitude radial scale (support/polescale.h):
/// one circle a decade labelled in rad/s, the jω and real axes, the design's poles as filled
/// squares with their values beside them (the dominant ones first), each candidate's as rings.
std::vector<Series> polesPlot(QPainter &p, const PlotFrame &f, const Analysis &a,
                              const std::vector<SheetOverlay> &overlays)
{
    std::vector<ClosedLoopPole> shown;
    for (const ClosedLoopPole &pole : a.poles) {
        if (std::isfinite(pole.s.real()) && std::isfinite(pole.s.imag()))
            shown.push_back(pole);
    }
    const PoleScale scale = PoleScale::fit(shown);
    Series own = styled(PlotCurve::Poles);
    own.name = QStringLiteral("%1 (%2)").arg(own.name).arg(shown.size());
    own.marker = Series::Marker::Filled;
    std::vector<Series> legend{own};
    std::vector<std::vector<QPointF>> candidatePoints;
    for (std::size_t i = 0; i < overlays.size(); ++i) {
        Series s = styled(PlotCurve::Poles, int(i), overlays[i].name);
        s.marker = Series::Marker::Hollow;
        legend.push_back(s);
        std::vector<QPointF> points;
        for (const ClosedLoopPole &pole : overlays[i].analysis->poles) {
            if (std::isfinite(pole.s.real()) && std::isfinite(pole.s.imag()))
                points.push_back(scale.map(pole.s));
        }
        candidatePoints.push_back(std::move(points));
    }
    // Every circle and pole inside, the right half-plane at least a third of the radius wide,
    // one unit as long across as up so circles stay round and angles true.
    const double reach = scale.outer + 0.4;
    const double left = -reach, right = std::max(0.35 * reach, scale.rightMost + 0.4);
    const QRectF frame(QPointF(f.left, f.top), QPointF(f.right, f.bottom));
    const double perUnit = std::min(frame.width() / (right - left), frame.height() / (2 * reach));
    // The frame hugs the picture (with room for the values beside the outer poles), so the
    // scale reads at the plot's size rather than floating in an empty box.
    const double width = std::min(frame.width(), (right - left) * perUnit + 36 * f.k);
    const QRectF area(frame.center().x() - width / 2, frame.top(), width, frame.height());
    const QPointF origin(area.center().x() - (left + right) / 2 * perUnit, area.center().y());
    const auto at = [&](QPointF u) {
        return QPointF(origin.x() + u.x() * perUnit, origin.y() - u.y() * perUnit);
    };
    const double k = f.k;
    const QFont small = sheetFont(6.5);
    const QFontMetricsF fm(small, p.device());
    p.save();
    p.setClipRect(area);
    p.setRenderHint(QPainter::Antialiasing);
    p.setFont(small);
    std::vector<QRectF> taken;
    // Decade circles and their values on the lower jω axis.
    for (int ring = 0; ring < scale.rings; ++ring) {
        const double radius = PoleScale::ringRadius(ring) * perUnit;
        p.setPen(QPen(kGrid, 0.15 * k));
        p.setBrush(Qt::NoBrush);
        p.drawEllipse(origin, radius, radius);
    }
    p.setPen(QPen(kRule, 0.15 * k, Qt::DotLine));
    p.drawLine(at(QPointF(0, -reach)), at(QPointF(0, reach)));
    p.drawLine(at(QPointF(-reach, 0)), at(QPointF(right - 0.1, 0)));
    // The markers first, so no label covers one.
    for (const ClosedLoopPole &pole : shown) {
        const QPointF m = at(scale.map(pole.s));
        taken.emplace_back(m.x() - 1.2 * k, m.y() - 1.2 * k, 2.4 * k, 2.4 * k);
    }
    const auto place
        = [&](const QString &text, std::initializer_list<QPointF> corners, const QColor &colour) {
              const QSizeF size(fm.horizontalAdvance(text), fm.height());
              for (const QPointF &corner : corners) {
                  const QRectF spot(corner, size);
                  bool free = area.contains(spot);
                  for (const QRectF &r : taken)
                      free = free && !r.intersects(spot);
                  if (free) {
                      p.setPen(colour);
                      p.drawText(QPointF(spot.left(), spot.top() + fm.ascent()), text);
                      taken.push_back(spot);
                      return;
                  }
              }
          };
    // Pole values, upper half-plane and real axis, the dominant (smallest |s|) first;
    // coincident poles say how many they are.
    struct Label
    {
        QPointF at;
        QString text;
        double size;
    };
    std::vector<Label> labels;
    std::vector<bool> done(shown.size(), false);
    for (std::size_t i = 0; i < shown.size(); ++i) {
        if (done[i] || shown[i].s.imag() < 0)
            continue;
        int same = 0;
        for (std::size_t j = i; j < shown.size(); ++j) {
            if (!done[j] && std::abs(shown[j].s - shown[i].s) <= 1e-9 * std::abs(shown[i].s)) {
                done[j] = true;
                ++same;
            }
        }
        const std::complex<double> s = shown[i].s;
        QString text = signedEngineering(s.real());
        if (s.imag() > 0)
            text += QStringLiteral(" ± j") + QString::fromStdString(formatEngineering(s.imag(), 3));
        if (same > 1)
            text += QStringLiteral(" (×%1)").arg(same);
        labels.push_back({at(scale.map(s)), text, std::abs(s)});
    }
    std::stable_sort(labels.begin(), labels.end(),
                     [](const Label &l, const Label &r) { return l.size < r.size; });
    const QColor valueColour = palette::kVermillion.darker(140);
    for (const Label &l : labels) {
        const double w = fm.horizontalAdvance(l.text), h = fm.height(), g = 1.4 * k;
        place(l.text,
              {QPointF(l.at.x() + g, l.at.y() - h - 0.2 * k),
               QPointF(l.at.x() - g - w, l.at.y() - h - 0.2 * k),
               QPointF(l.at.x() + g, l.at.y() + 0.2 * k),
               QPointF(l.at.x() - g - w, l.at.y() + 0.2 * k),
               QPointF(l.at.x() - w / 2, l.at.y() - h - g),
               QPointF(l.at.x() - w / 2, l.at.y() + g)},
              valueColour);
    }
    // Axis names and circle values.
    const QFont italic = [&] {
        QFont font = small;
        font.setItalic(true);
        return font;
    }();
    p.setFont(italic);
    const QPointF realEnd = at(QPointF(right - 0.1, 0)), jwTop = at(QPointF(0, reach));
    place(
        QStringLiteral("Re s"),
        {QPointF(realEnd.x() - fm.horizontalAdvance(QStringLiteral("Re s")), realEnd.y() + 0.5 * k),
         QPointF(realEnd.x() - fm.horizontalAdvance(QStringLiteral("Re s")),
                 realEnd.y() - fm.height() - 0.5 * k)},
        kRule.darker(130));
    place(QStringLiteral("jω"), {QPointF(jwTop.x() + 1 * k, jwTop.y() + 0.5 * k)},
          kRule.darker(130));
    p.setFont(small);
    for (int ring = 0; ring < scale.rings; ++ring) {
        const QPointF c = at(QPointF(0, -PoleScale::ringRadius(ring)));
        const QString text
            = QString::fromStdString(formatEngineering(scale.ringValue(ring), 3, "rad/s"));
        const double w = fm.horizontalAdvance(text);
        place(text,
              {QPointF(c.x() + 0.8 * k, c.y() - fm.height()),
               QPointF(c.x() - 0.8 * k - w, c.y() - fm.height())},
              kRule.darker(150));
    }
    // Candidates' rings under the design's squares.
    for (std::size_t i = 0; i < candidatePoints.size(); ++i) {
        for (const QPointF &u : candidatePoints[i])
            drawPoleMarker(p, at(u), k, legend[i + 1]);
    }
    for (const ClosedLoopPole &pole : shown)
        drawPoleMarker(p, at(scale.map(pole.s)), k, own);
    p.restore();
    p.setPen(QPen(kRule, 0.25 * k));
    p.setBrush(Qt::NoBrush);
    p.drawRect(area);
    if (shown.empty()) {
        p.setFont(sheetFont(kBodyPt));
        p.setPen(kInk);
        p.drawText(area, Qt::AlignCenter, QStringLiteral("No finite closed-loop poles"));
    }
    return legend;
}

/// Output density with the three largest sources' own, the input-referred density below.
std::vector<Series> noisePlot(QPainter &p, const PlotFrame &f, const Analysis &a,
                              const std::vector<SheetOverlay> &overlays)
{
    const NoiseUnitText u = noiseUnits(a);
    if (!a.noise || a.noise->frequenciesHz.empty()) {
        p.setFont(sheetFont(kBodyPt));
        p.setPen(kInk);
        p.drawText(
            QRectF(QPointF(f.left, f.top), QPointF(f.right, f.bottom)),
            Qt::AlignCenter | Qt::TextWordWrap,
            QStringLiteral("No noise analysis: %1")
                .arg(a.noiseProblem.empty() ? QStringLiteral("not computed") : q(a.noiseProblem)));
        return {};
    }
    const NoiseAnalysis &n = *a.noise;
    std::vector<Series> out{
        logDensitySeries(styled(PlotCurve::NoiseOutput), n.frequenciesHz, n.outputDensity)};
    // The three largest sources' own densities at the output, dashed (not stacked as on
    // screen: on paper a reviewer reads each source's slope).
    // Blues and purple: orange and vermillion read alike, and vermillion is the input's.
    const QColor colours[] = {palette::kBlue, palette::kSkyBlue, palette::kPurple};
    const auto order = noiseSourcesByShare(n);
    for (std::size_t i = 0; i < order.size() && i < 3; ++i) {
        std::vector<double> own(order[i]->outputPsd.size());
        for (std::size_t j = 0; j < own.size(); ++j)
            own[j] = std::sqrt(order[i]->outputPsd[j]);
        out.push_back(logDensitySeries(
            {noiseSourceName(*order[i]), {}, {}, colours[i], Qt::DashLine}, n.frequenciesHz, own));
    }
    for (std::size_t i = 0; i < overlays.size(); ++i) {
        const auto &o = overlays[i].analysis->noise;
        if (o)
            out.push_back(logDensitySeries(styled(PlotCurve::NoiseOutput, int(i), overlays[i].name),
                                           o->frequenciesHz, o->outputDensity));
    }
    std::vector<Series> in{
        logDensitySeries(styled(PlotCurve::NoiseInput), n.frequenciesHz, n.inputDensity)};
    const double k = f.k, mid = f.top + (f.bottom - f.top) * 0.58;
    drawPanel(p, QRectF(QPointF(f.left, f.top), QPointF(f.right, mid - 3 * k)), k, f.frequency,
              decadeAxis(out, 6), out, QStringLiteral("output (%1/√Hz)").arg(u.output), false, {},
              true);
    drawPanel(p, QRectF(QPointF(f.left, mid + 3 * k), QPointF(f.right, f.bottom)), k, f.frequency,
              decadeAxis(in, 6), in, QStringLiteral("input (%1/√Hz)").arg(u.input), true,
              QStringLiteral("Hz"), true);
    std::vector<Series> legend = out;
    legend.insert(legend.begin() + 1, in.front());
    return legend;
}

QString plotTitle(SheetPlot plot, const Analysis &a)
{
    switch (plot) {
    case SheetPlot::LoopGain:
        return QStringLiteral("Loop gain and closed-loop gain (gains in dB re 1 %1)")
            .arg(q(a.gainUnit));
    case SheetPlot::Impedance:
        return QStringLiteral("Impedance (exact)");
    case SheetPlot::Desensitivity:
        return QStringLiteral("Desensitivity |1 + T|");
    case SheetPlot::Step:
        return a.stable
            ? QStringLiteral("Step response (per unit source step, %1)").arg(q(a.gainUnit))
            : QStringLiteral("Step response: none, the loop is unstable");
    case SheetPlot::Poles:
        return a.stable ? QStringLiteral("Closed-loop poles (log-magnitude radial scale, rad/s)")
                        : QStringLiteral("Closed-loop poles: UNSTABLE, %1 in the right half-plane")
                              .arg(a.rhpPoles);
    case SheetPlot::Noise:
        return QStringLiteral("Noise density, output and input-referred");
    }
    return {};
}

/// The legend entries of a plot, without drawing it (to know the legend's height first).
std::vector<Series> plotSeries(QPainter &p, const PlotFrame &f, SheetPlot plot, const Analysis &a,
                               const std::vector<SheetOverlay> &overlays)
{
    switch (plot) {
    case SheetPlot::LoopGain:
        return loopGainPlot(p, f, a, overlays);
    case SheetPlot::Impedance:
        return frequencyPlot(
            p, f, a, overlays,
            {{PlotCurve::ZIn, &LoopCurves::zInExact}, {PlotCurve::ZOut, &LoopCurves::zOutExact}},
            true);
    case SheetPlot::Desensitivity:
        return frequencyPlot(p, f, a, overlays,
                             {{PlotCurve::Desensitivity, &LoopCurves::desensitivity}}, false);
    case SheetPlot::Step:
        return stepPlot(p, f, a, overlays);
    case SheetPlot::Poles:
        return polesPlot(p, f, a, overlays);
    case SheetPlot::Noise:
        return noisePlot(p, f, a, overlays);
    }
    return {};
}

} // namespace

void drawSheetPlot(QPainter &p, const QRectF &rect, double k, SheetPlot plot, const Analysis &a,
                   const std::vector<SheetOverlay> &overlays)
{
    p.save();
    const QFont titleFont = sheetFont(8.5, true);
    const QFontMetricsF tfm(titleFont, p.device());
    const double left = rect.left() + 17 * k, right = rect.right() - 2 * k;
    const QRectF legendRect(left, rect.top() + tfm.height() + 0.5 * k, right - left,
                            kLegendRowMm * k);
    // Drawn once into nothing to learn the legend (its height sets the plot's top).
    QImage scratch(1, 1, QImage::Format_RGB32);
    QPainter measure(&scratch);
    measure.setClipRect(QRectF(0, 0, 0, 0));
    const PlotFrame probe{left, right, rect.top(), rect.bottom(), k, frequencyAxis(a)};
    const std::vector<Series> legend
        = legendEntries(plotSeries(measure, probe, plot, a, overlays), overlays);
    measure.end();
    const QFontMetricsF lfm(sheetFont(6.5), p.device());
    const double legendHeight
        = double(legendRows(lfm, legendRect.width(), k, legend).size()) * kLegendRowMm * k;
    const PlotFrame frame{left,
                          right,
                          rect.top() + tfm.height() + legendHeight + 2.5 * k,
                          rect.bottom() - 9 * k,
                          k,
                          frequencyAxis(a)};
    plotSeries(p, frame, plot, a, overlays);
    p.setFont(titleFont);
    p.setPen(kInk);
    p.drawText(QPointF(rect.left(), rect.top() + tfm.ascent()), plotTitle(plot, a));
    drawLegend(p, legendRect, k, legend);
    p.restore();
}

} // namespace loopsketch::ui
