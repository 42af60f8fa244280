// PlotPanel's interaction: zoom (wheel, band, double click to reset), pan, and the linked
// frequency cursor that follows the mouse across every panel.
#include "panels/plotpanel.h"

#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QCategoryAxis>
#include <QChart>
#include <QGraphicsLineItem>
#include <QGraphicsRectItem>
#include <QGraphicsSimpleTextItem>
#include <QGraphicsTextItem>
#include <QLineSeries>
#include <QMouseEvent>
#include <QRubberBand>
#include <QScatterSeries>
#include <QToolButton>
#include <QValueAxis>
#include <QWheelEvent>

#include <algorithm>
#include <cmath>

namespace loopsketch::ui {

namespace {

/// A zoomed view narrower than this share of the panel's own range says nothing more (the
/// labels would repeat); wider than kMaxZoomOut times it, nothing is left to see.
constexpr double kMinZoomShare = 1e-6;
constexpr double kMaxZoomOut = 4.0;
constexpr int kMinBandPixels = 6;

} // namespace

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
        const QRect band = QRect(m_dragFrom, event->pos()).normalized();
        if (band.width() < kMinBandPixels && band.height() < kMinBandPixels)
            plotClicked(event->pos());
        else
            zoomToRect(band);
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

} // namespace loopsketch::ui
