#include "panels/plotpanel.h"

#include "support/columnthinning.h"
#include "support/qtadapter.h"
#include "support/vectorstate.h"

#include "loopsketch/base/value.h"

#include <QAction>
#include <QCategoryAxis>
#include <QChart>
#include <QGraphicsSimpleTextItem>
#include <QGraphicsTextItem>
#include <QLegend>
#include <QLegendMarker>
#include <QLineSeries>
#include <QRegularExpression>
#include <QScatterSeries>
#include <QToolButton>
#include <QValueAxis>

#include <algorithm>
#include <cmath>
#include <span>

namespace loopsketch::ui {

namespace {

/// The axis property holding the title an axis was made with (no analysis's unit in it).
const char *const kHomeTitle = "loopsketchHomeTitle";
/// How far (in pixels) a curve drawn without its straight runs' inner points may lie from
/// the line through all of them: a quarter pixel.
constexpr double kStraightTolerancePixels = 0.25;
/// The axis property holding the label colour while an analysis is shown.
const char *const kShownLabelColour = "loopsketchShownLabelColour";

/// 1, 2 or 5 times a power of ten, so that `span` holds at most about `ticks` steps.
double niceStep(double span, double ticks)
{
    const double raw = span / std::max(1.0, ticks);
    const double decade = std::pow(10.0, std::floor(std::log10(raw)));
    for (double m : {1.0, 2.0, 5.0}) {
        if (m * decade >= raw)
            return m * decade;
    }
    return 10.0 * decade;
}

/// The panels' axis look (and the title it was made with, for showUnavailable()): the title in 8.5
/// pt, the labels in 8 pt, light grid lines.
void styleAxis(QAbstractAxis *axis, const QString &title)
{
    axis->setTitleText(title);
    axis->setProperty(kHomeTitle, title);
    QFont f = axis->titleFont();
    f.setPointSizeF(8.5);
    f.setBold(false);
    axis->setTitleFont(f);
    QFont lf = axis->labelsFont();
    lf.setPointSizeF(8);
    axis->setLabelsFont(lf);
    axis->setGridLineColor(QColor(0xdd, 0xe1, 0xe6));
}

} // namespace

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
    connect(c, &QChart::plotAreaChanged, this, &PlotPanel::plotAreaChanged);
    setRenderHint(QPainter::Antialiasing, true);
    setMinimumSize(240, 190);

    m_resetZoomAction = new QAction(tr("Reset zoom"), this);
    m_resetZoomAction->setToolTip(tr("Back to the whole plot (or double-click the plot)"));
    m_resetZoomAction->setEnabled(false);
    connect(m_resetZoomAction, &QAction::triggered, this, &PlotPanel::resetZoom);
    addAction(m_resetZoomAction);
    setContextMenuPolicy(Qt::ActionsContextMenu);
    m_resetZoomButton = new QToolButton(this);
    m_resetZoomButton->setDefaultAction(m_resetZoomAction);
    m_resetZoomButton->setToolButtonStyle(Qt::ToolButtonTextOnly);
    QFont bf = m_resetZoomButton->font();
    bf.setPointSizeF(7.5);
    m_resetZoomButton->setFont(bf);
    m_resetZoomButton->adjustSize();
    m_resetZoomButton->hide();
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
    styleAxis(axis, title);
    axis->setGridLineVisible(grid);
    axis->setTickType(QValueAxis::TicksDynamic);
    axis->setLabelFormat(QStringLiteral("%g"));
    chart()->addAxis(axis, alignment);
    return axis;
}

QCategoryAxis *PlotPanel::addLogAxis(const QString &title, Qt::Alignment alignment)
{
    auto *axis = new QCategoryAxis;
    styleAxis(axis, title);
    axis->setLabelsPosition(QCategoryAxis::AxisLabelsPositionOnValue);
    chart()->addAxis(axis, alignment);
    if (alignment == Qt::AlignBottom) {
        m_frequencyAxis = axis;
        viewport()->setMouseTracking(true);
    }
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
    m_home[axis] = {lo, hi, 1.0};
    state.unit = std::string(unit);
    applyDecades(axis, state);
}

