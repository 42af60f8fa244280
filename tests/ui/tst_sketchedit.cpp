// Editing on the Sketch as a user does it: wires that can be selected, deleted and moved
// from pin to pin, pins taken off their node, parts mirrored (kept in the file), and the
// Edit menu's clipboard (cut, copy, paste, duplicate, delete, select all), each edit one
// undo step.

#include "blankdesigntest.h"

#include "sketch/wireitem.h"
#include "window/partclipboard.h"

#include "loopsketch/design/designfile.h"

#include <QAction>
#include <QClipboard>
#include <QContextMenuEvent>
#include <QFile>
#include <QMenu>
#include <QMouseEvent>
#include <QStatusBar>
#include <QTemporaryDir>
#include <QTimer>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <set>

using ::testing::HasSubstr;

// Inside the fixture's namespace: BlankDesignTest, kDesigns, and core's and the window's
// names without qualification.
namespace loopsketch::ui::test {
namespace {

class SketchEditTest : public BlankDesignTest
{
protected:
    std::string node(const std::string &part, const std::string &terminal) const
    {
        const Part *p = doc()->design().findPart(part);
        EXPECT_NE(p, nullptr) << part;
        return p ? p->node(terminal) : std::string();
    }

    /// A viewport point on `wire` where nothing lies above it.
    QPoint pointOn(WireItem *wire) const
    {
        const QPolygonF &path = wire->wire().path;
        for (qsizetype i = 0; i + 1 < path.size(); ++i) {
            for (double f : {0.5, 0.3, 0.7}) {
                const QPointF at = path[i] + (path[i + 1] - path[i]) * f;
                if (QLineF(path[i], path[i + 1]).length() < 16)
                    continue;
                const QPoint vp = view()->mapFromScene(at);
                if (qgraphicsitem_cast<WireItem *>(view()->itemAt(vp)) == wire)
                    return vp;
            }
        }
        ADD_FAILURE() << "no free point on the wire " << wire->wire().from.part << "."
                      << wire->wire().from.terminal;
        return {};
    }

    WireItem *wireOn(const std::string &node) const
    {
        for (WireItem *w : scene()->wireItems()) {
            if (w->wire().node == node)
                return w;
        }
        ADD_FAILURE() << "no wire on node " << node;
        return nullptr;
    }

    /// Opens the demo and gives its wire on node "in" (nullptr, a failure added, if none).
    WireItem *openDemoAtWireOnIn()
    {
        openExample(QStringLiteral("demo.loopsketch"));
        settle();
        return wireOn("in");
    }

    void clickWire(WireItem *wire)
    {
        QTest::mouseClick(view()->viewport(), Qt::LeftButton, {}, pointOn(wire));
        QApplication::processEvents();
    }

    /// Opens the Sketch's context menu at a scene point and triggers the entry whose text
    /// starts with `entry`; false when the menu had no such entry.
    bool contextMenuEntry(QPointF scenePos, const QString &entry)
    {
        bool found = false;
        QTimer::singleShot(0, [&] {
            auto *menu = qobject_cast<QMenu *>(QApplication::activePopupWidget());
            if (!menu)
                return;
            for (QAction *a : menu->actions()) {
                if (a->text().startsWith(entry)) {
                    found = true;
                    a->trigger();
                    break;
                }
            }
            menu->close();
        });
        const QPoint vp = view()->mapFromScene(scenePos);
        QContextMenuEvent event(QContextMenuEvent::Mouse, vp, view()->viewport()->mapToGlobal(vp));
        QApplication::sendEvent(view()->viewport(), &event);
        QApplication::processEvents();
        return found;
    }

    QAction *action(const char *name) const
    {
        auto *a = window->findChild<QAction *>(QString::fromLatin1(name));
        EXPECT_NE(a, nullptr) << name;
        return a;
    }

