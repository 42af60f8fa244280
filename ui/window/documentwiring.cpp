// The document's part and wiring edits: grounds, adding, removing and pasting parts, joining,
// splitting and moving the pins' nodes. Each edit is one undo step.
#include "window/designdocument.h"

#include "sketch/sketchlayout.h"
#include "support/qtadapter.h"
#include "window/editcommands.h"

#include <algorithm>
#include <cmath>
#include <set>

namespace loopsketch::ui {

void DesignDocument::addGround(double x, double y)
{
    Design after = m_design;
    SketchLayout layout = m_layout;
    layout.grounds.push_back({snapToGrid(x), snapToGrid(y)});
    after.sketch = layout;
    pushDesign(std::move(after), tr("Add ground symbol"));
}

bool DesignDocument::moveGround(int index, double x, double y)
{
    if (index < 0 || index >= int(m_layout.grounds.size()))
        return false;
    SketchLayout after = m_layout;
    after.grounds[std::size_t(index)] = {snapToGrid(x), snapToGrid(y)};
    if (after == m_layout)
        return false;
    m_undoStack.push(new SetSketchCommand(this, m_design.sketch, after, tr("Move ground symbol")));
    return true;
}

void DesignDocument::removeGrounds(const std::vector<int> &indices)
{
    SketchLayout after = m_layout;
    std::vector<int> sorted = indices;
    std::sort(sorted.rbegin(), sorted.rend());
    bool removed = false;
    for (int i : sorted) {
        if (i >= 0 && i < int(after.grounds.size())) {
            after.grounds.erase(after.grounds.begin() + i);
            removed = true;
        }
    }
    if (removed)
        m_undoStack.push(
            new SetSketchCommand(this, m_design.sketch, after, tr("Delete ground symbol")));
}

namespace {

/// A pin as an edit's text names it: "R1.a", or "ground" for the empty pin.
QString pinText(const PinRef &pin)
{
    return pin.part.empty()
        ? DesignDocument::tr("ground")
        : QStringLiteral("%1.%2").arg(toQString(pin.part), toQString(pin.terminal));
}

std::set<std::string> nodeNames(const Design &design)
{
    std::set<std::string> names;
    for (const Part &p : design.parts)
        names.insert(p.nodes.begin(), p.nodes.end());
    return names;
}

/// "n1", "n2" ...: the first not in `used`, which then holds it.
std::string freshNode(std::set<std::string> &used)
{
    for (int k = 1;; ++k) {
        std::string node = "n" + std::to_string(k);
        if (used.insert(node).second)
            return node;
    }
}

int pinsOn(const Design &design, const std::string &node)
{
    int n = 0;
    for (const Part &p : design.parts)
        n += int(std::count(p.nodes.begin(), p.nodes.end(), node));
    return n;
}

/// The node of one pin; nullptr when there is no such part or terminal.
std::string *pinNode(Design &design, const PinRef &pin)
{
    Part *part = design.findPart(pin.part);
    if (!part)
        return nullptr;
    const auto &terminals = partSpec(part->type).terminals;
    const auto t = std::find(terminals.begin(), terminals.end(), pin.terminal);
    const auto index = std::size_t(t - terminals.begin());
    if (t == terminals.end() || index >= part->nodes.size())
        return nullptr;
    return &part->nodes[index];
}

/// Joins two nodes: ground wins; otherwise the node with more pins keeps its name, so wiring
/// a new part into a named node ("in", "out") does not rename it.
void joinNodes(Design &design, std::string keep, std::string drop)
{
    if (keep == drop)
        return;
    if (drop == kGroundNode || (keep != kGroundNode && pinsOn(design, drop) > pinsOn(design, keep)))
        std::swap(keep, drop);
    for (Part &p : design.parts) {
        for (std::string &n : p.nodes) {
            if (n == drop)
                n = keep;
        }
    }
}

/// Removes wires (edges of `wiring`) from `design`: on each node that lost a wire, every
/// group of pins still joined by the remaining wires but the largest gets a fresh node.
/// Returns the number of wires removed.
int splitWires(Design &design, const SketchWiring &wiring,
               const std::vector<std::pair<PinRef, PinRef>> &wires)
{
    auto removed = [&](const RoutedWire &e) {
        for (const auto &[a, b] : wires) {
            if ((e.from == a && e.to == b) || (e.from == b && e.to == a))
                return true;
        }
        return false;
    };
    std::map<std::string, std::vector<const RoutedWire *>> kept;
    std::set<std::string> touched;
    int count = 0;
    for (const RoutedWire &e : wiring.edges) {
        if (removed(e)) {
            touched.insert(e.node);
            ++count;
        } else {
            kept[e.node].push_back(&e);
        }
    }
    std::set<std::string> used = nodeNames(design);
    for (const std::string &node : touched) {
        // The pins of the node, grouped by the wires that stay (union-find).
        std::vector<PinRef> pins;
        for (const Part &p : design.parts) {
            const auto &terminals = partSpec(p.type).terminals;
            for (std::size_t i = 0; i < p.nodes.size() && i < terminals.size(); ++i) {
                if (p.nodes[i] == node)
                    pins.push_back({p.id, std::string(terminals[i])});
            }
        }
        std::vector<std::size_t> parent(pins.size());
        for (std::size_t i = 0; i < parent.size(); ++i)
            parent[i] = i;
        auto find = [&](std::size_t i) {
            while (parent[i] != i)
                i = parent[i] = parent[parent[i]];
            return i;
        };
        auto indexOf = [&](const PinRef &pin) {
            return std::size_t(std::find(pins.begin(), pins.end(), pin) - pins.begin());
        };
        for (const RoutedWire *e : kept[node]) {
            const std::size_t a = indexOf(e->from), b = indexOf(e->to);
            if (a < pins.size() && b < pins.size())
                parent[find(a)] = find(b);
        }
        std::map<std::size_t, std::vector<std::size_t>> groups;
        for (std::size_t i = 0; i < pins.size(); ++i)
            groups[find(i)].push_back(i);
        std::size_t largest = groups.empty() ? 0 : groups.begin()->first;
        for (const auto &[root, members] : groups) {
            if (members.size() > groups[largest].size())
                largest = root;
        }
        for (const auto &[root, members] : groups) {
            if (root == largest)
                continue;
            const std::string fresh = freshNode(used);
            for (std::size_t i : members)
                *pinNode(design, pins[i]) = fresh;
        }
    }
    return count;
}

} // namespace

std::string DesignDocument::nextFreeId(PartType type, const Design &design)
{
    static const std::map<PartType, std::string> prefixes
        = {{PartType::Resistor, "R"}, {PartType::Capacitor, "C"}, {PartType::Inductor, "L"},
           {PartType::VSource, "VS"}, {PartType::ISource, "IS"},  {PartType::GainBlock, "U"},
           {PartType::Load, "RL"}};
    const std::string prefix = prefixes.at(type);
    std::string id;
    for (int n = 1; id.empty() || design.findPart(id); ++n)
        id = prefix + std::to_string(n);
    return id;
}

std::string DesignDocument::addPart(PartType type, double x, double y)
{
    const std::string id = nextFreeId(type, m_design);
    std::set<std::string> nodes;
    for (const Part &p : m_design.parts)
        nodes.insert(p.nodes.begin(), p.nodes.end());
    Part part;
    part.id = id;
    part.type = type;
    int k = 1;
    for (std::size_t i = 0; i < partSpec(type).terminals.size(); ++i) {
        std::string node;
        do
            node = "n" + std::to_string(k++);
        while (nodes.count(node));
        nodes.insert(node);
        part.nodes.push_back(node);
    }
    for (const FieldSpec &f : partSpec(type).fields) {
        if (f.required)
            part.fields[std::string(f.name)] = f.kind == ValueKind::Gain ? Value{1e5, "100dB"}
                : f.kind == ValueKind::Capacitance                       ? Value{1e-9, "1n"}
                : f.kind == ValueKind::Inductance                        ? Value{1e-3, "1m"}
                                                                         : Value{1e3, "1k"};
    }
    if (type == PartType::GainBlock) {
        // A finite gain-bandwidth from the start, so bandwidth, margins and the step
        // response mean something as soon as the loop is closed.
        part.fields["gbw"] = Value{10e6, "10M"};
    }
    Design after = m_design;
    after.parts.push_back(part);
    SketchLayout layout = m_layout;
    // A free grid place: step right until no part sits within 80 units.
    double px = snapToGrid(x), py = snapToGrid(y);
    for (int tries = 0; tries < 50; ++tries) {
        bool taken = false;
        for (const auto &[other, placement] : layout.parts)
            taken = taken || (std::abs(placement.x - px) < 80 && std::abs(placement.y - py) < 60);
        if (!taken)
            break;
        px += 100;
    }
    layout.parts[id] = {px, py, 0};
    after.sketch = layout;
    if (after.input.empty() && partSpec(type).isSignalSource)
        after.input = id;
    pushDesign(std::move(after), tr("Add %1").arg(toQString(id)));
    return id;
}

void DesignDocument::removeParts(const std::vector<std::string> &partIds)
{
    Design after = m_design;
    bool removed = false;
    for (const std::string &id : partIds) {
        const auto it = std::find_if(after.parts.begin(), after.parts.end(),
                                     [&](const Part &p) { return p.id == id; });
        if (it == after.parts.end())
            continue;
        after.parts.erase(it);
        removed = true;
    }
    if (!removed)
        return;
    SketchLayout layout = m_layout;
    for (const std::string &id : partIds)
        layout.parts.erase(id);
    after.sketch = layout;
    pushDesign(std::move(after),
               partIds.size() == 1 ? tr("Delete %1").arg(toQString(partIds[0]))
                                   : tr("Delete %1 parts").arg(partIds.size()));
}

bool DesignDocument::connectPins(const std::string &partA, const std::string &terminalA,
                                 const std::string &partB, const std::string &terminalB)
{
    const Part *a = m_design.findPart(partA);
    const Part *b = m_design.findPart(partB);
    if (!a || !b)
        return false;
    const std::string keep = a->node(terminalA);
    const std::string drop = b->node(terminalB);
    if (keep.empty() || drop.empty() || keep == drop)
        return false;
    Design after = m_design;
    joinNodes(after, keep, drop);
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(
        std::move(after),
        tr("Connect %1.%2 to %3.%4")
            .arg(toQString(partA), toQString(terminalA), toQString(partB), toQString(terminalB)));
    return true;
}

bool DesignDocument::groundPin(const std::string &partId, const std::string &terminal)
{
    const Part *part = m_design.findPart(partId);
    if (!part)
        return false;
    const auto &terminals = partSpec(part->type).terminals;
    const auto t = std::find(terminals.begin(), terminals.end(), terminal);
    if (t == terminals.end() || part->nodes[std::size_t(t - terminals.begin())] == kGroundNode)
        return false;
    Design after = m_design;
    after.findPart(partId)->nodes[std::size_t(t - terminals.begin())] = std::string(kGroundNode);
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after), tr("Ground %1.%2").arg(toQString(partId), toQString(terminal)));
    return true;
}

