#include "sketch/sketchlayout.h"

#include <QTransform>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <set>

namespace loopsketch::ui {

QTransform placementTransform(const SketchPlacement &placement)
{
    QTransform t;
    t.translate(placement.x, placement.y);
    t.rotate(placement.rotation);
    if (placement.mirror)
        t.scale(-1, 1);
    return t;
}

namespace {

SketchPlacement placementOf(const SketchLayout &layout, const std::string &id)
{
    auto it = layout.parts.find(id);
    return it == layout.parts.end() ? SketchPlacement{} : it->second;
}

bool isPassive(PartType type)
{
    return type == PartType::Resistor || type == PartType::Capacitor || type == PartType::Inductor;
}

} // namespace

double snapToGrid(double v)
{
    return std::round(v / kGrid) * kGrid;
}

std::vector<PinGeometry> pinGeometry(PartType type)
{
    const auto &terminals = partSpec(type).terminals;
    std::vector<PinGeometry> pins;
    if (type == PartType::GainBlock) {
        for (auto t : terminals) {
            if (t == "in_n")
                pins.push_back({std::string(t), QPointF(-60, -20), QPointF(-1, 0)});
            else if (t == "in_p")
                pins.push_back({std::string(t), QPointF(-60, 20), QPointF(-1, 0)});
            else
                pins.push_back({std::string(t), QPointF(60, 0), QPointF(1, 0)});
        }
        return pins;
    }
    for (std::size_t i = 0; i < terminals.size(); ++i) {
        const double side = i == 0 ? -1.0 : 1.0;
        pins.push_back({std::string(terminals[i]), QPointF(40 * side, 0), QPointF(side, 0)});
    }
    return pins;
}

QRectF bodyRect(PartType type)
{
    if (type == PartType::GainBlock)
        return QRectF(-40, -40, 80, 80);
    if (type == PartType::VSource || type == PartType::ISource || type == PartType::Load)
        return QRectF(-22, -22, 44, 44);
    return QRectF(-26, -12, 52, 24);
}

QPointF toScene(const SketchPlacement &placement, QPointF local)
{
    return placementTransform(placement).map(local);
}

SketchLayout automaticLayout(const Design &design)
{
    SketchLayout layout;
    const Part *gain = design.uniquePart(PartType::GainBlock);
    const Part *source = design.signalSource();
    const Part *load = design.uniquePart(PartType::Load);
    std::set<std::string> inputNodes, outputNodes;
    if (gain) {
        layout.parts[gain->id] = {0, 0, 0};
        for (auto t : {"in_p", "in_n"}) {
            if (gain->node(t) != kGroundNode)
                inputNodes.insert(gain->node(t));
        }
        outputNodes.insert(gain->node("out"));
    }
    auto verticalRotation = [](const Part &p) {
        // The node that is not ground goes on top.
        return p.nodes.size() == 2 && p.nodes[0] == kGroundNode ? 270 : 90;
    };
    if (source) {
        // The source's hot pin level with the gain-block input it drives.
        double y = 40;
        if (gain && source->nodes.size() == 2) {
            const std::string &hot
                = source->nodes[0] == kGroundNode ? source->nodes[1] : source->nodes[0];
            if (hot == gain->node("in_p"))
                y = 60;
            else if (hot == gain->node("in_n"))
                y = 20;
        }
        layout.parts[source->id] = {-240, y, verticalRotation(*source)};
    }
    if (load) {
        layout.parts[load->id] = {240, 60, verticalRotation(*load)};
        for (const auto &n : load->nodes) {
            if (n != kGroundNode)
                outputNodes.insert(n);
        }
    }
    std::set<std::string> sourceNodes;
    if (source) {
        for (const auto &n : source->nodes) {
            if (n != kGroundNode)
                sourceNodes.insert(n);
        }
    }

    int above = 0, belowIn = 0, belowOut = 0, belowSource = 0, between = 0, rest = 0;
    for (const Part &p : design.parts) {
        if (layout.parts.count(p.id) || p.nodes.size() != 2)
            continue;
        const std::string &a = p.nodes[0];
        const std::string &b = p.nodes[1];
        const bool grounded = a == kGroundNode || b == kGroundNode;
        const std::string &hot = a == kGroundNode ? b : a;
        auto in = [](const std::set<std::string> &s, const std::string &n) {
            return s.count(n) != 0;
        };
        if (!grounded
            && ((in(inputNodes, a) && in(outputNodes, b))
                || (in(inputNodes, b) && in(outputNodes, a)))) {
            const int rotation = in(inputNodes, a) ? 0 : 180;
            layout.parts[p.id] = {0, -80.0 - 60.0 * above++, rotation};
        } else if (grounded && load && load->nodes.size() == 2 && load->nodes[0] != kGroundNode
                   && load->nodes[1] != kGroundNode && hot == load->nodes[1]) {
            // Series sampling: the sense part hangs under the load.
            layout.parts[p.id] = {240.0 + 60.0 * belowOut++, 180, verticalRotation(p)};
        } else if (grounded && in(inputNodes, hot)) {
            layout.parts[p.id] = {-120.0 - 60.0 * belowIn++, 100, verticalRotation(p)};
        } else if (grounded && in(outputNodes, hot)) {
            layout.parts[p.id] = {140.0 + 60.0 * belowOut++, 100, verticalRotation(p)};
        } else if (grounded && in(sourceNodes, hot)) {
            layout.parts[p.id] = {-300.0 - 60.0 * belowSource++, 100, verticalRotation(p)};
        } else if (!grounded
                   && ((in(sourceNodes, a) && in(inputNodes, b))
                       || (in(sourceNodes, b) && in(inputNodes, a)))) {
            const int rotation = in(sourceNodes, a) ? 0 : 180;
            layout.parts[p.id] = {-140, -60.0 - 60.0 * between++, rotation};
        } else {
            layout.parts[p.id] = {-200.0 + 100.0 * rest++, 200, isPassive(p.type) ? 0 : 90};
        }
    }
    return layout;
}

namespace {

struct Pin
{
    QPointF at;
    QPointF direction;
    PinRef ref;
};

int crossings(const QLineF &segment, const std::vector<QRectF> &bodies)
{
    if (segment.length() < 1e-9)
        return 0;
    const QRectF r = QRectF(segment.p1(), segment.p2()).normalized().adjusted(-0.5, -0.5, 0.5, 0.5);
    int n = 0;
    for (const QRectF &b : bodies) {
        if (r.intersects(b))
            ++n;
    }
    return n;
}

bool along(const QLineF &segment, QPointF direction)
{
    const QPointF d = segment.p2() - segment.p1();
    return d.x() * direction.x() + d.y() * direction.y() > 0;
}

bool onSegment(QPointF point, const QLineF &segment)
{
    const QRectF r = QRectF(segment.p1(), segment.p2()).normalized().adjusted(-0.5, -0.5, 0.5, 0.5);
    return r.contains(point);
}

/// Scores a polyline: crossing a body costs 10, touching a foreign pin 8, leaving or
/// arriving against a pin's direction 2 or 1, plus a little for each bend.
int scoreRoute(const QPolygonF &route, const Pin &p, const Pin &q,
               const std::vector<QRectF> &bodies, const std::vector<QPointF> &pins)
{
    int score = 0;
    for (qsizetype i = 0; i + 1 < route.size(); ++i) {
        const QLineF segment(route[i], route[i + 1]);
        if (segment.length() < 1e-9)
            continue;
        score += 10 * crossings(segment, bodies);
        for (const QPointF &pin : pins) {
            const bool endpoint
                = (pin - p.at).manhattanLength() < 0.5 || (pin - q.at).manhattanLength() < 0.5;
            if (!endpoint && onSegment(pin, segment))
                score += 8;
        }
    }
    const QLineF first(route[0], route[1]);
    if (first.length() > 1e-9 && !along(first, p.direction))
        score += 2;
    const QLineF arriving(route[route.size() - 1], route[route.size() - 2]);
    if (arriving.length() > 1e-9 && !along(arriving, q.direction))
        score += 1;
    return score + int(route.size());
}

QPolygonF route(const Pin &p, const Pin &q, const std::vector<QRectF> &bodies,
                const std::vector<QPointF> &pins)
{
    // Candidates: one bend either way, or two bends through the middle (a Z), each straight
    // out of the pins or after a stub of one or two grid steps out of each pin.
    std::vector<QPolygonF> candidates;
    for (int stub = 0; stub < 3; ++stub) {
        const QPointF a = p.at + p.direction * (kGrid * stub);
        const QPointF b = q.at + q.direction * (kGrid * stub);
        auto add = [&](std::initializer_list<QPointF> middle) {
            QPolygonF r;
            r << p.at;
            if (stub)
                r << a;
            for (const QPointF &m : middle)
                r << m;
            if (stub)
                r << b;
            r << q.at;
            candidates.push_back(r);
        };
        add({QPointF(b.x(), a.y())});
        add({QPointF(a.x(), b.y())});
        const double mx = snapToGrid((a.x() + b.x()) / 2), my = snapToGrid((a.y() + b.y()) / 2);
        add({QPointF(mx, a.y()), QPointF(mx, b.y())});
        add({QPointF(a.x(), my), QPointF(b.x(), my)});
    }
    int bestScore = std::numeric_limits<int>::max();
    QPolygonF best;
    auto pickBest = [&] {
        for (const QPolygonF &r : candidates) {
            const int score = scoreRoute(r, p, q, bodies, pins);
            if (score < bestScore) {
                bestScore = score;
                best = r;
            }
        }
        candidates.clear();
    };
    pickBest();
    if (bestScore < 8)
        return best;
    // Every simple route crosses a symbol or a pin: try going around the symbols near the
    // two pins, along a line one grid step clear of their edges.
    const QRectF span = QRectF(p.at, q.at).normalized().adjusted(-80, -80, 80, 80);
    std::set<double> xs, ys;
    for (const QRectF &b : bodies) {
        if (!b.intersects(span))
            continue;
        xs.insert(snapToGrid(b.left() - kGrid));
        xs.insert(snapToGrid(b.right() + kGrid));
        ys.insert(snapToGrid(b.top() - kGrid));
        ys.insert(snapToGrid(b.bottom() + kGrid));
    }
    for (int stub = 1; stub < 3; ++stub) {
        const QPointF a = p.at + p.direction * (kGrid * stub);
        const QPointF b = q.at + q.direction * (kGrid * stub);
        for (double y : ys) {
            candidates.push_back(
                QPolygonF({p.at, a, QPointF(a.x(), y), QPointF(b.x(), y), b, q.at}));
        }
        for (double x : xs) {
            candidates.push_back(
                QPolygonF({p.at, a, QPointF(x, a.y()), QPointF(x, b.y()), b, q.at}));
        }
    }
    pickBest();
    return best;
}

} // namespace

SketchWiring routeWires(const Design &design, const SketchLayout &layout)
{
    SketchWiring wiring;
    std::map<std::string, std::vector<Pin>> nodes;
    std::vector<QRectF> bodies;
    for (const Part &p : design.parts) {
        const SketchPlacement placement = placementOf(layout, p.id);
        const QTransform t = placementTransform(placement);
        bodies.push_back(t.mapRect(bodyRect(p.type)).adjusted(1, 1, -1, -1));
        const auto pins = pinGeometry(p.type);
        for (std::size_t i = 0; i < pins.size() && i < p.nodes.size(); ++i) {
            const QPointF at = t.map(pins[i].position);
            const QPointF dir = t.map(pins[i].position + pins[i].direction) - at;
            if (p.nodes[i] == kGroundNode)
                wiring.grounds.push_back({at, dir});
            else
                nodes[p.nodes[i]].push_back({at, dir, {p.id, pins[i].terminal}});
        }
    }
    std::vector<QPointF> allPins;
    for (const auto &[name, pins] : nodes) {
        for (const Pin &pin : pins)
            allPins.push_back(pin.at);
    }
    for (const auto &[at, dir] : wiring.grounds)
        allPins.push_back(at);
    for (auto &[name, pins] : nodes) {
        if (pins.size() < 2)
            continue;
        // Prim's tree by Manhattan distance keeps the wires short and readable.
        std::vector<bool> inTree(pins.size(), false);
        std::vector<int> degree(pins.size(), 0);
        inTree[0] = true;
        for (std::size_t added = 1; added < pins.size(); ++added) {
            double best = std::numeric_limits<double>::max();
            std::size_t from = 0, to = 0;
            for (std::size_t i = 0; i < pins.size(); ++i) {
                if (!inTree[i])
                    continue;
                for (std::size_t j = 0; j < pins.size(); ++j) {
                    if (inTree[j])
                        continue;
                    const QPointF d = pins[i].at - pins[j].at;
                    const double dist = std::abs(d.x()) + std::abs(d.y());
                    if (dist < best) {
                        best = dist;
                        from = i;
                        to = j;
                    }
                }
            }
            inTree[to] = true;
            ++degree[from];
            ++degree[to];
            QPolygonF path = route(pins[from], pins[to], bodies, allPins);
            wiring.wires.push_back(path);
            wiring.edges.push_back({name, pins[from].ref, pins[to].ref, std::move(path)});
        }
        for (std::size_t i = 0; i < pins.size(); ++i) {
            if (degree[i] >= 2)
                wiring.junctions.push_back(pins[i].at);
        }
    }
    return wiring;
}

} // namespace loopsketch::ui
