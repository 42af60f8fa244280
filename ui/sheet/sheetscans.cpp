#include "sheet/sheetscans.h"

#include "panels/scanrunner.h"
#include "support/cellgrid.h"
#include "support/plotstyle.h"

#include "loopsketch/base/value.h"

#include <QFontMetricsF>
#include <QPolygonF>

#include <algorithm>
#include <cmath>
#include <limits>

namespace loopsketch::ui::sheet {

namespace {

constexpr double kScanFigureMm = 80, kMapFigureMm = 110, kGapMm = 4;

const ScanMetricInfo &metricInfo(int metric)
{
    const auto &infos = scanMetricInfos();
    return infos[std::size_t(std::clamp(metric, 0, int(infos.size()) - 1))];
}

QString metricUnit(const ScanResult &scan, int metric)
{
    const ScanMetricInfo &info = metricInfo(metric);
    if (info.member == &ScanMetrics::gain)
        return q(scan.gainUnit);
    return info.unit;
}

/// The metric's finite values' range; [0, 1] when there are none.
std::pair<double, double> metricRange(const ScanResult &scan, int metric)
{
    double lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (const ScanRow &r : scan.rows)
        if (const OptionalNumber v = r.metrics.*metricInfo(metric).member;
            r.done && v && std::isfinite(*v)) {
            lo = std::min(lo, *v);
            hi = std::max(hi, *v);
        }
    if (!(lo <= hi))
        return {0, 1};
    return {lo, hi};
}

/// A step of 1, 2 or 5 times a power of ten giving about five intervals over `span`.
double tickStep(double span)
{
    const double raw = span / 5;
    const double decade = std::pow(10.0, std::floor(std::log10(raw)));
    for (double m : {1.0, 2.0, 5.0})
        if (m * decade >= raw)
            return m * decade;
    return 10 * decade;
}

bool unstable(const ScanRow &r)
{
    return r.done && r.metrics.stable && !*r.metrics.stable;
}

bool passes(const ScanRow &r)
{
    return r.done && r.metrics.specsPass.value_or(false);
}

/// x position of a value on an axis' log scale within [left, right], cells centred.
double onAxis(const ScanAxis &a, double v, double from, double to)
{
    const double lo = std::log10(std::abs(a.values.front())),
                 hi = std::log10(std::abs(a.values.back()));
    const auto n = double(a.values.size());
    const double t = hi > lo ? (std::log10(std::abs(v)) - lo) / (hi - lo) : 0.5;
    return from + (0.5 + t * (n - 1)) / n * (to - from);
}

void drawText(QPainter &p, QPointF at, const QString &text, Qt::Alignment align)
{
    const QFontMetricsF fm(p.font(), p.device());
    const double w = fm.horizontalAdvance(text);
    double x = at.x();
    if (align & Qt::AlignHCenter)
        x -= w / 2;
    else if (align & Qt::AlignRight)
        x -= w;
    p.drawText(QPointF(x, at.y() + fm.ascent() / 2 - fm.descent() / 2), text);
}

/// A scan: the metric against the part's values on a log axis; filled markers meet every
/// spec, hollow ones fail, crosses are unstable; the design's value dashed.
void drawScan(QPainter &p, const QRectF &rect, double k, const ScanResult &scan, int metric)
{
    const ScanAxis &axis = scan.axes.front();
    p.save();
    p.setFont(sheetFont(6.5));
    const QRectF area = rect.adjusted(16 * k, 2 * k, -3 * k, -10 * k);
    auto [lo, hi] = metricRange(scan, metric);
    if (hi - lo < 1e-9 * std::max(1.0, std::abs(hi))) {
        lo -= 0.5 * std::max(1.0, std::abs(lo));
        hi += 0.5 * std::max(1.0, std::abs(hi));
    }
    const double step = tickStep(hi - lo);
    const double yLo = std::floor(lo / step) * step, yHi = std::ceil(hi / step) * step;
    const auto yOf = [&](double v) {
        return area.bottom() - (v - yLo) / (yHi - yLo) * area.height();
    };
    const auto xOf = [&](double v) {
        return onAxis(axis, v, area.left(), area.right());
    };
    // grid and tick labels
    for (double v = yLo; v <= yHi + 1e-9 * step; v += step) {
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(area.left(), yOf(v)), QPointF(area.right(), yOf(v)));
        p.setPen(kInk);
        drawText(p, QPointF(area.left() - 1.2 * k, yOf(v)),
                 q(formatEngineering(std::abs(v) < 1e-9 * step ? 0.0 : v, 3)), Qt::AlignRight);
    }
    const std::size_t n = axis.values.size();
    const std::size_t every = std::max<std::size_t>(1, (n + 7) / 8);
    for (std::size_t i = 0; i < n; i += every) {
        p.setPen(kInk);
        drawText(p, QPointF(xOf(axis.values[i]), area.bottom() + 3 * k),
                 q(formatEngineering(axis.values[i], 3, axis.unit)), Qt::AlignHCenter);
    }
    p.setPen(kInk);
    drawText(p, QPointF(area.right(), area.bottom() + 7 * k),
             q(axis.name()) + QStringLiteral(" (") + q(toString(axis.series)) + QStringLiteral(")"),
             Qt::AlignRight);
    p.save();
    p.translate(rect.left() + 2.5 * k, area.center().y());
    p.rotate(-90);
    const QString unit = metricUnit(scan, metric);
    drawText(p, QPointF(0, 0),
             metricInfo(metric).name
                 + (unit.isEmpty() ? QString() : QStringLiteral(" (") + unit + ")"),
             Qt::AlignHCenter);
    p.restore();
    // the design's value
    if (std::isfinite(std::log10(std::abs(axis.current)))) {
        p.setPen(QPen(palette::kOrange, 0.35 * k, Qt::DashLine));
        const double x = xOf(axis.current);
        if (x >= area.left() && x <= area.right())
            p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
    }
    // the curve and its markers
    p.setClipRect(area.adjusted(-2 * k, -2 * k, 2 * k, 2 * k));
    p.setRenderHint(QPainter::Antialiasing);
    QPolygonF line;
    const auto flush = [&] {
        if (line.size() > 1) {
            p.setPen(QPen(kRule, 0.25 * k));
            p.drawPolyline(line);
        }
        line.clear();
    };
    for (const ScanRow &r : scan.rows) {
        const OptionalNumber v = r.metrics.*metricInfo(metric).member;
        if (!r.done || !v || !std::isfinite(*v)) {
            flush();
            continue;
        }
        line << QPointF(xOf(r.values[0]), yOf(*v));
    }
    flush();
    const double m = 0.9 * k;
    for (const ScanRow &r : scan.rows) {
        const OptionalNumber v = r.metrics.*metricInfo(metric).member;
        const double x = xOf(r.values[0]);
        if (unstable(r)) {
            const double y = v && std::isfinite(*v) ? yOf(*v) : area.bottom() - m;
            p.setPen(QPen(palette::kVermillion, 0.35 * k));
            p.drawLine(QPointF(x - m, y - m), QPointF(x + m, y + m));
            p.drawLine(QPointF(x - m, y + m), QPointF(x + m, y - m));
            continue;
        }
        if (!r.done || !v || !std::isfinite(*v))
            continue;
        p.setPen(QPen(palette::kBlue, 0.3 * k));
        p.setBrush(passes(r) ? QBrush(palette::kBlue) : QBrush(Qt::NoBrush));
        p.drawEllipse(QPointF(x, yOf(*v)), m, m);
    }
    p.setClipping(false);
    p.setPen(QPen(kRule, 0.25 * k));
    p.setBrush(Qt::NoBrush);
    p.drawRect(area);
    p.restore();
}

/// A map: the metric as colour over the grid of two parts (first across, second up), the
/// cells meeting every spec outlined, unstable cells crossed, the design ringed; the colour
/// scale on the right.
void drawMap(QPainter &p, const QRectF &rect, double k, const ScanResult &scan, int metric)
{
    const ScanAxis &a = scan.axes[0], &b = scan.axes[1];
    const int n1 = int(a.values.size()), n2 = int(b.values.size());
    p.save();
    p.setFont(sheetFont(6.5));
    const double side = std::min(rect.width() - 45 * k, rect.height() - 12 * k);
    const QRectF g(rect.left() + 16 * k, rect.top() + 2 * k, side, side);
    const auto [lo, hi] = metricRange(scan, metric);
    const auto cell = [&](int i, int j) {
        return QRectF(g.left() + i * g.width() / n1, g.bottom() - (j + 1) * g.height() / n2,
                      g.width() / n1, g.height() / n2);
    };
    const auto rowAt = [&](int i, int j) -> const ScanRow * {
        if (i < 0 || j < 0 || i >= n1 || j >= n2)
            return nullptr;
        return &scan.rows[std::size_t(i * n2 + j)];
    };
    for (int i = 0; i < n1; ++i)
        for (int j = 0; j < n2; ++j) {
            const ScanRow &r = *rowAt(i, j);
            const OptionalNumber v = r.metrics.*metricInfo(metric).member;
            QColor c(0xee, 0xee, 0xee);
            if (r.done)
                c = v && std::isfinite(*v) ? sequentialColour(hi > lo ? (*v - lo) / (hi - lo) : 0.5)
                                           : QColor(0xbb, 0xbb, 0xbb);
            // a hair wider than the cell, so no seams show between cells in viewers
            p.fillRect(cell(i, j).adjusted(0, 0, 0.05 * k, 0.05 * k), c);
            if (unstable(r)) {
                p.setPen(QPen(Qt::white, 0.15 * k));
                drawCellCross(p, cell(i, j));
            }
        }
    p.setPen(QPen(palette::kBlack, 0.45 * k));
    drawRegionOutline(
        p, n1, n2,
        [&](int i, int j) {
            const ScanRow *r = rowAt(i, j);
            return r && passes(*r);
        },
        cell);
    if (std::isfinite(std::log10(std::abs(a.current)))
        && std::isfinite(std::log10(std::abs(b.current)))) {
        const QPointF c(onAxis(a, a.current, g.left(), g.right()),
                        onAxis(b, b.current, g.bottom(), g.top()));
        p.setRenderHint(QPainter::Antialiasing);
        p.setBrush(Qt::NoBrush);
        p.setPen(QPen(Qt::white, 0.3 * k));
        p.drawEllipse(c, 2.0 * k, 2.0 * k);
        p.setPen(QPen(palette::kOrange, 0.5 * k));
        p.drawEllipse(c, 1.6 * k, 1.6 * k);
    }
    p.setPen(QPen(kRule, 0.25 * k));
    p.setBrush(Qt::NoBrush);
    p.drawRect(g);
    p.setPen(kInk);
    const auto val = [](const ScanAxis &axis, double v) {
        return q(formatEngineering(v, 3, axis.unit));
    };
    drawText(p, QPointF(g.left(), g.bottom() + 3 * k), val(a, a.values.front()), Qt::AlignLeft);
    drawText(p, QPointF(g.right(), g.bottom() + 3 * k), val(a, a.values.back()), Qt::AlignRight);
    drawText(p, QPointF(g.center().x(), g.bottom() + 7 * k),
             q(a.name()) + QStringLiteral(" (") + q(toString(a.series)) + QStringLiteral(") →"),
             Qt::AlignHCenter);
    drawText(p, QPointF(g.left() - 1.2 * k, g.bottom() - 1.5 * k), val(b, b.values.front()),
             Qt::AlignRight);
    drawText(p, QPointF(g.left() - 1.2 * k, g.top() + 1.5 * k), val(b, b.values.back()),
             Qt::AlignRight);
    p.save();
    p.translate(rect.left() + 2.5 * k, g.center().y());
    p.rotate(-90);
    drawText(p, QPointF(0, 0),
             q(b.name()) + QStringLiteral(" (") + q(toString(b.series)) + QStringLiteral(") →"),
             Qt::AlignHCenter);
    p.restore();
    // the colour scale
    const QRectF scale(g.right() + 4 * k, g.top(), 3 * k, g.height());
    const int steps = 64;
    for (int s = 0; s < steps; ++s)
        p.fillRect(QRectF(scale.left(), scale.bottom() - (s + 1) * scale.height() / steps,
                          scale.width(), scale.height() / steps + 0.05 * k),
                   sequentialColour((s + 0.5) / steps));
    p.setPen(QPen(kRule, 0.2 * k));
    p.drawRect(scale);
    p.setPen(kInk);
    const QString unit = metricUnit(scan, metric);
    drawText(p, QPointF(scale.right() + 1.2 * k, scale.top() + 1.5 * k),
             q(formatEngineering(hi, 3, unit.toStdString())), Qt::AlignLeft);
    drawText(p, QPointF(scale.right() + 1.2 * k, scale.bottom() - 1.5 * k),
             q(formatEngineering(lo, 3, unit.toStdString())), Qt::AlignLeft);
    drawText(p, QPointF(scale.right() + 1.2 * k, scale.center().y()), metricInfo(metric).name,
             Qt::AlignLeft);
    p.restore();
}

} // namespace