    /// Every wire is orthogonal and runs from the pin it names to the other; no value label
    /// lies on a wire.
    void expectCleanWiring(const std::string &where) const
    {
        const auto labels = scene()->labelRects();
        for (WireItem *w : scene()->wireItems()) {
            const RoutedWire &r = w->wire();
            ASSERT_GE(r.path.size(), 2) << where;
            EXPECT_LT(QLineF(r.path.first(), pinPos(r.from.part, r.from.terminal)).length(), 1e-6)
                << where << ": wire from " << r.from.part << "." << r.from.terminal;
            EXPECT_LT(QLineF(r.path.last(), pinPos(r.to.part, r.to.terminal)).length(), 1e-6)
                << where << ": wire to " << r.to.part << "." << r.to.terminal;
            for (qsizetype i = 0; i + 1 < r.path.size(); ++i) {
                const QPointF a = r.path[i], b = r.path[i + 1];
                EXPECT_TRUE(std::abs(a.x() - b.x()) < 1e-9 || std::abs(a.y() - b.y()) < 1e-9)
                    << where << ": a slanted segment on node " << r.node;
                const QRectF segment = QRectF(a, b).normalized().adjusted(-1, -1, 1, 1);
                for (const auto &[id, label] : labels) {
                    EXPECT_FALSE(label.intersects(segment))
                        << where << ": the label of " << id << " lies on the wire " << r.from.part
                        << "." << r.from.terminal << " – " << r.to.part << "." << r.to.terminal;
                }
            }
        }
    }
};

// ---- Wires as objects ----

TEST_F(SketchEditTest, WireLightsUpUnderThePointerIsSelectedAndDeleted)
{
    WireItem *wire = openDemoAtWireOnIn();
    ASSERT_NE(wire, nullptr);
    const Design before = doc()->design();
    const PinRef from = wire->wire().from, to = wire->wire().to;
    const QPoint at = pointOn(wire);

    // A move with no button held, as the pointer passing over it.
    QMouseEvent hover(QEvent::MouseMove, QPointF(at), view()->viewport()->mapToGlobal(QPointF(at)),
                      Qt::NoButton, Qt::NoButton, Qt::NoModifier);
    QApplication::sendEvent(view()->viewport(), &hover);
    EXPECT_TRUE(wire->isHighlighted());

    clickWire(wire);
    ASSERT_EQ(scene()->selectedWires().size(), 1u);
    EXPECT_EQ(scene()->selectedWires().front().from, from);
    EXPECT_TRUE(scene()->selectedPartIds().empty());
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/wire-selected.png"));
    view()->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/wire-selected-sketch.png"));

    const int steps = doc()->undoStack()->index();
    QTest::keyClick(view(), Qt::Key_Delete);
    EXPECT_EQ(doc()->undoStack()->index(), steps + 1);
    EXPECT_NE(node(from.part, from.terminal), node(to.part, to.terminal));
    EXPECT_EQ(doc()->design().parts.size(), before.parts.size());
    EXPECT_EQ(scene()->wireBetween(from, to), nullptr);
    doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);
    EXPECT_NE(scene()->wireBetween(from, to), nullptr);

    // The same from the wire's context menu.
    WireItem *again = scene()->wireBetween(from, to);
    ASSERT_NE(again, nullptr);
    ASSERT_TRUE(
        contextMenuEntry(view()->mapToScene(pointOn(again)), QStringLiteral("Delete wire")));
    EXPECT_NE(node(from.part, from.terminal), node(to.part, to.terminal));
}

TEST_F(SketchEditTest, SelectedWireEndDraggedToAnotherPinReattachesInOneStep)
{
    openExample(QStringLiteral("demo.loopsketch"));
    const std::string spare = doc()->addPart(PartType::Resistor, 0, 260);
    settle();
    const Design before = doc()->design();
    WireItem *wire = wireOn("out");
    ASSERT_NE(wire, nullptr);
    const PinRef keep = wire->wire().from, leave = wire->wire().to;
    clickWire(wire);
    ASSERT_EQ(scene()->selectedWires().size(), 1u);

    const int steps = doc()->undoStack()->index();
    dragOnSketch(wire->endPoint(1), pinPos(spare, "a"));
    EXPECT_EQ(doc()->undoStack()->index(), steps + 1);
    EXPECT_EQ(node(keep.part, keep.terminal), node(spare, "a"));
    EXPECT_NE(node(leave.part, leave.terminal), node(keep.part, keep.terminal));
    ASSERT_NE(scene()->wireBetween(keep, {spare, "a"}), nullptr);
    expectCleanWiring("after re-attaching");
    doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);
}