void PlotPanel::applyDecades(QCategoryAxis *axis, DecadeAxis &state)
{
    const QRectF plot = chart()->plotArea();
    const bool vertical = axis->orientation() == Qt::Vertical;
    const double pixels = vertical ? plot.height() : plot.width();
    double lo = state.lo, hi = state.hi;
    if (const auto view = m_view.find(axis); view != m_view.end()) {
        lo = view->second.lo;
        hi = view->second.hi;
    }
    const double span = hi - lo;
    // Room for a label such as "100k" (horizontal) or one text line (vertical).
    const double room = vertical ? 22.0 : 40.0;
    int step = 1;
    int fine = 0;
    if (pixels > 0) {
        while (step < 6 && pixels * step / span < room)
            ++step;
        // Zoomed into a decade or two: labels at 2 and 5 (their closest pair is 0.3 decade
        // apart), or at every digit (2 to 9: 0.046 decade).
        const double perDecade = pixels / span;
        fine = perDecade >= room / 0.0458 ? 2 : perDecade >= room / 0.301 ? 1 : 0;
    }
    if (step == state.step && fine == state.fine && lo == state.drawnLo && hi == state.drawnHi
        && state.unit == state.drawnUnit)
        return;
    // Rebuilding the categories relayouts the chart, so it happens only when they change.
    const QStringList old = axis->categoriesLabels();
    for (const QString &label : old)
        axis->remove(label);
    axis->setStartValue(lo);
    const int first = int(std::ceil(lo - 1e-9));
    static const double kFine[] = {2, 5};
    static const double kDigits[] = {2, 3, 4, 5, 6, 7, 8, 9};
    for (int k = int(std::floor(lo)); k <= int(std::floor(hi + 1e-9)); ++k) {
        if (k >= first && ((k - first) % step == 0 || step == 1))
            axis->append(toQString(formatEngineering(std::pow(10.0, k), 3, state.unit)), k);
        if (fine == 0)
            continue;
        for (double m :
             fine == 1 ? std::span<const double>(kFine) : std::span<const double>(kDigits)) {
            const double at = k + std::log10(m);
            if (at > lo + 1e-9 && at <= hi + 1e-9)
                axis->append(toQString(formatEngineering(m * std::pow(10.0, k), 3, state.unit)),
                             at);
        }
    }
    axis->setRange(lo, hi);
    state.step = step;
    state.fine = fine;
    state.drawnLo = lo;
    state.drawnHi = hi;
    state.drawnUnit = state.unit;
}

void PlotPanel::resizeEvent(QResizeEvent *event)
{
    QChartView::resizeEvent(event);
    placeSummary();
    if (!m_overlaySeries.empty())
        placeLegend();
}

void PlotPanel::paintEvent(QPaintEvent *event)
{
    // Stroking and dashing the curves call libm for every segment: with the vector registers
    // left dirty by the widget painted before, that costs several times more.
    clearUpperVectorState();
    QChartView::paintEvent(event);
}

void PlotPanel::plotAreaChanged()
{
    // Label spacing and curve thinning depend on the plot's pixels, known only after the
    // chart's own layout ran.
    for (auto &[axis, state] : m_decadeAxes)
        applyDecades(axis, state);
    for (auto &[s, full] : m_fullCurves)
        thin(s, full.points, full.xMin, full.xMax);
    for (const auto &[axis, r] : m_roundAxes)
        applyRound(axis, r);
    // A zoomed value axis spaces its ticks for the plot's pixels too.
    for (const auto &[axis, view] : m_view) {
        if (!qobject_cast<QCategoryAxis *>(axis))
            applyAxis(axis);
    }
    placeSummary();
    plotGeometryChanged();
    if (std::isfinite(m_cursorAt))
        showFrequencyCursor(m_cursorAt);
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
    setHomeRange(axis, std::floor(lo / step) * step, std::ceil(hi / step) * step, step);
}

void PlotPanel::setHomeRange(QValueAxis *axis, double lo, double hi, double step)
{
    m_home[axis] = {lo, hi, step};
    applyAxis(axis);
}

void PlotPanel::fitEqualScales(QValueAxis *x, QValueAxis *y, double left, double right,
                               double reach, double step)
{
    const QRectF plot = chart()->plotArea();
    if (m_fitting || !(plot.width() > 0) || !(plot.height() > 0))
        return;
    m_fitting = true;
    const double perPixel = std::max((right - left) / plot.width(), 2.0 * reach / plot.height());
    const double centre = (left + right) / 2.0;
    const double halfWidth = perPixel * plot.width() / 2.0;
    const double halfHeight = perPixel * plot.height() / 2.0;
    setHomeRange(x, centre - halfWidth, centre + halfWidth, step);
    setHomeRange(y, -halfHeight, halfHeight, step);
    m_fitting = false;
}

void PlotPanel::applyAxis(QValueAxis *axis)
{
    if (auto *decades = qobject_cast<QCategoryAxis *>(axis)) {
        if (const auto state = m_decadeAxes.find(decades); state != m_decadeAxes.end())
            applyDecades(decades, state->second);
        return;
    }
    if (const auto view = m_view.find(axis); view != m_view.end()) {
        const QRectF plot = chart()->plotArea();
        const bool vertical = axis->orientation() == Qt::Vertical;
        // About 30 px a label vertically, 70 px horizontally ("-0.125").
        const double ticks = vertical ? plot.height() / 30.0 : plot.width() / 70.0;
        const auto [lo, hi, unused] = view->second;
        applyRange(axis, lo, hi, niceStep(hi - lo, std::max(2.0, ticks)));
        return;
    }
    if (const auto home = m_home.find(axis); home != m_home.end())
        applyRange(axis, home->second.lo, home->second.hi, home->second.step);
}

