#include "panels/plotpanel.h"

#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QAction>
#include <QCategoryAxis>
#include <QChart>
#include <QGraphicsLineItem>
#include <QGraphicsRectItem>
#include <QGraphicsSimpleTextItem>
#include <QGraphicsTextItem>
#include <QLegend>
#include <QLegendMarker>
#include <QLineSeries>
#include <QMouseEvent>
#include <QRegularExpression>
#include <QRubberBand>
#include <QScatterSeries>
#include <QTimer>
#include <QToolButton>
#include <QValueAxis>
#include <QWheelEvent>

#include <algorithm>
#include <cmath>
#include <span>

namespace loopsketch::ui {

namespace {

/// The axis property holding the title an axis was made with (no analysis's unit in it).
const char *const kHomeTitle = "loopsketchHomeTitle";
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

/// A zoomed view narrower than this share of the panel's own range says nothing more (the
/// labels would repeat); wider than kMaxZoomOut times it, nothing is left to see.
constexpr double kMinZoomShare = 1e-6;
constexpr double kMaxZoomOut = 4.0;
constexpr int kMinBandPixels = 6;

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
    axis->setTitleText(title);
    axis->setProperty(kHomeTitle, title);
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
    axis->setProperty(kHomeTitle, title);
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

QPointF PlotPanel::toChart(QPoint viewportPos) const
{
    return chart()->mapFromScene(mapToScene(viewportPos));
}

std::vector<QValueAxis *> PlotPanel::zoomAxes(Qt::Orientations which) const
{
    std::vector<QValueAxis *> axes;
    for (QAbstractAxis *a : chart()->axes()) {
        auto *v = qobject_cast<QValueAxis *>(a);
        if (v && (which & a->orientation()) && m_home.count(v))
            axes.push_back(v);
    }
    return axes;
}

void PlotPanel::setView(QValueAxis *axis, double lo, double hi)
{
    const auto home = m_home.find(axis);
    if (home == m_home.end() || !std::isfinite(lo) || !std::isfinite(hi) || !(hi > lo))
        return;
    const double homeSpan = home->second.hi - home->second.lo;
    const double span = hi - lo;
    if (span < homeSpan * kMinZoomShare)
        return;
    if (span > homeSpan * kMaxZoomOut) {
        const double mid = (lo + hi) / 2;
        lo = mid - homeSpan * kMaxZoomOut / 2;
        hi = mid + homeSpan * kMaxZoomOut / 2;
    }
    const double tolerance = homeSpan * 1e-9;
    if (std::abs(lo - home->second.lo) <= tolerance && std::abs(hi - home->second.hi) <= tolerance)
        m_view.erase(axis);
    else
        m_view[axis] = {lo, hi, 0.0};
    applyAxis(axis);
}

void PlotPanel::zoomAt(QPoint at, double factor, Qt::Orientations which)
{
    const QRectF plot = chart()->plotArea();
    if (!(factor > 0) || plot.isEmpty())
        return;
    if (m_equalAspect)
        which = Qt::Horizontal | Qt::Vertical;
    const QPointF c = toChart(at);
    for (QValueAxis *axis : zoomAxes(which)) {
        const auto [lo, hi] = axisRange(axis);
        const double share = axis->orientation() == Qt::Horizontal
            ? (c.x() - plot.left()) / plot.width()
            : (plot.bottom() - c.y()) / plot.height();
        const double fixed = lo + std::clamp(share, 0.0, 1.0) * (hi - lo);
        setView(axis, fixed - (fixed - lo) * factor, fixed + (hi - fixed) * factor);
    }
    viewUpdated();
}

void PlotPanel::zoomToRect(const QRect &rect)
{
    const QRectF plot = chart()->plotArea();
    if (plot.isEmpty())
        return;
    QRectF r = QRectF(toChart(rect.topLeft()), toChart(rect.bottomRight())).normalized();
    const bool wide = rect.width() >= kMinBandPixels;
    const bool tall = rect.height() >= kMinBandPixels;
    if (!wide && !tall)
        return;
    if (m_equalAspect) {
        // The rectangle grows to the plot's proportions, so a unit keeps its length.
        const double aspect = plot.width() / plot.height();
        if (!tall || r.width() / std::max(1.0, r.height()) > aspect)
            r.setHeight(r.width() / aspect);
        else
            r.setWidth(r.height() * aspect);
        r.moveCenter(QRectF(toChart(rect.topLeft()), toChart(rect.bottomRight())).center());
    }
    Qt::Orientations which;
    if (wide || m_equalAspect)
        which |= Qt::Horizontal;
    if (tall || m_equalAspect)
        which |= Qt::Vertical;
    for (QValueAxis *axis : zoomAxes(which)) {
        const auto [lo, hi] = axisRange(axis);
        if (axis->orientation() == Qt::Horizontal)
            setView(axis, lo + (r.left() - plot.left()) / plot.width() * (hi - lo),
                    lo + (r.right() - plot.left()) / plot.width() * (hi - lo));
        else
            setView(axis, lo + (plot.bottom() - r.bottom()) / plot.height() * (hi - lo),
                    lo + (plot.bottom() - r.top()) / plot.height() * (hi - lo));
    }
    viewUpdated();
}

void PlotPanel::panBy(QPoint pixels)
{
    const QRectF plot = chart()->plotArea();
    if (plot.isEmpty() || pixels.isNull())
        return;
    for (QValueAxis *axis : zoomAxes(Qt::Horizontal | Qt::Vertical)) {
        const auto [lo, hi] = axisRange(axis);
        const double shift = axis->orientation() == Qt::Horizontal
            ? -pixels.x() / plot.width() * (hi - lo)
            : pixels.y() / plot.height() * (hi - lo);
        setView(axis, lo + shift, hi + shift);
    }
    viewUpdated();
}

void PlotPanel::resetZoom()
{
    if (m_view.empty())
        return;
    std::vector<QValueAxis *> zoomed;
    for (const auto &[axis, view] : m_view)
        zoomed.push_back(axis);
    m_view.clear();
    for (QValueAxis *axis : zoomed)
        applyAxis(axis);
    viewUpdated();
}

void PlotPanel::viewUpdated()
{
    for (auto &[s, full] : m_fullCurves)
        thin(s, full.points, full.xMin, full.xMax);
    if (std::isfinite(m_cursorAt))
        showFrequencyCursor(m_cursorAt);
    m_resetZoomAction->setEnabled(isZoomed());
    m_resetZoomButton->setVisible(isZoomed());
    placeSummary();
    plotGeometryChanged();
    emit viewChanged(isZoomed());
}

void PlotPanel::mousePressEvent(QMouseEvent *event)
{
    const bool inPlot = chart()->plotArea().contains(toChart(event->pos()));
    const bool pan = event->button() == Qt::MiddleButton
        || (event->button() == Qt::LeftButton && (event->modifiers() & Qt::ShiftModifier));
    if (inPlot && (pan || event->button() == Qt::LeftButton)) {
        m_drag = pan ? Drag::Pan : Drag::Band;
        m_dragFrom = event->pos();
        if (pan) {
            viewport()->setCursor(Qt::ClosedHandCursor);
        } else {
            if (!m_band)
                m_band = new QRubberBand(QRubberBand::Rectangle, viewport());
            m_band->setGeometry(QRect(m_dragFrom, QSize()));
            m_band->show();
        }
        event->accept();
        return;
    }
    QChartView::mousePressEvent(event);
}

void PlotPanel::mouseReleaseEvent(QMouseEvent *event)
{
    if (m_drag == Drag::None) {
        QChartView::mouseReleaseEvent(event);
        return;
    }
    const Drag drag = m_drag;
    m_drag = Drag::None;
    viewport()->unsetCursor();
    if (drag == Drag::Band) {
        m_band->hide();
        zoomToRect(QRect(m_dragFrom, event->pos()).normalized());
    }
    event->accept();
}

void PlotPanel::mouseDoubleClickEvent(QMouseEvent *event)
{
    if (event->button() == Qt::LeftButton) {
        resetZoom();
        event->accept();
        return;
    }
    QChartView::mouseDoubleClickEvent(event);
}

void PlotPanel::wheelEvent(QWheelEvent *event)
{
    const int notches = event->angleDelta().y();
    const QRectF plot = chart()->plotArea();
    const QPointF c = toChart(event->position().toPoint());
    Qt::Orientations which;
    if (plot.contains(c))
        which = Qt::Horizontal | Qt::Vertical;
    else if (c.x() >= plot.left() && c.x() <= plot.right())
        which = Qt::Horizontal; // over the axis below (or above) the plot
    else if (c.y() >= plot.top() && c.y() <= plot.bottom())
        which = Qt::Vertical; // over an axis beside the plot
    if (notches == 0 || !which) {
        event->ignore();
        return;
    }
    // One notch (120) zooms in to 80 % of the range; turning back zooms out as far.
    zoomAt(event->position().toPoint(), std::pow(0.8, notches / 120.0), which);
    event->accept();
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

void PlotPanel::enableOverlays(QAbstractAxis *x)
{
    m_overlayX = x;
    if (m_overlayAction)
        return;
    m_overlayAction = new QAction(tr("Overlay candidates"), this);
    m_overlayAction->setCheckable(true);
    m_overlayAction->setToolTip(
        tr("Overlay the pinned candidates' curves (thin, dashed, each named in the legend)"));
    addAction(m_overlayAction);
    setContextMenuPolicy(Qt::ActionsContextMenu);
    m_overlayButton = new QToolButton(this);
    m_overlayButton->setDefaultAction(m_overlayAction);
    m_overlayButton->setAutoRaise(true);
    m_overlayButton->setToolButtonStyle(Qt::ToolButtonTextOnly);
    QFont f = m_overlayButton->font();
    f.setPointSizeF(7.5);
    m_overlayButton->setFont(f);
    m_overlayButton->adjustSize();
    m_overlayButton->move(width() - m_overlayButton->width() - 4, 2);
    connect(m_overlayAction, &QAction::toggled, this, [this] { rebuildOverlays(); });
}

void PlotPanel::setOverlaySources(std::vector<OverlaySource> sources)
{
    m_overlaySources = std::move(sources);
    if (m_overlayAction && (m_overlayAction->isChecked() || !m_overlaySeries.empty()))
        rebuildOverlays();
}

QStringList PlotPanel::overlaySeriesNames() const
{
    QStringList names;
    for (const QXYSeries *s : m_overlaySeries)
        names << s->name();
    return names;
}

QStringList PlotPanel::legendLabels() const
{
    QStringList labels;
    for (const QLegendMarker *m : chart()->legend()->markers()) {
        if (m->isVisible())
            labels << m->label();
    }
    return labels;
}

void PlotPanel::refreshOverlays()
{
    if (m_overlayAction && (m_overlayAction->isChecked() || !m_overlaySeries.empty()))
        rebuildOverlays();
}

void PlotPanel::removeOverlaySeries(QXYSeries *s)
{
    chart()->removeSeries(s);
    m_fullCurves.erase(s);
    std::erase_if(m_series, [s](const auto &kv) { return kv.second == s; });
    delete s;
}

QXYSeries *PlotPanel::overlaySeries(std::size_t slot, const OverlayLine &line, const QString &name)
{
    QXYSeries *s = slot < m_overlaySeries.size() ? m_overlaySeries[slot] : nullptr;
    const bool isMarkers = s && s->type() == QAbstractSeries::SeriesTypeScatter;
    if (s && (!s->attachedAxes().contains(line.y) || isMarkers != line.markers)) {
        // Same slot, other axis or kind: replaced by a fresh series.
        removeOverlaySeries(s);
        s = nullptr;
    }
    if (!s) {
        if (line.markers) {
            auto *markers = new QScatterSeries;
            markers->setMarkerShape(QScatterSeries::MarkerShapeCircle);
            markers->setMarkerSize(9.0);
            s = markers;
        } else {
            s = new QLineSeries;
        }
        s->setName(name);
        chart()->addSeries(s);
        s->attachAxis(m_overlayX);
        s->attachAxis(line.y);
        if (slot < m_overlaySeries.size())
            m_overlaySeries[slot] = s;
        else
            m_overlaySeries.push_back(s);
        m_series[name] = s;
    } else if (s->name() != name) {
        rename(s, name);
    }
    return s;
}

void PlotPanel::rebuildOverlays()
{
    std::size_t used = 0;
    // A design that cannot be analysed has no candidates to show either.
    const bool unavailable = m_unavailable && m_unavailable->isVisible();
    if (m_overlayAction && m_overlayAction->isChecked() && m_overlayX && !unavailable) {
        for (std::size_t i = 0; i < m_overlaySources.size(); ++i) {
            const OverlaySource &source = m_overlaySources[i];
            if (!source.analysis || source.analysis->frequenciesHz.empty())
                continue;
            const std::vector<OverlayLine> lines = overlayLines(*source.analysis);
            std::vector<PlotCurve> quantities;
            for (const OverlayLine &line : lines)
                quantities.push_back(line.curve);
            const QString legend = overlayLegendText(source.name, quantities);
            for (std::size_t k = 0; k < lines.size(); ++k) {
                const OverlayLine &line = lines[k];
                const QString name = overlayName(source.name, line.curve);
                QXYSeries *s = overlaySeries(used, line, name);
                if (line.markers) {
                    // Hollow: the candidate's colour as the ring, the own poles stay filled.
                    auto *markers = static_cast<QScatterSeries *>(s);
                    markers->setBrush(Qt::NoBrush);
                    markers->setPen(QPen(overlayColour(int(i)), 1.6));
                    s->replace(line.points);
                } else {
                    QPen pen(overlayColour(int(i)), 1.0, overlayStyle(int(i)));
                    pen.setCosmetic(true);
                    pen.setCapStyle(Qt::FlatCap);
                    if (s->pen() != pen)
                        s->setPen(pen);
                    const double xMin = line.points.isEmpty() ? 0.0 : line.points.front().x();
                    const double xMax = line.points.isEmpty() ? 1.0 : line.points.back().x();
                    replaceThinned(s, line.points, xMin, xMax, line.format);
                }
                // One legend entry per candidate naming it and each of its quantities ("Fast:
                // T, gain"): its curves share one colour and dash, and one entry per curve
                // is elided past reading in a panel's width. The series keep their own
                // "candidate: quantity" names for the cursor text.
                for (QLegendMarker *m : chart()->legend()->markers(s)) {
                    m->setVisible(k == 0);
                    if (k == 0 && m->label() != legend)
                        m->setLabel(legend);
                }
                ++used;
            }
        }
    }
    while (m_overlaySeries.size() > used) {
        QXYSeries *s = m_overlaySeries.back();
        m_overlaySeries.pop_back();
        removeOverlaySeries(s);
    }
    // New series' legend entries show only once the legend has laid out (posted).
    QTimer::singleShot(0, this, [this] { placeLegend(); });
    if (std::isfinite(m_cursorAt))
        showFrequencyCursor(m_cursorAt);
}

void PlotPanel::placeLegend()
{
    // Below the plot while the entries fit in one row; beside it, one entry a line, when they
    // would be cut short there (Qt's legend elides rather than wraps).
    QLegend *legend = chart()->legend();
    const QFontMetricsF fm(legend->font());
    double needed = 0;
    for (const QLegendMarker *m : legend->markers()) {
        if (m->isVisible())
            needed += fm.horizontalAdvance(m->label()) + 2.4 * fm.height();
    }
    const Qt::Alignment want
        = needed > chart()->size().width() - 12.0 ? Qt::AlignRight : Qt::AlignBottom;
    if (legend->alignment() != want)
        legend->setAlignment(want);
}

void PlotPanel::replaceThinned(QXYSeries *s, const QList<QPointF> &points, double xMin, double xMax,
                               CursorFormat format)
{
    const auto known = m_fullCurves.find(s);
    const int order = known != m_fullCurves.end() ? known->second.order : int(m_fullCurves.size());
    m_fullCurves[s] = {points, xMin, xMax, format, order};
    thin(s, points, xMin, xMax);
    if (std::isfinite(m_cursorAt))
        showFrequencyCursor(m_cursorAt);
}

void PlotPanel::mouseMoveEvent(QMouseEvent *event)
{
    if (m_drag == Drag::Pan) {
        panBy(event->pos() - m_dragFrom);
        m_dragFrom = event->pos();
    } else if (m_drag == Drag::Band) {
        m_band->setGeometry(QRect(m_dragFrom, event->pos()).normalized());
    }
    QChartView::mouseMoveEvent(event);
    if (!m_frequencyAxis || m_series.empty())
        return;
    const QPointF inChart = chart()->mapFromScene(mapToScene(event->pos()));
    if (!chart()->plotArea().contains(inChart)) {
        emit frequencyHovered(std::nan(""));
        return;
    }
    emit frequencyHovered(chart()->mapToValue(inChart, m_series.begin()->second).x());
}

void PlotPanel::leaveEvent(QEvent *event)
{
    QChartView::leaveEvent(event);
    if (m_frequencyAxis)
        emit frequencyHovered(std::nan(""));
}

QString PlotPanel::cursorText() const
{
    return m_cursorText && m_cursorText->isVisible() ? m_cursorText->text() : QString();
}

void PlotPanel::showFrequencyCursor(double log10Hz)
{
    if (!m_frequencyAxis)
        return;
    m_cursorAt = log10Hz;
    if (!m_cursorLine) {
        m_cursorLine = new QGraphicsLineItem(chart());
        m_cursorLine->setPen(QPen(QColor(0x55, 0x5b, 0x66), 1.0, Qt::SolidLine));
        m_cursorLine->setZValue(20);
        m_cursorBox = new QGraphicsRectItem(chart());
        m_cursorBox->setBrush(QColor(255, 255, 255, 225));
        m_cursorBox->setPen(QPen(QColor(0xc8, 0xcd, 0xd4), 1.0));
        m_cursorBox->setZValue(21);
        m_cursorText = new QGraphicsSimpleTextItem(chart());
        QFont f = m_cursorText->font();
        f.setPointSizeF(8);
        m_cursorText->setFont(f);
        m_cursorText->setZValue(22);
    }
    const QRectF plot = chart()->plotArea();
    const bool visible = std::isfinite(log10Hz) && log10Hz >= m_frequencyAxis->min()
        && log10Hz <= m_frequencyAxis->max() && !m_series.empty();
    m_cursorLine->setVisible(visible);
    m_cursorBox->setVisible(visible);
    m_cursorText->setVisible(visible);
    if (!visible)
        return;
    const double x = chart()->mapToPosition(QPointF(log10Hz, 0), m_series.begin()->second).x();
    m_cursorLine->setLine(x, plot.top(), x, plot.bottom());
    QStringList lines;
    lines << tr("f = %1").arg(toQString(formatEngineering(std::pow(10.0, log10Hz), 3, "Hz")));
    std::vector<std::pair<QXYSeries *, const FullCurve *>> curves;
    for (const auto &[s, full] : m_fullCurves)
        curves.emplace_back(s, &full);
    std::sort(curves.begin(), curves.end(),
              [](const auto &l, const auto &r) { return l.second->order < r.second->order; });
    for (const auto &[s, fullCurve] : curves) {
        const FullCurve &full = *fullCurve;
        if (full.format == CursorFormat::None || full.points.isEmpty())
            continue;
        // The sweep point nearest the cursor; values are core's, not interpolated.
        const auto it = std::lower_bound(full.points.begin(), full.points.end(), log10Hz,
                                         [](const QPointF &p, double v) { return p.x() < v; });
        auto best = it == full.points.end() ? std::prev(it) : it;
        if (it != full.points.begin() && it != full.points.end()
            && std::abs(std::prev(it)->x() - log10Hz) < std::abs(it->x() - log10Hz))
            best = std::prev(it);
        if (std::abs(best->x() - log10Hz) > 0.05)
            continue;
        QString value;
        switch (full.format) {
        case CursorFormat::Decibels:
            value = QString::number(best->y(), 'f', 1) + QStringLiteral(" dB");
            break;
        case CursorFormat::Degrees:
            value = QString::number(best->y(), 'f', 1) + QStringLiteral("°");
            break;
        case CursorFormat::Log10Ohms:
            value = toQString(formatEngineering(std::pow(10.0, best->y()), 3, "Ω"));
            break;
        case CursorFormat::None:
            break;
        }
        lines << s->name() + QStringLiteral(": ") + value;
    }
    m_cursorText->setText(lines.join(QLatin1Char('\n')));
    const QRectF text = m_cursorText->boundingRect();
    double left = x + 8;
    if (left + text.width() + 8 > plot.right())
        left = x - 8 - text.width();
    m_cursorText->setPos(left, plot.top() + 6);
    m_cursorBox->setRect(QRectF(left - 4, plot.top() + 3, text.width() + 8, text.height() + 6));
}

QList<QPointF> PlotPanel::fullPoints(QXYSeries *s) const
{
    const auto it = m_fullCurves.find(s);
    return it == m_fullCurves.end() ? s->points() : it->second.points;
}

void PlotPanel::thin(QXYSeries *s, const QList<QPointF> &points, double xMin, double xMax)
{
    // Columns three pixels wide; each keeps its lowest and highest point, in sweep order.
    // Zoomed in, the columns are those of the range shown.
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
    const double perColumn = (shownMax - shownMin) / columns;
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