TEST_F(SketchEditTest, PinDisconnectedFromTheContextMenuAndMovedWithShiftDrag)
{
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    const Design before = doc()->design();
    ASSERT_EQ(node("RF", "a"), "in");
    ASSERT_TRUE(contextMenuEntry(pinPos("RF", "a"), QStringLiteral("Disconnect RF.a")));
    EXPECT_NE(node("RF", "a"), "in");
    EXPECT_EQ(node("CF", "a"), "in");
    EXPECT_EQ(node("U1", "in_n"), "in");
    for (const Part &p : doc()->design().parts) {
        for (const std::string &n : p.nodes) {
            if (p.id != "RF") {
                EXPECT_NE(n, node("RF", "a")) << "RF.a shares its new node with " << p.id;
            }
        }
    }
    doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);

    // A pin alone on its node has nothing to leave.
    const std::string r = doc()->addPart(PartType::Resistor, 0, 260);
    EXPECT_FALSE(doc()->disconnectPin(r, "a"));

    // Shift-drag from a pin: the pin leaves its node for the target's.
    const int steps = doc()->undoStack()->index();
    QWidget *vp = view()->viewport();
    const QPoint a = view()->mapFromScene(pinPos("CF", "b"));
    const QPoint b = view()->mapFromScene(pinPos(r, "b"));
    QTest::mousePress(vp, Qt::LeftButton, Qt::ShiftModifier, a);
    QTest::mouseMove(vp, b);
    QTest::mouseRelease(vp, Qt::LeftButton, Qt::ShiftModifier, b);
    EXPECT_EQ(doc()->undoStack()->index(), steps + 1);
    EXPECT_EQ(node("CF", "b"), node(r, "b"));
    EXPECT_EQ(node("RF", "b"), "out");
    EXPECT_NE(node("CF", "b"), "out");
}