std::pair<double, double> PlotPanel::axisRange(const QAbstractAxis *axis)
{
    if (const auto *v = qobject_cast<const QValueAxis *>(axis))
        return {v->min(), v->max()};
    return {0.0, 0.0};
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

void PlotPanel::showUnavailable(const QString &reason)
{
    // What an analysis writes into the axes and the tooltip (units, ranges, sensitivities) is
    // taken back to what the panel had before any analysis.
    if (!m_homeCaptured) {
        m_homeToolTip = toolTip();
        m_homeCaptured = true;
    }
    if (reason.isEmpty()) {
        if (m_unavailable && m_unavailable->isVisible()) {
            m_unavailable->hide();
            for (QAbstractAxis *axis : chart()->axes()) {
                if (const QVariant colour = axis->property(kShownLabelColour); colour.isValid())
                    axis->setLabelsColor(colour.value<QColor>());
            }
            refreshOverlays();
        }
        return;
    }
    for (QAbstractAxis *axis : chart()->axes()) {
        if (const QVariant home = axis->property(kHomeTitle); home.isValid())
            axis->setTitleText(home.toString());
        // Transparent rather than hidden: Qt Charts 6.4 lays a title out from its labels, and
        // hidden labels squeeze the title to an ellipsis.
        if (axis->labelsColor().alpha() != 0) {
            axis->setProperty(kShownLabelColour, axis->labelsColor());
            axis->setLabelsColor(Qt::transparent);
        }
    }
    setToolTip(m_homeToolTip);
    static const QRegularExpression count(QStringLiteral(" \\(\\d+\\)$"));
    std::vector<std::pair<QXYSeries *, QString>> counted;
    for (auto &[name, series] : m_series) {
        series->replace(QList<QPointF>());
        // A count in a legend label ("poles (4)") is a number of the last analysis too.
        if (name.contains(count))
            counted.emplace_back(series, QString(name).remove(count));
    }
    for (const auto &[series, name] : counted)
        rename(series, name);
    for (auto &[series, curve] : m_fullCurves)
        curve.points.clear();
    for (QXYSeries *s : m_overlaySeries)
        s->replace(QList<QPointF>());
    setTitle(tr("not analysed"));
    showFrequencyCursor(std::nan(""));
    plotGeometryChanged();
    if (!m_unavailable) {
        m_unavailable = new QGraphicsTextItem(chart());
        m_unavailable->setDefaultTextColor(QColor(0x8a, 0x1c, 0x14));
        m_unavailable->setZValue(100);
    }
    const QRectF area = chart()->plotArea();
    m_unavailable->setTextWidth(std::max(120.0, area.width() - 24));
    m_unavailable->setPlainText(
        tr("Not analysed: %1").arg(reason.section(QLatin1Char('\n'), 0, 0)));
    m_unavailable->setPos(area.left() + 12,
                          area.center().y() - m_unavailable->boundingRect().height() / 2);
    m_unavailable->show();
}

QString PlotPanel::unavailableText() const
{
    return m_unavailable && m_unavailable->isVisible() ? m_unavailable->toPlainText() : QString();
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
    const double full = chart()->size().width();
    // The overlay toggle sits in the top right corner when the summary leaves room for it,
    // else in the bottom right corner, level with the centred legend.
    double room = full;
    if (m_overlayButton) {
        const int bw = m_overlayButton->width();
        if (w + 2.0 * (bw + 8.0) <= full) {
            m_overlayButton->move(width() - bw - 4, 2);
            room = full - bw - 8.0;
        } else {
            m_overlayButton->move(width() - bw - 4, height() - m_overlayButton->height() - 2);
        }
    }
    m_summary->setPos(std::max(4.0, (room - w) / 2.0), chart()->margins().top() + 3.0);
    // Bottom left, beside the legend, under the vertical axis' labels.
    m_resetZoomButton->move(4, height() - m_resetZoomButton->height() - 2);
}

void PlotPanel::replaceThinned(QXYSeries *s, const QList<QPointF> &points, double xMin, double xMax,
                               CursorFormat format)
{
    const auto known = m_fullCurves.find(s);
    // The same data (an edit that left this quantity alone): the series keeps its drawing.
    if (known != m_fullCurves.end() && known->second.xMin == xMin && known->second.xMax == xMax
        && known->second.format == format && samePoints(known->second.points, points))
        return;
    const int order = known != m_fullCurves.end() ? known->second.order : int(m_fullCurves.size());
    m_fullCurves[s] = {points, xMin, xMax, format, order};
    thin(s, points, xMin, xMax);
    if (std::isfinite(m_cursorAt))
        showFrequencyCursor(m_cursorAt);
}

bool PlotPanel::samePoints(const QList<QPointF> &a, const QList<QPointF> &b)
{
    // Exact equality (QPointF's operator== is fuzzy): a change in the last digit redraws.
    return a.size() == b.size()
        && std::equal(a.begin(), a.end(), b.begin(), [](const QPointF &p, const QPointF &q) {
               return p.x() == q.x() && p.y() == q.y();
           });
}

QList<QPointF> PlotPanel::fullPoints(QXYSeries *s) const
{
    const auto it = m_fullCurves.find(s);
    return it == m_fullCurves.end() ? s->points() : it->second.points;
}

void PlotPanel::thin(QXYSeries *s, const QList<QPointF> &points, double xMin, double xMax)
{
    // Columns three pixels wide; each keeps its lowest and highest point, in sweep order
    // (thinToColumns()). Zoomed in, the columns are those of the range shown.
    const double columns = chart()->plotArea().width() / 3.0;
    double shownMin = xMin, shownMax = xMax;
    for (const QAbstractAxis *axis : s->attachedAxes()) {
        if (axis->orientation() == Qt::Horizontal) {
            const auto [lo, hi] = axisRange(axis);
            if (hi > lo) {
                shownMin = lo;
                shownMax = hi;
            }
        }
    }
    const double shown = std::min(shownMax, xMax) - std::max(shownMin, xMin);
    if (!(columns > 0) || !(xMax > xMin) || !(shown > 0)
        || double(points.size()) * shown / (xMax - xMin) < 2 * columns) {
        s->replace(points);
        return;
    }
    // Zoomed in, what lies off the plot is left out but for the one point on each side
    // that carries the line to the edge (the view is thinned again on every pan and zoom).
    const auto byX = [](const QPointF &p, double x) {
        return p.x() < x;
    };
    auto from = std::lower_bound(points.begin(), points.end(), shownMin, byX);
    auto to = std::lower_bound(from, points.end(), shownMax, byX);
    if (from != points.begin())
        --from;
    if (to != points.end())
        ++to;
    const QList<QPointF> onPlot
        = from == points.begin() && to == points.end() ? points : QList<QPointF>(from, to);
    const QList<QPointF> thinned = thinToColumns(onPlot, xMin, (shownMax - shownMin) / columns);
    // The vertical scale for the straight runs: the smaller of the axis' range and the
    // curve's own, so that an axis about to be set narrower cannot make the tolerance loose.
    double yLo = 0, yHi = 0, ySpan = 0;
    if (yRange({&thinned}, &yLo, &yHi))
        ySpan = yHi - yLo;
    for (const QAbstractAxis *axis : s->attachedAxes()) {
        if (axis->orientation() == Qt::Vertical) {
            const auto [lo, hi] = axisRange(axis);
            if (hi > lo && (!(ySpan > 0) || hi - lo < ySpan))
                ySpan = hi - lo;
        }
    }
    const QRectF plot = chart()->plotArea();
    s->replace(dropStraightRuns(thinned, (shownMax - shownMin) / plot.width(),
                                ySpan / plot.height(), kStraightTolerancePixels));
}

void PlotPanel::hideFromLegend(QXYSeries *s)
{
    for (QLegendMarker *m : chart()->legend()->markers(s))
        m->setVisible(false);
}

void PlotPanel::setRoundRange(QValueAxis *axis, double lo, double hi, double step)
{
    m_roundAxes[axis] = {lo, hi, step};
    applyRound(axis, m_roundAxes[axis]);
}

void PlotPanel::applyRound(QValueAxis *axis, const RoundAxis &r)
{
    // Wider steps (x2) while the labels would crowd: about 26 px per label vertically.
    const QRectF plot = chart()->plotArea();
    const double pixels = axis->orientation() == Qt::Vertical ? plot.height() : plot.width() / 2;
    const double maxTicks = std::max(2.0, pixels / 26.0);
    double step = r.step;
    double a = 0, b = 0;
    for (int i = 0; i < 6; ++i) {
        // A curve a hair beyond a round value does not cost a whole extra step.
        a = std::floor(r.lo / step + 0.02) * step;
        b = std::ceil(r.hi / step - 0.02) * step;
        if (!(b > a)) {
            a -= step;
            b += step;
        }
        if (!(pixels > 0) || (b - a) / step <= maxTicks)
            break;
        step *= 2;
    }
    setHomeRange(axis, a, b, step);
}

void PlotPanel::rename(QXYSeries *s, const QString &name)
{
    if (s->name() == name)
        return; // a new name re-lays the legend out

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
