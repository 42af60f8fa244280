#pragma once

// One wire on the Sketch: the orthogonal path between two pins of one node. It can be
// selected (it lights up under the pointer) and deleted, and a selected wire's end can be
// dragged to another pin (SketchView does the dragging; the document edits the nodes).

#include "sketch/sketchlayout.h"

#include <QGraphicsPathItem>

namespace loopsketch::ui {

class WireItem : public QGraphicsPathItem
{
public:
    enum { Type = UserType + 3 };

    explicit WireItem(const RoutedWire &wire);

    int type() const override { return Type; }
    QRectF boundingRect() const override;
    QPainterPath shape() const override;
    void paint(QPainter *painter, const QStyleOptionGraphicsItem *option, QWidget *widget) override;

    const RoutedWire &wire() const { return m_wire; }
    /// True while the pointer is over the wire.
    bool isHighlighted() const { return m_hover; }
    /// The scene point of one end: the `from` pin (0) or the `to` pin (1).
    QPointF endPoint(int end) const;

protected:
    void hoverEnterEvent(QGraphicsSceneHoverEvent *event) override;
    void hoverLeaveEvent(QGraphicsSceneHoverEvent *event) override;

private:
    RoutedWire m_wire;
    bool m_hover = false;
};

} // namespace loopsketch::ui