TEST_F(SketchEditTest, WiresRerouteAndLabelsKeepOffThemAsPartsTurnAndMirror)
{
    const QStringList examples = QDir(kDesigns).entryList({QStringLiteral("*.loopsketch")});
    ASSERT_GE(examples.size(), 3);
    for (const QString &example : examples) {
        openExample(example);
        settle();
        const std::string name = example.toStdString();
        expectCleanWiring(name);
        std::vector<std::string> ids;
        for (const Part &p : doc()->design().parts)
            ids.push_back(p.id);
        for (const std::string &id : ids) {
            doc()->rotatePart(id);
            expectCleanWiring(name + " with " + id + " turned");
            doc()->mirrorPart(id);
            expectCleanWiring(name + " with " + id + " turned and mirrored");
            doc()->undoStack()->undo();
            doc()->undoStack()->undo();
        }
        // A part moved somewhere else: the wires follow it.
        const auto &placement = doc()->layout().parts.at(ids.back());
        doc()->moveParts({{ids.back(), {placement.x + 60, placement.y + 100}}});
        expectCleanWiring(name + " with " + ids.back() + " moved");
        if (example == QStringLiteral("demo.loopsketch")) {
            doc()->rotatePart("U1");
            doc()->mirrorPart("RF");
            settle();
            window->grab().save(
                QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/turned-and-mirrored.png"));
            view()->grab().save(
                QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/turned-and-mirrored-sketch.png"));
        }
    }
}

// ---- Mirroring ----

TEST_F(SketchEditTest, MirroredPartIsSavedAndReopened)
{
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    const SketchPlacement was = doc()->layout().parts.at("RF");
    ASSERT_FALSE(was.mirror);
    const QPointF aBefore = pinPos("RF", "a"), bBefore = pinPos("RF", "b");
    scene()->selectPart("RF");
    QTest::keyClick(view(), Qt::Key_H);
    ASSERT_TRUE(doc()->layout().parts.at("RF").mirror);
    EXPECT_TRUE(scene()->partItem("RF")->symbolMirrored());
    // Left to right: the pins change places.
    EXPECT_LT(QLineF(pinPos("RF", "a"), bBefore).length(), 1e-9);
    EXPECT_LT(QLineF(pinPos("RF", "b"), aBefore).length(), 1e-9);
    expectCleanWiring("RF mirrored");

    QTemporaryDir dir;
    const QString path = dir.filePath(QStringLiteral("mirrored.loopsketch"));
    const std::unique_ptr<MainWindow> second = saveAndReopen(*window, path);
    ASSERT_NE(second, nullptr);
    QFile file(path);
    ASSERT_TRUE(file.open(QIODevice::ReadOnly));
    EXPECT_THAT(file.readAll().toStdString(), HasSubstr("\"mirror\": true"));
    EXPECT_TRUE(second->document()->layout().parts.at("RF").mirror);
    EXPECT_TRUE(second->sketchScene()->partItem("RF")->symbolMirrored());

    doc()->undoStack()->undo();
    EXPECT_FALSE(doc()->layout().parts.at("RF").mirror);
    EXPECT_LT(QLineF(pinPos("RF", "a"), aBefore).length(), 1e-9);
}

// ---- The Edit menu ----

// The platform's standard keys for the standard edits (Qt's QKeySequence::StandardKey).
TEST_F(SketchEditTest, EditActionsCarryTheStandardShortcuts)
{
    EXPECT_EQ(action("CutAction")->shortcut(), QKeySequence(QKeySequence::Cut));
    EXPECT_EQ(action("CopyAction")->shortcut(), QKeySequence(QKeySequence::Copy));
    EXPECT_EQ(action("PasteAction")->shortcut(), QKeySequence(QKeySequence::Paste));
    EXPECT_EQ(action("DeleteAction")->shortcut(), QKeySequence(QKeySequence::Delete));
    EXPECT_EQ(action("SelectAllAction")->shortcut(), QKeySequence(QKeySequence::SelectAll));
    EXPECT_FALSE(action("DuplicateAction")->shortcut().isEmpty());
}

TEST_F(SketchEditTest, ClipboardCutCopyPasteDuplicateDeleteAndSelectAllEachOneUndoStep)
{
    window->newDesign();
    ASSERT_EQ(doc()->addPart(PartType::Resistor, -120, 0), "R1");
    ASSERT_EQ(doc()->addPart(PartType::Resistor, -120, -120), "R2");
    ASSERT_EQ(doc()->addPart(PartType::Capacitor, 40, 0), "C1");
    ASSERT_TRUE(doc()->connectPins("R1", "b", "C1", "a"));
    ASSERT_TRUE(doc()->groundPin("C1", "b"));
    settle();
    const Design start = doc()->design();
    QUndoStack *stack = doc()->undoStack();

    scene()->selectParts({"R1", "C1"});
    action("CopyAction")->trigger();
    ASSERT_TRUE(QGuiApplication::clipboard()->mimeData()->hasFormat(kPartsMimeType));
    EXPECT_EQ(doc()->design(), start); // copying is not an edit

    int steps = stack->index();
    action("PasteAction")->trigger();
    EXPECT_EQ(stack->index(), steps + 1);
    ASSERT_NE(doc()->design().findPart("R3"), nullptr);
    ASSERT_NE(doc()->design().findPart("C2"), nullptr);
    EXPECT_EQ(doc()->design().parts.size(), 5u);
    auto at = [&](const std::string &id) {
        const SketchPlacement &p = doc()->layout().parts.at(id);
        return QPointF(p.x, p.y);
    };
    // Moved by one diagonal step of two grid units or more, the same for both, clear of
    // every other part.
    const QPointF shift = at("R3") - at("R1");
    EXPECT_EQ(at("C2") - at("C1"), shift);
    EXPECT_GE(shift.x(), 40.0);
    EXPECT_EQ(shift.x(), shift.y());
    EXPECT_EQ(std::fmod(shift.x(), 40.0), 0.0);
    auto clearOfOthers = [&](const std::string &id, const std::set<std::string> &group) {
        for (const auto &[other, p] : doc()->layout().parts) {
            if (group.count(other))
                continue;
            EXPECT_FALSE(std::abs(p.x - at(id).x()) < 80 && std::abs(p.y - at(id).y()) < 60)
                << id << " pasted beside " << other;
        }
    };
    clearOfOthers("R3", {"R3", "C2"});
    clearOfOthers("C2", {"R3", "C2"});
    // Connections among the copies are kept, on a node of their own; ground stays ground.
    EXPECT_EQ(node("R3", "b"), node("C2", "a"));
    EXPECT_NE(node("R3", "b"), node("R1", "b"));
    EXPECT_EQ(node("C2", "b"), "0");
    EXPECT_NE(node("R3", "a"), node("R1", "a"));
    std::vector<std::string> selected = scene()->selectedPartIds();
    std::sort(selected.begin(), selected.end());
    EXPECT_EQ(selected, (std::vector<std::string>{"C2", "R3"}));

    // Pasting again lands further off, never on the first copies.
    action("PasteAction")->trigger();
    ASSERT_NE(doc()->design().findPart("R4"), nullptr);
    clearOfOthers("R4", {"R4", "C3"});
    clearOfOthers("C3", {"R4", "C3"});
    stack->undo();
    stack->undo();
    EXPECT_EQ(doc()->design(), start);

    // Duplicate: copy and paste in one, the clipboard untouched.
    const QByteArray clipboard
        = QGuiApplication::clipboard()->mimeData()->data(QString::fromLatin1(kPartsMimeType));
    scene()->selectParts({"R2"});
    steps = stack->index();
    action("DuplicateAction")->trigger();
    EXPECT_EQ(stack->index(), steps + 1);
    ASSERT_NE(doc()->design().findPart("R3"), nullptr);
    clearOfOthers("R3", {"R3"});
    EXPECT_EQ(doc()->design().findPart("R3")->number("value"),
              doc()->design().findPart("R2")->number("value"));
    EXPECT_EQ(QGuiApplication::clipboard()->mimeData()->data(QString::fromLatin1(kPartsMimeType)),
              clipboard);
    stack->undo();
    EXPECT_EQ(doc()->design(), start);

    // Cut: gone in one step, and pasted back beside their old places.
    scene()->selectParts({"R1", "C1"});
    steps = stack->index();
    action("CutAction")->trigger();
    EXPECT_EQ(stack->index(), steps + 1);
    EXPECT_EQ(doc()->design().findPart("R1"), nullptr);
    EXPECT_EQ(doc()->design().findPart("C1"), nullptr);
    action("PasteAction")->trigger();
    EXPECT_NE(doc()->design().findPart("R1"), nullptr);
    EXPECT_EQ(node("R1", "b"), node("C1", "a"));
    stack->undo();
    stack->undo();
    EXPECT_EQ(doc()->design(), start);

    // Select all, then Delete: every part and ground symbol in one step.
    view()->setFocus();
    action("SelectAllAction")->trigger();
    EXPECT_EQ(scene()->selectedPartIds().size(), 3u);
    EXPECT_EQ(scene()->selectedGrounds().size(), doc()->layout().grounds.size());
    steps = stack->index();
    action("DeleteAction")->trigger();
    EXPECT_EQ(stack->index(), steps + 1);
    EXPECT_TRUE(doc()->design().parts.empty());
    EXPECT_TRUE(doc()->layout().grounds.empty());
    stack->undo();
    EXPECT_EQ(doc()->design(), start);

    // Text that is not Loopsketch parts pastes nothing.
    QGuiApplication::clipboard()->setText(QStringLiteral("R1 10k"));
    steps = stack->index();
    action("PasteAction")->trigger();
    EXPECT_EQ(stack->index(), steps);
    EXPECT_THAT(window->statusText().toStdString()
                    + window->statusBar()->currentMessage().toStdString(),
                HasSubstr("no Loopsketch parts"));
}

TEST_F(SketchEditTest, DeleteRemovesSelectedPartsGroundsAndWiresTogether)
{
    WireItem *wire = openDemoAtWireOnIn();
    ASSERT_NE(wire, nullptr);
    const Design before = doc()->design();
    const PinRef from = wire->wire().from, to = wire->wire().to;
    // A wire whose parts both stay, and a part.
    std::string other;
    for (const Part &p : before.parts) {
        if (p.id != from.part && p.id != to.part && p.type != PartType::GainBlock)
            other = p.id;
    }
    ASSERT_FALSE(other.empty());
    scene()->partItem(other)->setSelected(true);
    wire->setSelected(true);
    const int steps = doc()->undoStack()->index();
    action("DeleteAction")->trigger();
    EXPECT_EQ(doc()->undoStack()->index(), steps + 1);
    EXPECT_EQ(doc()->design().findPart(other), nullptr);
    EXPECT_NE(node(from.part, from.terminal), node(to.part, to.terminal));
    doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);
}

} // namespace
} // namespace loopsketch::ui::test
