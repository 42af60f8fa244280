#pragma once

// The fixture of the Sketch editing tests: a shown main window (1500 x 940) that asks
// nothing before discarding, with helpers that act as a user would: drop a palette symbol,
// drag from pin to pin, type into a field.

#include "panels/plotpanel.h"
#include "panels/readout.h"
#include "sketch/partitem.h"
#include "sketch/partspalette.h"
#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "testwindow.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include <QApplication>
#include <QDropEvent>
#include <QLineEdit>
#include <QMimeData>
#include <QString>
#include <QTest>
#include <QXYSeries>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <memory>

namespace loopsketch::ui::test {

inline const QString kDesigns = QStringLiteral(LOOPSKETCH_DESIGNS_DIR);

class BlankDesignTest : public ::testing::Test
{
protected:
    void SetUp() override
    {
        window = std::make_unique<MainWindow>();
        showTestWindow(*window);
        ASSERT_TRUE(QTest::qWaitForWindowExposed(window.get()));
    }

    DesignDocument *doc() const { return window->document(); }
    SketchView *view() const { return window->sketchView(); }
    SketchScene *scene() const { return window->sketchScene(); }

    void openExample(const QString &name)
    {
        QString error;
        ASSERT_TRUE(window->openFile(kDesigns + QLatin1Char('/') + name, &error))
            << error.toStdString();
        ASSERT_TRUE(doc()->waitForAnalysis());
    }

    /// Drags the palette symbol `label` onto the Sketch and drops it at viewport point `at`
    /// (the drag data is the palette's own).
    void dropSymbol(const QString &label, QPoint at)
    {
        std::unique_ptr<QMimeData> data(window->partsPalette()->dragData(label));
        ASSERT_NE(data, nullptr) << label.toStdString();
        QWidget *vp = view()->viewport();
        QDragEnterEvent enter(at, Qt::CopyAction, data.get(), Qt::LeftButton, Qt::NoModifier);
        QApplication::sendEvent(vp, &enter);
        ASSERT_TRUE(enter.isAccepted());
        QDragMoveEvent move(at, Qt::CopyAction, data.get(), Qt::LeftButton, Qt::NoModifier);
        QApplication::sendEvent(vp, &move);
        QDropEvent drop(QPointF(at), Qt::CopyAction, data.get(), Qt::LeftButton, Qt::NoModifier);
        QApplication::sendEvent(vp, &drop);
        QApplication::processEvents();
    }

    QPointF pinPos(const std::string &part, const std::string &terminal) const
    {
        PartItem *item = scene()->partItem(part);
        EXPECT_NE(item, nullptr) << part;
        if (!item)
            return {};
        const SketchPlacement placement = item->placement();
        for (const PinGeometry &pin : pinGeometry(item->partType())) {
            if (pin.terminal == terminal)
                return toScene(placement, pin.position);
        }
        ADD_FAILURE() << part << " has no pin " << terminal;
        return {};
    }

    /// A mouse drag on the Sketch from one scene point to another.
    void dragOnSketch(QPointF from, QPointF to)
    {
        QWidget *vp = view()->viewport();
        const QPoint a = view()->mapFromScene(from), b = view()->mapFromScene(to);
        QTest::mousePress(vp, Qt::LeftButton, {}, a);
        QTest::mouseMove(vp, (a + b) / 2);
        QTest::mouseMove(vp, b);
        QTest::mouseRelease(vp, Qt::LeftButton, {}, b);
    }

    void wire(const std::string &pa, const std::string &ta, const std::string &pb,
              const std::string &tb)
    {
        dragOnSketch(pinPos(pa, ta), pinPos(pb, tb));
        EXPECT_EQ(doc()->design().findPart(pa)->node(ta), doc()->design().findPart(pb)->node(tb))
            << pa << "." << ta << " to " << pb << "." << tb;
    }

    void wireToGround(const std::string &part, const std::string &terminal)
    {
        ASSERT_FALSE(doc()->layout().grounds.empty());
        const SketchGround g = doc()->layout().grounds.front();
        dragOnSketch(pinPos(part, terminal), QPointF(g.x, g.y));
        EXPECT_EQ(doc()->design().findPart(part)->node(terminal), "0") << part << "." << terminal;
    }

    /// Types `text` into a line edit and presses Return, as a user would.
    static void type(QLineEdit *edit, const QString &text)
    {
        ASSERT_NE(edit, nullptr);
        edit->setFocus();
        edit->selectAll();
        QTest::keyClick(edit, Qt::Key_Delete);
        QTest::keyClicks(edit, text);
        QTest::keyClick(edit, Qt::Key_Return);
    }

    void settle()
    {
        QApplication::processEvents();
        EXPECT_TRUE(doc()->waitForAnalysis());
        QApplication::processEvents();
    }

    /// The window shows nothing of an analysis: Readout values "—", every plot empty with its
    /// notice, the badge says so.
    void expectNotAnalysed() const
    {
        EXPECT_EQ(doc()->analysis(), nullptr);
        const QStringList lines = window->readout()->plainText().split(QLatin1Char('\n'));
        ASSERT_FALSE(lines.isEmpty());
        for (const QString &line : lines)
            EXPECT_TRUE(line.endsWith(QStringLiteral(": —"))) << line.toStdString();
        for (PlotPanel *panel : window->panels()) {
            EXPECT_THAT(panel->unavailableText().toStdString(),
                        ::testing::HasSubstr("Not analysed"));
            // No tick values of the last analysis's ranges either.
            for (const QAbstractAxis *axis : panel->chart()->axes())
                EXPECT_EQ(axis->labelsColor().alpha(), 0) << axis->titleText().toStdString();
            for (QAbstractSeries *s : panel->chart()->series()) {
                if (auto *xy = qobject_cast<QXYSeries *>(s)) {
                    EXPECT_EQ(xy->count(), 0) << xy->name().toStdString();
                }
            }
        }
        EXPECT_EQ(view()->badgeText(), QStringLiteral("not analysed"));
    }

    std::unique_ptr<MainWindow> window;
};

} // namespace loopsketch::ui::test
