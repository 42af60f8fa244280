#pragma once

// The Sketch's scene: part symbols, orthogonal wires between pins of one node, ground
// symbols. It shows the design and reports intent (parts moved); it never edits the model.

#include "loopsketch/design/design.h"

#include <QGraphicsScene>
#include <QHash>
#include <QPointF>

#include <map>
#include <memory>
#include <string>
#include <vector>

class QGraphicsPathItem;
class QGraphicsSimpleTextItem;

namespace loopsketch::ui {

class PartItem;
class WireItem;
struct PinRef;
struct RoutedWire;
struct SketchWiring;

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
    /// Selects exactly these parts.
    void selectParts(const std::vector<std::string> &partIds);
    /// Selects every part and ground symbol (wires go with their parts).
    void selectAllSymbols();
    /// The wires shown now, each an edge of its node's tree.
    std::vector<WireItem *> wireItems() const { return m_wireItems; }
    /// The wire joining two pins (either way round), nullptr when none.
    WireItem *wireBetween(const PinRef &a, const PinRef &b) const;
    /// The selected wires.
    std::vector<RoutedWire> selectedWires() const;
    /// The end of a selected wire within `radius` of `scenePos`: the wire, and `end` 0 for
    /// its `from` pin, 1 for its `to` pin; nullptr when there is none.
    WireItem *selectedWireEndAt(QPointF scenePos, double radius, int *end) const;
    /// The value labels' rectangles in scene coordinates, by part id.
    std::map<std::string, QRectF> labelRects() const;
    /// The free-standing ground symbol whose pin is nearest `scenePos` within `radius`
    /// (its index in the layout), -1 when there is none.
    int groundAt(QPointF scenePos, double radius, QPointF *at = nullptr) const;
    /// Indices of the selected ground symbols.
    std::vector<int> selectedGrounds() const;
    /// Rings the part the analysis cannot get past in red; empty removes the mark.
    void markProblem(const std::string &partId);
    /// The part marked by markProblem(), empty when none.
    std::string problemPart() const { return m_problem; }
    /// The one-line hint shown while the design has no parts; empty when hidden.
    QString hintText() const;

    // Called by PartItem.
    void partDragged();
    void reportMoves();

signals:
    /// Parts the user dropped at new places (scene coordinates, on the grid).
    void partsMoved(const QHash<QString, QPointF> &positions);
    /// The user dragged a value label: step the part's value by `steps` positions.
    void stepRequested(const std::string &partId, int steps, bool decade);
    /// The user dropped ground symbol `index` at a new place (scene coordinates).
    void groundMoved(int index, QPointF position);

private:
    void reroute();
    void placeLabels(const SketchWiring &wiring, const std::vector<QRectF> &groundMarks);

    const Design *m_design = nullptr;
    SketchLayout m_layout;
    std::map<std::string, PartItem *> m_items;
    QGraphicsPathItem *m_wires = nullptr; ///< leads of the ground marks on grounded pins
    std::vector<WireItem *> m_wireItems;
    QGraphicsPathItem *m_dots = nullptr;
    std::vector<QGraphicsItem *> m_grounds;
    QGraphicsSimpleTextItem *m_hint = nullptr;
    QGraphicsPathItem *m_problemMark = nullptr;
    std::string m_problem;
    bool m_applying = false;
    /// The last routing and its ground marks: a value change places the labels again on them
    /// instead of routing every wire anew (on a 50-part design that is most of a wheel step).
    std::shared_ptr<const SketchWiring> m_wiring;
    std::vector<QRectF> m_groundMarks;
};

} // namespace loopsketch::ui
