#include "sketch/wireitem.h"

#include "support/qtadapter.h"

#include <QPainter>
#include <QPainterPathStroker>
#include <QStyleOptionGraphicsItem>

namespace loopsketch::ui {

namespace {

const QColor kWire(0x2b, 0x2f, 0x36);
const QColor kSelected(0x00, 0x72, 0xb2); // Okabe-Ito blue
const QColor kHover(0x56, 0xb4, 0xe9); // Okabe-Ito sky blue

} // namespace

WireItem::WireItem(const RoutedWire &wire) : m_wire(wire)
{
    QPainterPath path;
    path.addPolygon(wire.path);
    setPath(path);
    setFlags(ItemIsSelectable);
    setAcceptHoverEvents(true);
    setZValue(-1);
    setPen(QPen(kWire, 1.4, Qt::SolidLine, Qt::SquareCap, Qt::MiterJoin));
    setToolTip(QObject::tr("Wire %1.%2 – %3.%4 (node %5): Delete removes it; when selected, "
                           "drag an end to another pin to move it there")
                   .arg(toQString(wire.from.part), toQString(wire.from.terminal),
                        toQString(wire.to.part), toQString(wire.to.terminal),
                        toQString(wire.node)));
}

QRectF WireItem::boundingRect() const
{
    return path().boundingRect().adjusted(-6, -6, 6, 6);
}

QPainterPath WireItem::shape() const
{
    // A band a few pixels either side, so a thin wire is easy to hit.
    QPainterPathStroker stroker;
    stroker.setWidth(8);
    stroker.setCapStyle(Qt::FlatCap);
    return stroker.createStroke(path());
}

QPointF WireItem::endPoint(int end) const
{
    if (m_wire.path.isEmpty())
        return {};
    return end == 0 ? m_wire.path.first() : m_wire.path.last();
}

void WireItem::paint(QPainter *painter, const QStyleOptionGraphicsItem *option, QWidget *)
{
    const bool selected = option->state & QStyle::State_Selected;
    painter->setRenderHint(QPainter::Antialiasing, true);
    QPen pen = this->pen();
    if (selected || m_hover) {
        pen.setColor(selected ? kSelected : kHover);
        pen.setWidthF(selected ? 2.6 : 2.4);
    }
    painter->setPen(pen);
    painter->setBrush(Qt::NoBrush);
    painter->drawPath(path());
    if (selected) {
        // Handles on the ends: drag one to another pin.
        painter->setBrush(Qt::white);
        painter->setPen(QPen(kSelected, 1.4));
        for (int end = 0; end < 2; ++end)
            painter->drawRect(QRectF(endPoint(end) - QPointF(3.5, 3.5), QSizeF(7, 7)));
    }
}

void WireItem::hoverEnterEvent(QGraphicsSceneHoverEvent *event)
{
    m_hover = true;
    update();
    QGraphicsPathItem::hoverEnterEvent(event);
}

void WireItem::hoverLeaveEvent(QGraphicsSceneHoverEvent *event)
{
    m_hover = false;
    update();
    QGraphicsPathItem::hoverLeaveEvent(event);
}

} // namespace loopsketch::ui
