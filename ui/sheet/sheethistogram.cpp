#include "sheet/sheetplots.h"

#include "sheet/sheetwriter.h"
#include "support/plotstyle.h"

#include <QFontMetricsF>
#include <QPolygonF>

#include <algorithm>
#include <cmath>
#include <vector>

namespace loopsketch::ui::sheet {

namespace {

/// The histogram's axes: the bins' range with the spec limits in view, one SI prefix for
/// the gain axis, round steps.
struct HistogramScale
{
    double lo = 0, hi = 0; ///< the bins' range, gain units
    std::vector<double> limits; ///< spec limits in view
    double factor = 1; ///< axis units per gain unit
    QString prefix;
    double step = 1, xLo = 0, xHi = 1; ///< axis units
    double yStep = 1, yHi = 1; ///< trials
};

HistogramScale histogramScale(const MetricStats &s, const Specs &specs)
{
    HistogramScale h;
    double &lo = h.lo, &hi = h.hi;
    lo = s.histogramLow;
    hi = s.histogramHigh;
    if (!(hi > lo)) {
        const double pad = std::max(std::abs(lo) * 1e-3, 1e-12);
        lo -= pad;
        hi += pad;
    }
    const double span = hi - lo;
    std::vector<double> &limits = h.limits;
    for (const auto &v : {specs.gainMin, specs.gainMax})
        if (v && v->si >= lo - 3 * span && v->si <= hi + 3 * span)
            limits.push_back(v->si);
    double plotLo = lo, plotHi = hi;
    for (double v : limits) {
        plotLo = std::min(plotLo, v);
        plotHi = std::max(plotHi, v);
    }
    const double pad = (plotHi - plotLo) * 0.04;
    plotLo -= pad;
    plotHi += pad;
    // tick labels with one prefix for the whole axis (e.g. MV/A)
    const double mag = std::max(std::abs(plotLo), std::abs(plotHi));
    static const std::pair<double, const char *> prefixes[]
        = {{1e12, "T"}, {1e9, "G"},  {1e6, "M"},  {1e3, "k"},  {1, ""},
           {1e-3, "m"}, {1e-6, "µ"}, {1e-9, "n"}, {1e-12, "p"}};
    double &factor = h.factor;
    QString &prefix = h.prefix;
    for (const auto &[f, name] : prefixes) {
        if (mag >= f) {
            factor = 1 / f;
            prefix = QString::fromUtf8(name);
            break;
        }
    }
    const double rawStep = (plotHi - plotLo) * factor / 6;
    const double decade = std::pow(10.0, std::floor(std::log10(rawStep)));
    double &step = h.step;
    step = decade;
    for (double m : {1.0, 2.0, 2.5, 5.0, 10.0}) {
        step = m * decade;
        if (step >= rawStep)
            break;
    }
    h.xLo = std::floor(plotLo * factor / step) * step;
    h.xHi = std::ceil(plotHi * factor / step) * step;
    std::size_t top = 1;
    for (std::size_t c : s.histogram)
        top = std::max(top, c);
    h.yStep = niceStep(double(top) * 1.1, 4,
                       {1,   2,    5,    10,   20,   25,    50,    100,   200,   250,
                        500, 1000, 2000, 2500, 5000, 10000, 20000, 25000, 50000, 100000});
    h.yHi = std::ceil(double(top) * 1.1 / h.yStep) * h.yStep;

    return h;
}

/// Grid, tick labels and axis titles in `area`.
void drawHistogramAxes(QPainter &p, const QRectF &area, double k, const HistogramScale &h,
                       const std::string &unit)
{
    const QFont tick = sheetFont(6.5);
    const QFontMetricsF fm(tick, p.device());
    const double step = h.step, xLo = h.xLo, xHi = h.xHi, yStep = h.yStep, yHi = h.yHi;
    const auto Y = [&](double c) {
        return area.bottom() - c / yHi * area.height();
    };
    p.setFont(tick);
    const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
    for (double v = xLo; v <= xHi + step * 1e-6; v += step) {
        const double x = area.left() + (v - xLo) / (xHi - xLo) * area.width();
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
        const QString label = QString::number(std::abs(v) < step * 1e-6 ? 0.0 : v, 'f', decimals);
        p.setPen(kInk);
        p.drawText(
            QPointF(x - fm.horizontalAdvance(label) / 2, area.bottom() + 1.2 * k + fm.ascent()),
            label);
    }
    double maxLabel = 0;
    for (double c = 0; c <= yHi + yStep * 1e-6; c += yStep) {
        const double y = Y(c);
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(area.left(), y), QPointF(area.right(), y));
        const QString label = QString::number(c, 'f', 0);
        maxLabel = std::max(maxLabel, fm.horizontalAdvance(label));
        p.setPen(kInk);
        p.drawText(QPointF(area.left() - 1.2 * k - fm.horizontalAdvance(label),
                           y + fm.ascent() / 2 - fm.descent() / 2),
                   label);
    }
    const QString xTitle = QStringLiteral("closed-loop gain (%1%2)").arg(h.prefix, q(unit));
    p.drawText(QPointF(area.right() - fm.horizontalAdvance(xTitle),
                       area.bottom() + 1.2 * k + fm.ascent() + fm.height()),
               xTitle);
    p.save();
    p.translate(area.left() - 2.4 * k - maxLabel - fm.descent(), area.center().y());
    p.rotate(-90);
    const QString yTitle = QStringLiteral("trials");
    p.drawText(QPointF(-fm.horizontalAdvance(yTitle) / 2, 0), yTitle);
    p.restore();
}

/// The bins as one outline, the spec window and the nominal gain.
void drawHistogramBars(QPainter &p, const QRectF &area, double k, const HistogramScale &h,
                       const MetricStats &s, const OptionalNumber &nominal)
{
    const auto X = [&](double v) {
        return area.left() + (v * h.factor - h.xLo) / (h.xHi - h.xLo) * area.width();
    };
    const auto Y = [&](double c) {
        return area.bottom() - c / h.yHi * area.height();
    };
    const double lo = h.lo, hi = h.hi;
    p.save();
    p.setClipRect(area);
    QPolygonF outline;
    const std::size_t bins = s.histogram.size();
    const double width = bins ? (s.histogramHigh - s.histogramLow) / double(bins) : 0;
    const double base = width > 0 ? s.histogramLow : lo;
    const double binWidth = width > 0 ? width : (hi - lo) / double(std::max<std::size_t>(bins, 1));
    outline << QPointF(X(base), Y(0));
    for (std::size_t b = 0; b < bins; ++b) {
        const double c = double(s.histogram[b]);
        outline << QPointF(X(base + double(b) * binWidth), Y(c))
                << QPointF(X(base + double(b + 1) * binWidth), Y(c));
    }
    outline << QPointF(X(base + double(bins) * binWidth), Y(0));
    p.setPen(QPen(palette::kBlue, 0.3 * k));
    p.setBrush(QColor(palette::kBlue.red(), palette::kBlue.green(), palette::kBlue.blue(), 60));
    p.drawPolygon(outline);
    p.setBrush(Qt::NoBrush);
    p.setPen(QPen(kFail, 0.35 * k, Qt::DashLine));
    for (double v : h.limits)
        p.drawLine(QPointF(X(v), area.top()), QPointF(X(v), area.bottom()));
    if (nominal && std::isfinite(*nominal)) {
        p.setPen(QPen(kInk, 0.3 * k, Qt::DotLine));
        p.drawLine(QPointF(X(*nominal), area.top()), QPointF(X(*nominal), area.bottom()));
    }
    p.restore();
    p.setPen(QPen(kRule, 0.25 * k));
    p.drawRect(area);
}

} // namespace

