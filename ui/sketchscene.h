#pragma once

// The Sketch's scene: part symbols, orthogonal wires between pins of one node, ground
// symbols. It shows the design and reports intent (parts moved); it never edits the model.

#include "loopsketch/design.h"

#include <QGraphicsScene>
#include <QHash>
#include <QPointF>

#include <map>
#include <string>
#include <vector>

class QGraphicsPathItem;

namespace loopsketch::ui {

class PartItem;

class SketchScene : public QGraphicsScene
{
    Q_OBJECT

public:
    explicit SketchScene(QObject *parent = nullptr);

    /// Shows a design laid out as `layout`. The design must outlive the scene's use of it.
    void rebuild(const Design *design, const SketchLayout &layout);
    void updatePart(const std::string &partId);
    void applyLayout(const SketchLayout &layout);

    PartItem *partItem(const std::string &partId) const;
    /// The id of the single selected part, empty when none or several.
    std::string selectedPartId() const;
    void selectPart(const std::string &partId);

    /// The pin nearest `scenePos` within `radius`; false when there is none.
    bool pinAt(QPointF scenePos, double radius, std::string *partId, std::string *terminal,
               QPointF *at) const;
    /// Ids of all selected parts.
    std::vector<std::string> selectedPartIds() const;

    // Called by PartItem.
    void partDragged();
    void reportMoves();

signals:
    /// Parts the user dropped at new places (scene coordinates, on the grid).
    void partsMoved(const QHash<QString, QPointF> &positions);
    /// The user dragged a value label: step the part's value by `steps` positions.
    void stepRequested(const std::string &partId, int steps, bool decade);

private:
    void reroute();

    const Design *m_design = nullptr;
    SketchLayout m_layout;
    std::map<std::string, PartItem *> m_items;
    QGraphicsPathItem *m_wires = nullptr;
    QGraphicsPathItem *m_dots = nullptr;
    bool m_applying = false;
};

} // namespace loopsketch::ui
