#include "sheet/sheetplotengine.h"

#include "panels/noisepanel.h"
#include "sheet/sheetwriter.h"

#include "loopsketch/analysis/metrics.h"

#include <QPolygonF>

#include <algorithm>
#include <cmath>

namespace loopsketch::ui::sheet {

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
                double minSpan, int maxTicks)
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
Series styled(PlotCurve curve, int overlay, const QString &candidate)
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

} // namespace loopsketch::ui::sheet
