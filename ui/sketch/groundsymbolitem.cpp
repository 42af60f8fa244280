#include "sketch/groundsymbolitem.h"

#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"

#include <QGraphicsSceneMouseEvent>
#include <QPainter>
#include <QStyleOptionGraphicsItem>

namespace loopsketch::ui {

GroundSymbolItem::GroundSymbolItem(int index) : m_index(index)
{
    setFlags(ItemIsMovable | ItemIsSelectable | ItemIsFocusable | ItemSendsGeometryChanges);
    setToolTip(QObject::tr("Ground: drag from a part's pin to here to connect it to ground"));
}

QRectF GroundSymbolItem::boundingRect() const
{
    return QRectF(-14, -4, 28, 30);
}

void GroundSymbolItem::paint(QPainter *painter, const QStyleOptionGraphicsItem *option, QWidget *)
{
    const bool selected = option->state & QStyle::State_Selected;
    painter->setPen(QPen(selected ? QColor(0x00, 0x72, 0xb2) : QColor(0x2b, 0x2f, 0x36), 1.6));
    painter->drawLine(QPointF(0, 0), QPointF(0, 12));
    for (int i = 0; i < 3; ++i) {
        const double half = 11.0 - 4.0 * i;
        painter->drawLine(QPointF(-half, 12 + 4.5 * i), QPointF(half, 12 + 4.5 * i));
    }
    painter->setBrush(painter->pen().color());
    painter->drawEllipse(pinPosition(), 2.2, 2.2);
}

QVariant GroundSymbolItem::itemChange(GraphicsItemChange change, const QVariant &value)
{
    if (change == ItemPositionChange) {
        const QPointF p = value.toPointF();
        return QPointF(snapToGrid(p.x()), snapToGrid(p.y()));
    }
    return QGraphicsItem::itemChange(change, value);
}

void GroundSymbolItem::mousePressEvent(QGraphicsSceneMouseEvent *event)
{
    m_pressPos = pos();
    QGraphicsItem::mousePressEvent(event);
}

void GroundSymbolItem::mouseReleaseEvent(QGraphicsSceneMouseEvent *event)
{
    QGraphicsItem::mouseReleaseEvent(event);
    if (pos() != m_pressPos) {
        if (auto *s = dynamic_cast<SketchScene *>(scene()))
            emit s->groundMoved(m_index, pos());
    }
}

} // namespace loopsketch::ui