QString scanParameters(const ScanResult &scan, int metric)
{
    QStringList axes;
    for (const ScanAxis &axis : scan.axes)
        axes << QStringLiteral("%1 (%2): %3 values of %4 from %5 to %6; the design has %7")
                    .arg(q(axis.name()), q(axis.field))
                    .arg(axis.values.size())
                    .arg(q(toString(axis.series)), q(formatEngineering(axis.from, 3, axis.unit)),
                         q(formatEngineering(axis.to, 3, axis.unit)),
                         q(formatEngineering(axis.current, 3, axis.unit)));
    std::size_t pass = 0, bad = 0;
    for (const ScanRow &r : scan.rows) {
        pass += passes(r) ? 1 : 0;
        bad += unstable(r) ? 1 : 0;
    }
    const bool map = scan.axes.size() == 2;
    QString text = axes.join(QStringLiteral(". ")) + QStringLiteral(". ");
    text += QStringLiteral("Shown: %1. %2 of %3 %4 meet every spec; %5 unstable.")
                .arg(metricInfo(metric).name)
                .arg(pass)
                .arg(scan.rows.size())
                .arg(map ? QStringLiteral("pairs") : QStringLiteral("values"))
                .arg(bad);
    if (scan.cancelled)
        text += QStringLiteral(" Cancelled after %1 of %2.")
                    .arg(scan.completed)
                    .arg(scan.rows.size());
    text += map ? QStringLiteral(" Outlined: the cells meeting every spec; crossed: unstable; "
                                 "ring: the design.")
                : QStringLiteral(" Filled: meets every spec; hollow: fails one; cross: unstable; "
                                 "dashed: the design's value.");
    return text;
}

void scansSection(SheetWriter &w, const std::vector<SheetScan> &scans)
{
    for (const SheetScan &s : scans) {
        if (!s.scan || s.scan->axes.empty() || s.scan->axes.size() > 2 || s.scan->rows.empty())
            continue;
        const ScanResult &scan = *s.scan;
        const bool map = scan.axes.size() == 2;
        const double figure = map ? kMapFigureMm : kScanFigureMm;
        w.heading(map ? QStringLiteral("Map of %1 and %2")
                            .arg(q(scan.axes[0].name()), q(scan.axes[1].name()))
                      : QStringLiteral("Scan of %1").arg(q(scan.axes[0].name())),
                  figure + 12);
        w.paragraph(scanParameters(scan, s.metric), sheetFont(kBodyPt));
        w.advance(2);
        w.ensure(figure);
        if (QPainter *p = w.painter()) {
            const QRectF rect = w.toDevice(QRectF(0, w.y(), w.width(), figure));
            if (map)
                drawMap(*p, rect, w.k(), scan, s.metric);
            else
                drawScan(*p, rect, w.k(), scan, s.metric);
        }
        w.advance(figure + kGapMm);
    }
}

} // namespace loopsketch::ui::sheet
