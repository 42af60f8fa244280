#include "plotpanel.h"

#include "qtadapter.h"

#include "loopsketch/value.h"

#include <QCategoryAxis>
#include <QChart>
#include <QGraphicsSimpleTextItem>
#include <QLegend>
#include <QLegendMarker>
#include <QLineSeries>
#include <QScatterSeries>
#include <QValueAxis>

#include <cmath>

namespace loopsketch::ui {

PlotPanel::PlotPanel(const QString &title, QWidget *parent) : QChartView(parent)
{
    auto *c = new QChart;
    setObjectName(title);
    c->setTitle(QStringLiteral(" "));
    QFont titleFont = c->titleFont();
    titleFont.setPointSizeF(8.5);
    titleFont.setBold(false);
    c->setTitleFont(titleFont);
    m_summary = new QGraphicsSimpleTextItem(c);
    m_summary->setFont(titleFont);
    m_summary->setBrush(QColor(0x2b, 0x2f, 0x36));
    c->setBackgroundRoundness(0);
    c->setMargins(QMargins(6, 4, 6, 4));
    c->setAnimationOptions(QChart::NoAnimation);
    c->legend()->setAlignment(Qt::AlignBottom);
    QFont legendFont = c->legend()->font();
    legendFont.setPointSizeF(8);
    c->legend()->setFont(legendFont);
    setChart(c);
    setRenderHint(QPainter::Antialiasing, true);
    setMinimumSize(240, 190);
}

QXYSeries *PlotPanel::series(const QString &name) const
{
    const auto it = m_series.find(name);
    return it == m_series.end() ? nullptr : it->second;
}

QLineSeries *PlotPanel::addLine(const QString &name, const QColor &colour, Qt::PenStyle style,
                                QAbstractAxis *x, QAbstractAxis *y, bool inLegend)
{
    auto *s = new QLineSeries;
    s->setName(name);
    // Dashed wide pens go through Qt's slow dash stroker; a one-pixel cosmetic dashed pen
    // is drawn by the raster engine's fast path and reads just as well for the phase.
    QPen pen(colour, style == Qt::SolidLine ? 1.8 : 1.0, style);
    pen.setCosmetic(style != Qt::SolidLine);
    pen.setCapStyle(Qt::FlatCap);
    s->setPen(pen);
    chart()->addSeries(s);
    s->attachAxis(x);
    s->attachAxis(y);
    if (!inLegend) {
        for (QLegendMarker *m : chart()->legend()->markers(s))
            m->setVisible(false);
    }
    m_series[name] = s;
    return s;
}

QScatterSeries *PlotPanel::addMarker(const QString &name, const QColor &colour, QAbstractAxis *x,
                                     QAbstractAxis *y, double size)
{
    auto *s = new QScatterSeries;
    s->setName(name);
    s->setMarkerSize(size);
    s->setColor(colour);
    s->setBorderColor(Qt::white);
    chart()->addSeries(s);
    s->attachAxis(x);
    s->attachAxis(y);
    m_series[name] = s;
    return s;
}

QValueAxis *PlotPanel::addValueAxis(const QString &title, Qt::Alignment alignment, bool grid)
{
    auto *axis = new QValueAxis;
    axis->setTitleText(title);
    QFont f = axis->titleFont();
    f.setPointSizeF(8.5);
    f.setBold(false);
    axis->setTitleFont(f);
    QFont lf = axis->labelsFont();
    lf.setPointSizeF(8);
    axis->setLabelsFont(lf);
    axis->setGridLineVisible(grid);
    axis->setGridLineColor(QColor(0xdd, 0xe1, 0xe6));
    axis->setTickType(QValueAxis::TicksDynamic);
    axis->setLabelFormat(QStringLiteral("%g"));
    chart()->addAxis(axis, alignment);
    return axis;
}

QCategoryAxis *PlotPanel::addLogAxis(const QString &title, Qt::Alignment alignment)
{
    auto *axis = new QCategoryAxis;
    axis->setTitleText(title);
    QFont f = axis->titleFont();
    f.setPointSizeF(8.5);
    f.setBold(false);
    axis->setTitleFont(f);
    QFont lf = axis->labelsFont();
    lf.setPointSizeF(8);
    axis->setLabelsFont(lf);
    axis->setLabelsPosition(QCategoryAxis::AxisLabelsPositionOnValue);
    axis->setGridLineColor(QColor(0xdd, 0xe1, 0xe6));
    chart()->addAxis(axis, alignment);
    return axis;
}

void PlotPanel::setDecadeRange(QCategoryAxis *axis, double lo, double hi, std::string_view unit)
{
    if (!(hi > lo)) {
        lo -= 0.5;
        hi += 0.5;
    }
    DecadeAxis &state = m_decadeAxes[axis];
    state.lo = lo;
    state.hi = hi;
    state.unit = std::string(unit);
    applyDecades(axis, state);
}

void PlotPanel::applyDecades(QCategoryAxis *axis, DecadeAxis &state)
{
    const QRectF plot = chart()->plotArea();
    const bool vertical = axis->orientation() == Qt::Vertical;
    const double pixels = vertical ? plot.height() : plot.width();
    const double span = state.hi - state.lo;
    // Room for a label such as "100k" (horizontal) or one text line (vertical).
    const double room = vertical ? 22.0 : 40.0;
    int step = 1;
    if (pixels > 0) {
        while (step < 6 && pixels * step / span < room)
            ++step;
    }
    if (step == state.step && state.lo == state.drawnLo && state.hi == state.drawnHi
        && state.unit == state.drawnUnit)
        return;
    // Rebuilding the categories relayouts the chart, so it happens only when they change.
    const QStringList old = axis->categoriesLabels();
    for (const QString &label : old)
        axis->remove(label);
    axis->setStartValue(state.lo);
    const int first = int(std::ceil(state.lo - 1e-9));
    for (int k = first; k <= int(std::floor(state.hi + 1e-9)); ++k) {
        if ((k - first) % step == 0 || step == 1)
            axis->append(toQString(formatEngineering(std::pow(10.0, k), 3, state.unit)), k);
    }
    axis->setRange(state.lo, state.hi);
    state.step = step;
    state.drawnLo = state.lo;
    state.drawnHi = state.hi;
    state.drawnUnit = state.unit;
}

void PlotPanel::resizeEvent(QResizeEvent *event)
{
    QChartView::resizeEvent(event);
    placeSummary();
    for (auto &[axis, state] : m_decadeAxes)
        applyDecades(axis, state);
    for (auto &[s, full] : m_fullCurves)
        thin(s, full.points, full.xMin, full.xMax);
}

void PlotPanel::setNiceRange(QValueAxis *axis, double lo, double hi, int ticks)
{
    if (!(hi > lo)) {
        lo -= 1;
        hi += 1;
    }
    const double raw = (hi - lo) / std::max(1, ticks);
    const double decade = std::pow(10.0, std::floor(std::log10(raw)));
    double step = decade;
    for (double m : {1.0, 2.0, 5.0, 10.0}) {
        step = m * decade;
        if (step >= raw)
            break;
    }
    applyRange(axis, std::floor(lo / step) * step, std::ceil(hi / step) * step, step);
}

void PlotPanel::applyRange(QValueAxis *axis, double lo, double hi, double step)
{
    // Every axis change relayouts the chart and recomputes its series; skip the no-ops.
    if (axis->tickType() != QValueAxis::TicksDynamic)
        axis->setTickType(QValueAxis::TicksDynamic);
    if (axis->tickAnchor() != 0.0)
        axis->setTickAnchor(0);
    if (axis->tickInterval() != step)
        axis->setTickInterval(step);
    if (axis->min() != lo || axis->max() != hi)
        axis->setRange(lo, hi);
}

void PlotPanel::setTitle(const QString &title)
{
    // A chart title change relayouts the whole chart (about 1 ms a panel), so the title
    // is a fixed blank line and the summary a plain text item drawn over it.
    if (m_summary->text() == title)
        return;
    m_summary->setText(title);
    placeSummary();
}

QString PlotPanel::summary() const
{
    return m_summary->text();
}

void PlotPanel::placeSummary()
{
    const double w = m_summary->boundingRect().width();
    m_summary->setPos(std::max(4.0, (chart()->size().width() - w) / 2.0),
                      chart()->margins().top() + 3.0);
}

void PlotPanel::replaceThinned(QXYSeries *s, const QList<QPointF> &points, double xMin, double xMax)
{
    m_fullCurves[s] = {points, xMin, xMax};
    thin(s, points, xMin, xMax);
}

QList<QPointF> PlotPanel::fullPoints(QXYSeries *s) const
{
    const auto it = m_fullCurves.find(s);
    return it == m_fullCurves.end() ? s->points() : it->second.points;
}

void PlotPanel::thin(QXYSeries *s, const QList<QPointF> &points, double xMin, double xMax)
{
    // Columns three pixels wide; each keeps its lowest and highest point, in sweep order.
    const double columns = chart()->plotArea().width() / 3.0;
    if (!(columns > 0) || !(xMax > xMin) || points.size() < qsizetype(2 * columns)) {
        s->replace(points);
        return;
    }
    const double perColumn = (xMax - xMin) / columns;
    QList<QPointF> kept;
    kept.reserve(qsizetype(2 * columns) + 4);
    const qsizetype n = points.size();
    qsizetype i = 0;
    while (i < n) {
        const double column = std::floor((points[i].x() - xMin) / perColumn);
        qsizetype j = i, lowest = i, highest = i;
        while (j < n && std::floor((points[j].x() - xMin) / perColumn) == column) {
            if (points[j].y() < points[lowest].y())
                lowest = j;
            if (points[j].y() > points[highest].y())
                highest = j;
            ++j;
        }
        kept.append(points[std::min(lowest, highest)]);
        if (lowest != highest)
            kept.append(points[std::max(lowest, highest)]);
        i = j;
    }
    if (kept.back() != points.back())
        kept.append(points.back());
    s->replace(kept);
}

void PlotPanel::hideFromLegend(QXYSeries *s)
{
    for (QLegendMarker *m : chart()->legend()->markers(s))
        m->setVisible(false);
}

void PlotPanel::setRoundRange(QValueAxis *axis, double lo, double hi, double step)
{
    double a = std::floor(lo / step) * step;
    double b = std::ceil(hi / step) * step;
    if (!(b > a)) {
        a -= step;
        b += step;
    }
    applyRange(axis, a, b, step);
}

void PlotPanel::rename(QXYSeries *s, const QString &name)
{
    for (auto it = m_series.begin(); it != m_series.end(); ++it) {
        if (it->second == s) {
            m_series.erase(it);
            break;
        }
    }
    s->setName(name);
    m_series[name] = s;
}

bool yRange(std::initializer_list<const QList<QPointF> *> lists, double *lo, double *hi)
{
    bool any = false;
    for (const QList<QPointF> *list : lists) {
        for (const QPointF &p : *list) {
            if (!any) {
                *lo = *hi = p.y();
                any = true;
            }
            *lo = std::min(*lo, p.y());
            *hi = std::max(*hi, p.y());
        }
    }
    return any;
}

} // namespace loopsketch::ui
