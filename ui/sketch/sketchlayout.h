#pragma once

// Sketch geometry: where each part's pins sit, the automatic layout of a design that has
// no stored one, and the orthogonal wires between pins of the same node.

#include "loopsketch/design/design.h"

#include <QLineF>
#include <QPointF>
#include <QPolygonF>
#include <QRectF>
#include <QTransform>

#include <string>
#include <vector>

namespace loopsketch::ui {

inline constexpr double kGrid = 20.0;

struct PinGeometry
{
    std::string terminal; ///< "a", "in_n", "out" ...
    QPointF position; ///< in the part's own coordinates (rotation 0)
    QPointF direction; ///< unit vector pointing away from the body
};

/// Pins of a part type, in the order of partSpec(type).terminals.
std::vector<PinGeometry> pinGeometry(PartType type);

/// The symbol's body in its own coordinates (what wires should not cross).
QRectF bodyRect(PartType type);

/// A placement's transform: mirrored left to right first when `mirror` is set, then
/// turned by `rotation`, then moved to (x, y).
QTransform placementTransform(const SketchPlacement &placement);

/// A placement's transform applied to a local point.
QPointF toScene(const SketchPlacement &placement, QPointF local);

/// A readable layout: gain block in the middle, signal source left, load right, feedback
/// network above, parts to ground below their node; positions on the grid.
SketchLayout automaticLayout(const Design &design);

/// One pin of one part.
struct PinRef
{
    std::string part;
    std::string terminal;
    bool operator==(const PinRef &) const = default;
    auto operator<=>(const PinRef &) const = default;
};

/// One wire on the Sketch: an edge of its node's tree, from one pin to another.
struct RoutedWire
{
    std::string node;
    PinRef from, to;
    QPolygonF path; ///< orthogonal polyline in scene coordinates, from `from` to `to`
};

struct SketchWiring
{
    std::vector<QPolygonF> wires; ///< orthogonal polylines in scene coordinates
    std::vector<RoutedWire> edges; ///< the same wires with the pins they join
    std::vector<QPointF> junctions; ///< where three or more wire ends meet
    std::vector<std::pair<QPointF, QPointF>> grounds; ///< ground pin and its direction
};

/// Wires between all pins of each node except ground, whose pins get a ground symbol.
SketchWiring routeWires(const Design &design, const SketchLayout &layout);

double snapToGrid(double v);

} // namespace loopsketch::ui