bool DesignDocument::disconnectPin(const std::string &partId, const std::string &terminal)
{
    Design after = m_design;
    std::string *node = pinNode(after, {partId, terminal});
    if (!node || (*node != kGroundNode && pinsOn(after, *node) < 2))
        return false;
    std::set<std::string> used = nodeNames(after);
    *node = freshNode(used);
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after),
               tr("Disconnect %1.%2").arg(toQString(partId), toQString(terminal)));
    return true;
}

bool DesignDocument::removeWires(const std::vector<std::pair<PinRef, PinRef>> &wires)
{
    Design after = m_design;
    const int removed = splitWires(after, routeWires(m_design, m_layout), wires);
    if (removed == 0)
        return false;
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after),
               removed == 1 ? tr("Delete wire %1.%2 – %3.%4")
                                  .arg(toQString(wires.front().first.part),
                                       toQString(wires.front().first.terminal),
                                       toQString(wires.front().second.part),
                                       toQString(wires.front().second.terminal))
                            : tr("Delete %1 wires").arg(removed));
    return true;
}

bool DesignDocument::reattachWire(const PinRef &keep, const PinRef &leave, const PinRef &target)
{
    Design after = m_design;
    if (splitWires(after, routeWires(m_design, m_layout), {{keep, leave}}) == 0)
        return false;
    std::string *from = pinNode(after, keep);
    std::string *to = target.part.empty() ? nullptr : pinNode(after, target);
    if (!from || (!target.part.empty() && !to))
        return false;
    joinNodes(after, *from, to ? *to : std::string(kGroundNode));
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after),
               tr("Move wire end from %1.%2 to %3")
                   .arg(toQString(leave.part), toQString(leave.terminal), pinText(target)));
    return true;
}

