#pragma once

// A free-standing ground symbol on the Sketch: a pin on top, three bars below. Wiring a
// part's pin to it puts that pin on node "0". It can be moved and deleted like a part.

#include <QGraphicsItem>

namespace loopsketch::ui {

class GroundSymbolItem : public QGraphicsItem
{
public:
    enum { Type = UserType + 2 };

    /// `index` is the symbol's position in the layout's `grounds` list.
    explicit GroundSymbolItem(int index);

    int type() const override { return Type; }
    int index() const { return m_index; }
    QRectF boundingRect() const override;
    void paint(QPainter *painter, const QStyleOptionGraphicsItem *option, QWidget *widget) override;

    /// The pin (where wires attach), in item coordinates.
    static QPointF pinPosition() { return QPointF(0, 0); }

protected:
    QVariant itemChange(GraphicsItemChange change, const QVariant &value) override;
    void mousePressEvent(QGraphicsSceneMouseEvent *event) override;
    void mouseReleaseEvent(QGraphicsSceneMouseEvent *event) override;

private:
    int m_index;
    QPointF m_pressPos;
};

} // namespace loopsketch::ui
