#pragma once

// One part on the Sketch: our own symbol, drawn in the part's own coordinates with the pins
// at multiples of the grid, and its value label in engineering notation.

#include "loopsketch/design/design.h"

#include <QGraphicsItem>
#include <QString>

namespace loopsketch::ui {

class PartItem : public QGraphicsItem
{
public:
    enum { Type = UserType + 1 };

    explicit PartItem(const Part &part, int rotation, bool mirror = false);

    int type() const override { return Type; }
    QRectF boundingRect() const override;
    QPainterPath shape() const override;
    void paint(QPainter *painter, const QStyleOptionGraphicsItem *option, QWidget *widget) override;

    const std::string &partId() const { return m_id; }
    PartType partType() const { return m_type; }
    int symbolRotation() const { return m_rotation; }
    bool symbolMirrored() const { return m_mirror; }
    /// The placement the item shows now (its position, rotation and mirroring).
    SketchPlacement placement() const;
    /// Updates the label and orientation from the part.
    void update(const Part &part, int rotation, bool mirror);
    /// Puts the label on the first side of the symbol (the usual one first) where it covers
    /// none of `obstacles` (scene rectangles: wires, other symbols); the least covered side
    /// when every side is.
    void placeLabel(const std::vector<QRectF> &obstacles);
    /// The symbol's body in scene coordinates (what labels and wires keep clear of).
    QRectF sceneBodyRect() const;

    /// The value label's area, in item coordinates.
    QRectF labelRect() const { return m_labelRect; }
    /// Screen pixels of vertical label drag per E-series step.
    static constexpr double kPixelsPerStep = 12.0;

    /// Text of the value label, e.g. "1 MΩ" or "110 dB".
    static QString valueText(const Part &part);

protected:
    QVariant itemChange(GraphicsItemChange change, const QVariant &value) override;
    void mousePressEvent(QGraphicsSceneMouseEvent *event) override;
    void mouseMoveEvent(QGraphicsSceneMouseEvent *event) override;
    void mouseReleaseEvent(QGraphicsSceneMouseEvent *event) override;

private:
    void layoutLabel();
    QTransform symbolTransform() const;
    void paintSymbol(QPainter *painter) const;

    std::string m_id;
    PartType m_type;
    int m_rotation = 0;
    bool m_mirror = false;
    QSizeF m_labelSize;
    QString m_label;
    QString m_value;
    QRectF m_labelRect; ///< in item coordinates (the item is not rotated; the symbol is)
    QPointF m_pressPos;
    bool m_hasValue = false; ///< the part has a primary value (steppable)
    bool m_labelDrag = false; ///< a vertical drag on the value label steps the value
    double m_dragOrigin = 0; ///< screen y where the label drag started
    int m_dragSteps = 0; ///< steps already requested in this drag
};

} // namespace loopsketch::ui