void drawGainHistogram(QPainter &p, const QRectF &rect, double k, const MetricStats &s,
                       const Specs &specs, const OptionalNumber &nominal, const std::string &unit)
{
    p.save();
    const QFont tick = sheetFont(6.5), titleFont = sheetFont(8.5, true);
    const QFontMetricsF fm(tick, p.device()), tfm(titleFont, p.device());
    const HistogramScale h = histogramScale(s, specs);
    const std::vector<double> &limits = h.limits;
    const QRectF area(rect.left() + 17 * k, rect.top() + tfm.height() + 3 * k,
                      rect.width() - 19 * k, rect.height() - tfm.height() - 12 * k);
    drawHistogramAxes(p, area, k, h, unit);
    drawHistogramBars(p, area, k, h, s, nominal);
    p.setFont(titleFont);
    p.setPen(kInk);
    p.drawText(QPointF(rect.left(), rect.top() + tfm.ascent()),
               QStringLiteral("Monte Carlo: closed-loop gain"));
    // legend beside the title
    p.setFont(tick);
    double x = rect.left() + tfm.horizontalAdvance(QStringLiteral("Monte Carlo: closed-loop gain"))
        + 6 * k;
    const double y = rect.top() + tfm.ascent() - fm.ascent() / 2 + fm.descent() / 2;
    const auto legend = [&](const QPen &pen, const QString &text) {
        p.setPen(pen);
        p.drawLine(QPointF(x, y), QPointF(x + 6 * k, y));
        x += 7 * k;
        p.setPen(kInk);
        p.drawText(QPointF(x, y + fm.ascent() / 2 - fm.descent() / 2), text);
        x += fm.horizontalAdvance(text) + 4 * k;
    };
    legend(QPen(palette::kBlue, 0.5 * k), QStringLiteral("trials per bin"));
    if (!limits.empty())
        legend(QPen(kFail, 0.35 * k, Qt::DashLine), QStringLiteral("spec window"));
    legend(QPen(kInk, 0.3 * k, Qt::DotLine), QStringLiteral("nominal"));
    p.restore();
}

} // namespace loopsketch::ui::sheet
