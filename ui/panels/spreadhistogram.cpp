// The Spread panel's histograms: one chart per metric, the Monte Carlo trials in bins, the
// nominal value, the worst-case range and the spec limits marked.
#include "panels/spreadpanel.h"

#include "panels/plotpanel.h"
#include "panels/spreadmetric.h"
#include "support/qtadapter.h"

#include <QAreaSeries>
#include <QChart>
#include <QChartView>
#include <QLegend>
#include <QLineSeries>
#include <QValueAxis>

#include <algorithm>
#include <cmath>

namespace loopsketch::ui {

namespace {

/// 1, 2, 2.5 or 5 times a power of ten, so that `span` holds at most about `ticks` steps.
double niceStep(double span, int ticks)
{
    const double raw = span / std::max(1, ticks);
    const double decade = std::pow(10.0, std::floor(std::log10(raw)));
    for (double m : {1.0, 2.0, 2.5, 5.0, 10.0}) {
        if (m * decade >= raw)
            return m * decade;
    }
    return 10.0 * decade;
}

/// The spec limits that apply to `metric` (gain in the design's gain unit, bandwidth in Hz,
/// phase margin in degrees): low before high.
std::vector<double> specLimits(const Specs &specs, SpreadPanel::Metric metric)
{
    std::vector<double> limits;
    if (metric == SpreadPanel::Metric::Gain) {
        if (specs.gainMin)
            limits.push_back(specs.gainMin->si);
        if (specs.gainMax)
            limits.push_back(specs.gainMax->si);
    } else if (metric == SpreadPanel::Metric::Bandwidth && specs.bandwidthMin) {
        limits.push_back(specs.bandwidthMin->si);
    } else if (metric == SpreadPanel::Metric::PhaseMargin && specs.phaseMarginMinDeg) {
        limits.push_back(*specs.phaseMarginMinDeg);
    }
    return limits;
}

/// The histogram's outline in plot units (the metric's value times `k`, the count); one bin,
/// or bins of no width, span `lo` to `hi`. `top` rises to the largest count.
QList<QPointF> outlinePoints(const MetricStats &s, double lo, double hi, double k, std::size_t &top)
{
    QList<QPointF> points;
    const std::size_t bins = s.histogram.size();
    const double width = (s.histogramHigh - s.histogramLow) / double(bins);
    points.reserve(qsizetype(2 * bins + 2));
    const double base = bins == 1 || !(width > 0) ? lo : s.histogramLow;
    const double binWidth = bins == 1 || !(width > 0) ? (hi - lo) : width;
    points << QPointF(base * k, 0);
    for (std::size_t b = 0; b < bins; ++b) {
        const double c = double(s.histogram[b]);
        top = std::max(top, s.histogram[b]);
        points << QPointF((base + double(b) * binWidth) * k, c)
               << QPointF((base + double(b + 1) * binWidth) * k, c);
    }
    points << QPointF((base + double(bins) * binWidth) * k, 0);
    return points;
}

} // namespace

QChartView *SpreadPanel::makeHistogram(int i)
{
    Histogram &h = m_histograms[i];
    auto *chart = new QChart;
    chart->setBackgroundRoundness(0);
    chart->setMargins(QMargins(2, 2, 6, 2));
    chart->setAnimationOptions(QChart::NoAnimation);
    chart->legend()->hide();
    chart->setTitle(QStringLiteral(" "));
    QFont titleFont = chart->titleFont();
    titleFont.setPointSizeF(7.5);
    chart->setTitleFont(titleFont);
    chart->setTitleBrush(palette::kVermillion);
    h.x = new QValueAxis;
    h.y = new QValueAxis;
    QFont axisFont = h.x->labelsFont();
    axisFont.setPointSizeF(7.5);
    for (QValueAxis *a : {h.x, h.y}) {
        a->setLabelsFont(axisFont);
        QFont t = a->titleFont();
        t.setPointSizeF(8);
        t.setBold(false);
        a->setTitleFont(t);
        a->setTickType(QValueAxis::TicksDynamic);
        a->setTickAnchor(0);
        a->setMinorTickCount(0);
    }
    h.y->setTitleText(tr("trials"));
    h.y->setLabelFormat(QStringLiteral("%.0f"));
    chart->addAxis(h.x, Qt::AlignBottom);
    chart->addAxis(h.y, Qt::AlignLeft);
    h.outline = new QLineSeries;
    auto *area = new QAreaSeries(h.outline);
    QColor fill = palette::kSkyBlue;
    fill.setAlpha(150);
    area->setBrush(fill);
    area->setPen(QPen(palette::kBlue, 1.2));
    chart->addSeries(area);
    area->attachAxis(h.x);
    area->attachAxis(h.y);
    const auto addLine = [&](const QColor &colour, Qt::PenStyle style) {
        auto *s = new QLineSeries;
        QPen pen(colour, 1.6, style);
        pen.setCosmetic(true);
        s->setPen(pen);
        chart->addSeries(s);
        s->attachAxis(h.x);
        s->attachAxis(h.y);
        return s;
    };
    h.specLow = addLine(palette::kVermillion, Qt::DashLine);
    h.specHigh = addLine(palette::kVermillion, Qt::DashLine);
    h.nominal = addLine(palette::kBlack, Qt::DotLine);
    h.view = new QChartView(chart, this);
    h.view->setRenderHint(QPainter::Antialiasing);
    h.view->setMinimumSize(170, 150);
    h.view->setObjectName(QStringLiteral("SpreadHistogram%1").arg(i));
    return h.view;
}

QChart *SpreadPanel::histogramChart(Metric metric) const
{
    return m_histograms[int(metric)].view->chart();
}

void SpreadPanel::showHistogram(Metric metric)
{
    Histogram &h = m_histograms[int(metric)];
    const MetricStats *s = m_result ? &statsOf(m_result->monteCarlo, metric) : nullptr;
    const std::string &unit = m_resultUnit;
    if (!s || s->count == 0 || s->histogram.empty()) {
        h.outline->clear();
        h.view->chart()->setTitle(QStringLiteral(" "));
        for (QLineSeries *l : {h.specLow, h.specHigh, h.nominal})
            l->clear();
        h.x->setTitleText(metric == Metric::PhaseMargin ? tr("phase margin (°)")
                                                        : axisName(metric));
        h.x->setRange(0, 1);
        h.x->setTickInterval(0.25);
        h.y->setRange(0, 10);
        h.y->setTickInterval(5);
        return;
    }
    const std::vector<double> specs = specLimits(m_resultSpecs, metric);
    double lo = s->histogramLow, hi = s->histogramHigh;
    if (!(hi > lo)) {
        const double pad = std::max(std::abs(lo) * 1e-3, 1e-12);
        lo -= pad;
        hi += pad;
    }
    // Spec limits join the plot unless they are so far away that the histogram would
    // shrink to a sliver.
    const double span = hi - lo;
    double plotLo = lo, plotHi = hi;
    QStringList offPlot;
    for (double v : specs) {
        if (v >= lo - 3 * span && v <= hi + 3 * span) {
            plotLo = std::min(plotLo, v);
            plotHi = std::max(plotHi, v);
        } else {
            offPlot << (metric == Metric::Gain ? QString() : QStringLiteral("≥ "))
                    + formatMetric(metric, v, unit)
                    + (v < lo ? tr(", left of the plot") : tr(", right of the plot"));
        }
    }
    const double nominal = [&] {
        const OptionalNumber n = nominalOf(m_result->monteCarlo.nominal, metric);
        return n ? *n : std::nan("");
    }();
    // Axis in display units: a prefix for gain and bandwidth (MV/A, kHz), degrees as they are.
    ScalePrefix scale;
    QString unitText = QStringLiteral("°");
    if (metric != Metric::PhaseMargin) {
        scale = scalePrefixFor(std::max(std::abs(plotLo), std::abs(plotHi)));
        unitText = scale.prefix + (metric == Metric::Gain ? toQString(unit) : QStringLiteral("Hz"));
    }
    const double k = scale.factor;
    const double margin = (plotHi - plotLo) * 0.04;
    double xLo = (plotLo - margin) * k, xHi = (plotHi + margin) * k;
    const double step = niceStep(xHi - xLo, 4);
    xLo = std::floor(xLo / step) * step;
    xHi = std::ceil(xHi / step) * step;
    h.x->setRange(xLo, xHi);
    h.x->setTickInterval(step);
    const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
    h.x->setLabelFormat(QStringLiteral("%.%1f").arg(decimals));
    h.x->setTitleText(QStringLiteral("%1 (%2)").arg(axisName(metric), unitText));

    std::size_t top = 1;
    h.outline->replace(outlinePoints(*s, lo, hi, k, top));
    const double yStep = niceStep(double(top) * 1.1, 4);
    h.y->setRange(0, std::ceil(double(top) * 1.1 / yStep) * yStep);
    h.y->setTickInterval(yStep);
    const double yTop = h.y->max();
    const auto vertical = [&](QLineSeries *line, double v) {
        if (std::isfinite(v))
            line->replace({QPointF(v * k, 0), QPointF(v * k, yTop)});
        else
            line->clear();
    };
    const auto shown = [&](std::size_t i) {
        if (i >= specs.size())
            return std::nan("");
        const double v = specs[i];
        return v >= lo - 3 * span && v <= hi + 3 * span ? v : std::nan("");
    };
    vertical(h.specLow, shown(0));
    vertical(h.specHigh, shown(1));
    vertical(h.nominal, nominal);
    // The spec values read in the tooltip; the lines show where they fall.
    QString tip = metricName(metric);
    if (!specs.empty()) {
        if (metric == Metric::Gain)
            tip += QStringLiteral(", ")
                + tr("spec %1 … %2")
                      .arg(m_resultSpecs.gainMin
                               ? formatMetric(metric, m_resultSpecs.gainMin->si, unit)
                               : QStringLiteral("−∞"),
                           m_resultSpecs.gainMax
                               ? formatMetric(metric, m_resultSpecs.gainMax->si, unit)
                               : QStringLiteral("+∞"));
        else
            tip += QStringLiteral(", ")
                + tr("spec ≥ %1").arg(formatMetric(metric, specs.front(), unit));
        if (!offPlot.isEmpty())
            tip += QStringLiteral(" ")
                + QStringLiteral("(%1)").arg(offPlot.join(QStringLiteral("; ")));
    }
    h.view->setToolTip(tip);
    // A blank title otherwise keeps the three plot areas level.
    h.view->chart()->setTitle(offPlot.isEmpty()
                                  ? QStringLiteral(" ")
                                  : tr("spec %1").arg(offPlot.join(QStringLiteral("; "))));
}

} // namespace loopsketch::ui
