#include "sheet/sheetplots.h"

#include "sheet/sheetplotengine.h"

#include "panels/noisepanel.h"
#include "sheet/sheetwriter.h"
#include "support/freespot.h"
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
        if (const QString text = undrawableCurveText(a.curves.*member); !text.isEmpty())
            notes << QStringLiteral("%1: %2").arg(curveName(curve), text);
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

/// The poles of `poles` at a finite s.
std::vector<ClosedLoopPole> finitePoles(const std::vector<ClosedLoopPole> &poles)
{
    std::vector<ClosedLoopPole> finite;
    for (const ClosedLoopPole &pole : poles) {
        if (std::isfinite(pole.s.real()) && std::isfinite(pole.s.imag()))
            finite.push_back(pole);
    }
    return finite;
}

/// Labels set on a plot without covering one another or what is taken: each goes to the first
/// of its corners (top-left of the text) where it lies inside the area and over nothing taken.
class LabelPlacer
{
public:
    LabelPlacer(QPainter &p, const QFontMetricsF &fm, const QRectF &area)
        : m_p(p), m_fm(fm), m_area(area)
    { }

    void take(const QRectF &r) { m_taken.push_back(r); }

    void place(const QString &text, std::initializer_list<QPointF> corners, const QColor &colour)
    {
        const QSizeF size(m_fm.horizontalAdvance(text), m_fm.height());
        if (const auto spot = firstFreeSpot(corners, size, m_area, m_taken)) {
            m_p.setPen(colour);
            m_p.drawText(QPointF(spot->left(), spot->top() + m_fm.ascent()), text);
            m_taken.push_back(*spot);
        }
    }

private:
    QPainter &m_p;
    const QFontMetricsF &m_fm;
    QRectF m_area;
    std::vector<QRectF> m_taken;
};

/// The closed-loop poles on the Poles panel's log-magnitude radial scale (support/polescale.h):
/// one circle a decade labelled in rad/s, the jω and real axes, the design's poles as filled
/// squares with their values beside them (the dominant ones first), each candidate's as rings.
std::vector<Series> polesPlot(QPainter &p, const PlotFrame &f, const Analysis &a,
                              const std::vector<SheetOverlay> &overlays)
{
    const std::vector<ClosedLoopPole> shown = finitePoles(a.poles);
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
        for (const ClosedLoopPole &pole : finitePoles(overlays[i].analysis->poles))
            points.push_back(scale.map(pole.s));
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
    LabelPlacer labels(p, fm, area);
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
        labels.take(QRectF(m.x() - 1.2 * k, m.y() - 1.2 * k, 2.4 * k, 2.4 * k));
    }
    const QColor valueColour = palette::kVermillion.darker(140);
    for (const PoleValueLabel &l : poleValueLabels(shown)) {
        const QPointF c = at(scale.map(shown[l.index].s));
        const double w = fm.horizontalAdvance(l.text), h = fm.height(), g = 1.4 * k;
        labels.place(l.text,
                     {QPointF(c.x() + g, c.y() - h - 0.2 * k),
                      QPointF(c.x() - g - w, c.y() - h - 0.2 * k),
                      QPointF(c.x() + g, c.y() + 0.2 * k), QPointF(c.x() - g - w, c.y() + 0.2 * k),
                      QPointF(c.x() - w / 2, c.y() - h - g), QPointF(c.x() - w / 2, c.y() + g)},
                     valueColour);
    }
    // Axis names and circle values.
    QFont italic = small;
    italic.setItalic(true);
    p.setFont(italic);
    const QPointF realEnd = at(QPointF(right - 0.1, 0)), jwTop = at(QPointF(0, reach));
    labels.place(
        QStringLiteral("Re s"),
        {QPointF(realEnd.x() - fm.horizontalAdvance(QStringLiteral("Re s")), realEnd.y() + 0.5 * k),
         QPointF(realEnd.x() - fm.horizontalAdvance(QStringLiteral("Re s")),
                 realEnd.y() - fm.height() - 0.5 * k)},
        kRule.darker(130));
    labels.place(QStringLiteral("jω"), {QPointF(jwTop.x() + 1 * k, jwTop.y() + 0.5 * k)},
                 kRule.darker(130));
    p.setFont(small);
    for (int ring = 0; ring < scale.rings; ++ring) {
        const QPointF c = at(QPointF(0, -PoleScale::ringRadius(ring)));
        const QString text
            = QString::fromStdString(formatEngineering(scale.ringValue(ring), 3, "rad/s"));
        const double w = fm.horizontalAdvance(text);
        labels.place(text,
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
