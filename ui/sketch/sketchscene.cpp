#include "sketch/sketchscene.h"

#include "sketch/groundsymbolitem.h"
#include "sketch/partitem.h"
#include "sketch/sketchlayout.h"
#include "sketch/wireitem.h"
#include "support/qtadapter.h"

#include <QGraphicsPathItem>
#include <QGraphicsSimpleTextItem>
#include <QPainterPath>
#include <QPen>

namespace loopsketch::ui {

namespace {

const QColor kWire(0x2b, 0x2f, 0x36);

} // namespace

SketchScene::SketchScene(QObject *parent) : QGraphicsScene(parent)
{
    setBackgroundBrush(QColor(0xfc, 0xfc, 0xfb));
}

void SketchScene::rebuild(const Design *design, const SketchLayout &layout)
{
    clear();
    m_items.clear();
    m_grounds.clear();
    m_wireItems.clear();
    m_hint = nullptr;
    m_problemMark = nullptr;
    m_design = design;
    m_layout = layout;
    m_wires
        = addPath(QPainterPath(), QPen(kWire, 1.4, Qt::SolidLine, Qt::SquareCap, Qt::MiterJoin));
    m_wires->setZValue(-1);
    m_dots = addPath(QPainterPath(), QPen(kWire, 1.4), QBrush(kWire));
    m_dots->setZValue(-1);
    if (!design)
        return;
    m_applying = true;
    for (const Part &p : design->parts) {
        const auto it = layout.parts.find(p.id);
        const SketchPlacement placement = it != layout.parts.end() ? it->second : SketchPlacement{};
        auto *item = new PartItem(p, placement.rotation, placement.mirror);
        item->setPos(placement.x, placement.y);
        addItem(item);
        m_items[p.id] = item;
    }
    for (std::size_t i = 0; i < layout.grounds.size(); ++i) {
        auto *ground = new GroundSymbolItem(int(i));
        ground->setPos(layout.grounds[i].x, layout.grounds[i].y);
        addItem(ground);
        m_grounds.push_back(ground);
    }
    if (design->parts.empty()) {
        m_hint = addSimpleText(tr("Drag parts here from the Parts list (or double-click one), "
                                  "then drag from pin to pin to wire them."));
        m_hint->setBrush(QColor(0x5a, 0x60, 0x6b));
        const QRectF r = m_hint->boundingRect();
        const QPointF anchor = layout.grounds.empty()
            ? QPointF(0, 0)
            : QPointF(layout.grounds.front().x, layout.grounds.front().y);
        m_hint->setPos(anchor.x() - r.width() / 2, anchor.y() - 220);
    }
    m_applying = false;
    reroute();
    markProblem(m_problem);
}

void SketchScene::markProblem(const std::string &partId)
{
    m_problem = partId;
    PartItem *item = partItem(partId);
    if (!item) {
        if (m_problemMark)
            m_problemMark->hide();
        return;
    }
    if (!m_problemMark) {
        m_problemMark = addPath(QPainterPath(), QPen(QColor(0xb3, 0x26, 0x1e), 2.0, Qt::DashLine));
        m_problemMark->setZValue(-2);
    }
    QPainterPath ring;
    ring.addRoundedRect(item->sceneBoundingRect().adjusted(-6, -6, 6, 6), 8, 8);
    m_problemMark->setPath(ring);
    m_problemMark->setToolTip(tr("The analysis stops at %1").arg(toQString(partId)));
    m_problemMark->show();
}

int SketchScene::groundAt(QPointF scenePos, double radius, QPointF *at) const
{
    int found = -1;
    double best = radius;
    for (std::size_t i = 0; i < m_grounds.size(); ++i) {
        const QPointF p = m_grounds[i]->pos() + GroundSymbolItem::pinPosition();
        const double d = QLineF(p, scenePos).length();
        if (d <= best) {
            best = d;
            found = int(i);
            if (at)
                *at = p;
        }
    }
    return found;
}

std::vector<int> SketchScene::selectedGrounds() const
{
    std::vector<int> indices;
    for (QGraphicsItem *item : selectedItems()) {
        if (auto *g = qgraphicsitem_cast<GroundSymbolItem *>(item))
            indices.push_back(g->index());
    }
    return indices;
}

QString SketchScene::hintText() const
{
    return m_hint ? m_hint->text() : QString();
}

void SketchScene::updatePart(const std::string &partId)
{
    PartItem *item = partItem(partId);
    const Part *part = m_design ? m_design->findPart(partId) : nullptr;
    if (item && part) {
        item->update(*part, item->symbolRotation(), item->symbolMirrored());
        // The label's size may have changed; the wires, which join pins, have not.
        if (m_wiring)
            placeLabels(*m_wiring, m_groundMarks);
        else
            reroute();
    }
}

void SketchScene::applyLayout(const SketchLayout &layout)
{
    m_layout = layout;
    m_applying = true;
    for (auto &[id, item] : m_items) {
        const auto it = layout.parts.find(id);
        if (it == layout.parts.end())
            continue;
        item->setPos(it->second.x, it->second.y);
        if ((item->symbolRotation() != it->second.rotation
             || item->symbolMirrored() != it->second.mirror)
            && m_design) {
            if (const Part *part = m_design->findPart(id))
                item->update(*part, it->second.rotation, it->second.mirror);
        }
    }
    if (m_design && layout.grounds.size() != m_grounds.size()) {
        // A symbol added or removed: rebuild (selection and items are cheap here).
        m_applying = false;
        rebuild(m_design, layout);
        return;
    }
    for (std::size_t i = 0; i < m_grounds.size(); ++i)
        m_grounds[i]->setPos(layout.grounds[i].x, layout.grounds[i].y);
    m_applying = false;
    reroute();
}

PartItem *SketchScene::partItem(const std::string &partId) const
{
    const auto it = m_items.find(partId);
    return it == m_items.end() ? nullptr : it->second;
}

std::string SketchScene::selectedPartId() const
{
    const auto items = selectedItems();
    if (items.size() != 1)
        return {};
    auto *item = qgraphicsitem_cast<PartItem *>(items.front());
    return item ? item->partId() : std::string();
}

bool SketchScene::pinAt(QPointF scenePos, double radius, std::string *partId, std::string *terminal,
                        QPointF *at) const
{
    double best = radius;
    bool found = false;
    for (const auto &[id, item] : m_items) {
        const SketchPlacement placement = item->placement();
        for (const PinGeometry &pin : pinGeometry(item->partType())) {
            const QPointF p = toScene(placement, pin.position);
            const double d = QLineF(p, scenePos).length();
            if (d <= best) {
                best = d;
                found = true;
                *partId = id;
                *terminal = pin.terminal;
                *at = p;
            }
        }
    }
    return found;
}

std::vector<std::string> SketchScene::selectedPartIds() const
{
    std::vector<std::string> ids;
    for (QGraphicsItem *item : selectedItems()) {
        if (auto *part = qgraphicsitem_cast<PartItem *>(item))
            ids.push_back(part->partId());
    }
    return ids;
}

void SketchScene::selectParts(const std::vector<std::string> &partIds)
{
    clearSelection();
    for (const std::string &id : partIds) {
        if (PartItem *item = partItem(id))
            item->setSelected(true);
    }
}

void SketchScene::selectAllSymbols()
{
    clearSelection();
    for (const auto &[id, item] : m_items)
        item->setSelected(true);
    for (QGraphicsItem *g : m_grounds)
        g->setSelected(true);
}

WireItem *SketchScene::wireBetween(const PinRef &a, const PinRef &b) const
{
    for (WireItem *w : m_wireItems) {
        const RoutedWire &r = w->wire();
        if ((r.from == a && r.to == b) || (r.from == b && r.to == a))
            return w;
    }
    return nullptr;
}

std::vector<RoutedWire> SketchScene::selectedWires() const
{
    std::vector<RoutedWire> wires;
    for (WireItem *w : m_wireItems) {
        if (w->isSelected())
            wires.push_back(w->wire());
    }
    return wires;
}

WireItem *SketchScene::selectedWireEndAt(QPointF scenePos, double radius, int *end) const
{
    WireItem *found = nullptr;
    double best = radius;
    for (WireItem *w : m_wireItems) {
        if (!w->isSelected())
            continue;
        for (int e = 0; e < 2; ++e) {
            const double d = QLineF(w->endPoint(e), scenePos).length();
            if (d <= best) {
                best = d;
                found = w;
                *end = e;
            }
        }
    }
    return found;
}

std::map<std::string, QRectF> SketchScene::labelRects() const
{
    std::map<std::string, QRectF> rects;
    for (const auto &[id, item] : m_items)
        rects[id] = item->labelRect().translated(item->pos());
    return rects;
}

void SketchScene::selectPart(const std::string &partId)
{
    clearSelection();
    if (PartItem *item = partItem(partId)) {
        item->setSelected(true);
        item->setFocus();
    }
}

void SketchScene::partDragged()
{
    if (!m_applying)
        reroute();
}

void SketchScene::reportMoves()
{
    QHash<QString, QPointF> moved;
    for (const auto &[id, item] : m_items) {
        const auto it = m_layout.parts.find(id);
        const QPointF was
            = it != m_layout.parts.end() ? QPointF(it->second.x, it->second.y) : QPointF();
        if (item->pos() != was)
            moved.insert(toQString(id), item->pos());
    }
    if (!moved.isEmpty())
        emit partsMoved(moved);
}

void SketchScene::reroute()
{
    if (!m_design || !m_wires)
        return;
    SketchLayout current = m_layout;
    for (const auto &[id, item] : m_items)
        current.parts[id] = item->placement();
    const SketchWiring wiring = routeWires(*m_design, current);
    // Wire items are made afresh; the selected ones stay selected.
    std::vector<std::pair<PinRef, PinRef>> selected;
    for (WireItem *w : m_wireItems) {
        if (w->isSelected())
            selected.emplace_back(w->wire().from, w->wire().to);
        removeItem(w);
        delete w;
    }
    m_wireItems.clear();
    for (const RoutedWire &r : wiring.edges) {
        auto *item = new WireItem(r);
        addItem(item);
        m_wireItems.push_back(item);
        for (const auto &[from, to] : selected) {
            if (r.from == from && r.to == to)
                item->setSelected(true);
        }
    }
    QPainterPath wires;
    std::vector<QRectF> marks;
    for (const auto &[at, dir] : wiring.grounds) {
        QPainterPath mark;
        // A short lead along the pin, then down to three bars.
        const bool horizontal = std::abs(dir.x()) > 0.5;
        QPointF p = at;
        if (horizontal) {
            const QPointF q = p + dir * 12.0;
            mark.moveTo(p);
            mark.lineTo(q);
            p = q;
        } else if (dir.y() < 0) {
            // A ground on a pin that points up is drawn above it, bars facing up.
            const QPointF q = p + QPointF(0, -12);
            mark.moveTo(p);
            mark.lineTo(q);
            for (int i = 0; i < 3; ++i) {
                const double half = 10.0 - 3.5 * i;
                mark.moveTo(q + QPointF(-half, -4.0 * i));
                mark.lineTo(q + QPointF(half, -4.0 * i));
            }
            wires.addPath(mark);
            marks.push_back(mark.boundingRect());
            continue;
        }
        const QPointF q = p + QPointF(0, 12);
        mark.moveTo(p);
        mark.lineTo(q);
        for (int i = 0; i < 3; ++i) {
            const double half = 10.0 - 3.5 * i;
            mark.moveTo(q + QPointF(-half, 4.0 * i));
            mark.lineTo(q + QPointF(half, 4.0 * i));
        }
        wires.addPath(mark);
        marks.push_back(mark.boundingRect());
    }
    m_wires->setPath(wires);
    placeLabels(wiring, marks);
    m_wiring = std::make_shared<const SketchWiring>(wiring);
    m_groundMarks = std::move(marks);
    QPainterPath dots;
    for (const QPointF &j : wiring.junctions)
        dots.addEllipse(j, 3.0, 3.0);
    m_dots->setPath(dots);
}

void SketchScene::placeLabels(const SketchWiring &wiring, const std::vector<QRectF> &groundMarks)
{
    // Past a few hundred parts a drawing is not read label by label; keep dragging fast.
    if (m_items.size() > 400)
        return;
    std::vector<QRectF> obstacles = groundMarks;
    for (const QPolygonF &w : wiring.wires) {
        for (qsizetype i = 0; i + 1 < w.size(); ++i)
            obstacles.push_back(QRectF(w[i], w[i + 1]).normalized().adjusted(-2, -2, 2, 2));
    }
    for (QGraphicsItem *g : m_grounds)
        obstacles.push_back(g->sceneBoundingRect());
    const std::size_t shared = obstacles.size();
    for (const auto &[id, item] : m_items) {
        obstacles.resize(shared);
        for (const auto &[other, otherItem] : m_items) {
            if (otherItem != item)
                obstacles.push_back(otherItem->sceneBodyRect());
        }
        item->placeLabel(obstacles);
    }
}

} // namespace loopsketch::ui