bool DesignDocument::movePin(const PinRef &pin, const PinRef &target)
{
    Design after = m_design;
    std::string *node = pinNode(after, pin);
    std::string *to = target.part.empty() ? nullptr : pinNode(after, target);
    if (!node || (!target.part.empty() && !to) || pin == target)
        return false;
    std::set<std::string> used = nodeNames(after);
    *node = freshNode(used);
    // The target's node, read again: it is the pin's old node when both shared it.
    to = target.part.empty() ? nullptr : pinNode(after, target);
    joinNodes(after, *node, to ? *to : std::string(kGroundNode));
    if (after == m_design)
        return false;
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(
        std::move(after),
        tr("Move %1.%2 to %3").arg(toQString(pin.part), toQString(pin.terminal), pinText(target)));
    return true;
}

std::vector<std::string> DesignDocument::pasteParts(const Design &fragment, const QString &text)
{
    std::vector<std::string> ids;
    if (fragment.parts.empty())
        return ids;
    Design after = m_design;
    SketchLayout layout = m_layout;
    auto placed = [&](const std::string &id) {
        if (fragment.sketch) {
            if (const auto it = fragment.sketch->parts.find(id); it != fragment.sketch->parts.end())
                return it->second;
        }
        return SketchPlacement{};
    };
    // Two grid steps down and right, further while a copy would land on or beside a part
    // (the free-place rule of addPart()), so a whole circuit pasted lands clear of itself.
    double offset = 2 * kGrid;
    for (int tries = 0; tries < 200; ++tries) {
        bool taken = false;
        for (const Part &p : fragment.parts) {
            const SketchPlacement at = placed(p.id);
            for (const auto &[other, placement] : layout.parts)
                taken = taken
                    || (std::abs(placement.x - (at.x + offset)) < 80
                        && std::abs(placement.y - (at.y + offset)) < 60);
        }
        if (!taken)
            break;
        offset += 2 * kGrid;
    }
    std::set<std::string> used = nodeNames(after);
    std::map<std::string, std::string> nodes{{std::string(kGroundNode), std::string(kGroundNode)}};
    for (Part part : fragment.parts) {
        SketchPlacement at = placed(part.id);
        part.id = nextFreeId(part.type, after);
        for (std::string &n : part.nodes) {
            auto it = nodes.find(n);
            if (it == nodes.end())
                it = nodes.emplace(n, freshNode(used)).first;
            n = it->second;
        }
        at.x = snapToGrid(at.x + offset);
        at.y = snapToGrid(at.y + offset);
        layout.parts[part.id] = at;
        ids.push_back(part.id);
        after.parts.push_back(std::move(part));
    }
    after.sketch = layout;
    pushDesign(std::move(after), text);
    return ids;
}

} // namespace loopsketch::ui
