// The window on a small screen and its arrangement: at 1280 x 800 the Sketch keeps half the
// width and the plots share two tab groups beside it; the arrangement persists and
// View > Reset layout brings the default back.

#include "panels/mappanel.h"
#include "panels/panels.h"
#include "panels/scanpanel.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include <QAction>
#include <QApplication>
#include <QComboBox>
#include <QDockWidget>
#include <QLabel>
#include <QMenu>
#include <QMenuBar>
#include <QScrollArea>
#include <QScrollBar>
#include <QSettings>
#include <QTest>

#include <gtest/gtest.h>

#include <memory>

using namespace loopsketch::ui;

namespace {

class WindowLayoutTest : public ::testing::Test
{
protected:
    void SetUp() override
    {
        // ctest runs the cases of this program side by side: one settings file per case.
        QCoreApplication::setApplicationName(
            QStringLiteral("tst_windowlayout-")
            + QString::fromLatin1(::testing::UnitTest::GetInstance()->current_test_info()->name()));
        QSettings().clear();
    }
    void TearDown() override { QSettings().clear(); }

    static std::unique_ptr<MainWindow> openWindow(int w, int h)
    {
        auto window = std::make_unique<MainWindow>();
        window->setAskBeforeDiscarding(false);
        window->resize(w, h);
        window->show();
        EXPECT_TRUE(window->openFile(QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch")));
        EXPECT_TRUE(window->document()->waitForAnalysis());
        // The arrangement and its sizes settle over a few event-loop turns.
        for (int i = 0; i < 5; ++i)
            QTest::qWait(20);
        return window;
    }

    static QDockWidget *dock(MainWindow &window, const char *name)
    {
        return window.findChild<QDockWidget *>(QLatin1String(name));
    }
};

TEST_F(WindowLayoutTest, At1280By800TheSketchKeepsHalfTheWidthAndThePlotsAreTabbed)
{
    auto window = openWindow(1280, 800);
    EXPECT_TRUE(window->isCompactLayout());
    EXPECT_GE(window->centralWidget()->width(), 1280 / 2);
    EXPECT_LE(window->width(), 1280);
    // Loop gain above, Step below, the other plots in their tabs.
    QDockWidget *loop = dock(*window, "LoopGainDock");
    QDockWidget *step = dock(*window, "StepDock");
    EXPECT_TRUE(window->tabifiedDockWidgets(loop).contains(dock(*window, "ImpedanceDock")));
    EXPECT_TRUE(window->tabifiedDockWidgets(step).contains(dock(*window, "PolesDock")));
    for (QDockWidget *d : {loop, step}) {
        SCOPED_TRACE(d->objectName().toStdString());
        EXPECT_GE(d->widget()->width(), 300);
        EXPECT_GE(d->widget()->height(), 250);
    }
    EXPECT_TRUE(window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                    + "/loopsketch-1280x800.png"));
}

// The Scan and Map panels at 1280 x 800, asked for from the Design menu: their controls wrap
// inside the dock (no scroll bar either way), the map's key and the hover line are whole.
TEST_F(WindowLayoutTest, At1280By800TheScanAndMapPanelsFitTheirDock)
{
    auto window = openWindow(1280, 800);
    for (const char *entry : {"Scan a part…", "Map two parts…"}) {
        SCOPED_TRACE(entry);
        QAction *action = nullptr;
        for (QAction *a : window->findChildren<QAction *>())
            if (a->text().remove(QLatin1Char('&')) == QString::fromUtf8(entry))
                action = a;
        ASSERT_NE(action, nullptr);
        action->trigger();
        for (int i = 0; i < 5; ++i)
            QTest::qWait(20);
        QApplication::processEvents();
        QWidget *panel = QString::fromUtf8(entry).startsWith(QStringLiteral("Scan"))
            ? static_cast<QWidget *>(window->findChild<ScanPanel *>())
            : static_cast<QWidget *>(window->findChild<MapPanel *>());
        ASSERT_NE(panel, nullptr);
        if (auto *list = panel->findChild<QComboBox *>(QStringLiteral("scanTarget")))
            list->hidePopup();
        auto *scroll = qobject_cast<QScrollArea *>(panel->parentWidget()->parentWidget());
        ASSERT_NE(scroll, nullptr);
        EXPECT_FALSE(scroll->horizontalScrollBar()->isVisible());
        EXPECT_FALSE(scroll->verticalScrollBar()->isVisible());
        EXPECT_LE(panel->width(), 420); // the compact column, about 390 px
        for (QLabel *label : panel->findChildren<QLabel *>()) {
            if (label->isVisible()) {
                EXPECT_LE(label->mapTo(panel, QPoint(label->width(), 0)).x(), panel->width())
                    << label->text().toStdString();
            }
        }
    }
    auto *map = window->findChild<MapPanel *>()->heatMap();
    for (const HeatMap::KeyEntry &e : map->keyEntries())
        EXPECT_LE(e.text.right(), map->width()) << e.label.toStdString();
    EXPECT_TRUE(window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                    + "/loopsketch-1280x800-map.png"));
}

TEST_F(WindowLayoutTest, WideWindowsKeepThePanelsSideBySide)
{
    auto window = openWindow(1800, 1000);
    EXPECT_FALSE(window->isCompactLayout());
    EXPECT_FALSE(dock(*window, "StepDock")->visibleRegion().isEmpty());
    EXPECT_FALSE(dock(*window, "PolesDock")->visibleRegion().isEmpty());
}

TEST_F(WindowLayoutTest, ArrangementPersistsAndResetLayoutRestoresIt)
{
    {
        auto window = openWindow(1500, 940);
        dock(*window, "StepDock")->hide();
        dock(*window, "PolesDock")->setFloating(true);
        ASSERT_TRUE(window->close()); // saves the arrangement
    }
    auto window = openWindow(1500, 940);
    EXPECT_FALSE(dock(*window, "StepDock")->isVisible());
    EXPECT_TRUE(dock(*window, "PolesDock")->isFloating());

    QAction *reset = window->findChild<QAction *>(QStringLiteral("ResetLayoutAction"));
    ASSERT_NE(reset, nullptr);
    bool inViewMenu = false;
    for (QAction *menu : window->menuBar()->actions()) {
        if (menu->menu() && menu->text().remove(QLatin1Char('&')) == QStringLiteral("View"))
            inViewMenu = menu->menu()->actions().contains(reset);
    }
    EXPECT_TRUE(inViewMenu);
    reset->trigger();
    for (int i = 0; i < 5; ++i)
        QTest::qWait(20);
    EXPECT_TRUE(dock(*window, "StepDock")->isVisible());
    EXPECT_FALSE(dock(*window, "PolesDock")->isFloating());
    EXPECT_EQ(window->dockWidgetArea(dock(*window, "PolesDock")), Qt::BottomDockWidgetArea);
}

/// Teardown with unsaved work: the undo stack, destroyed with the document after the
/// window's own members, emits cleanChanged as it goes; nothing may reach the half-destroyed
/// window. Under the asan-ui preset a use after free here fails the test.
TEST_F(WindowLayoutTest, ClosingWithUnsavedWorkTouchesNoFreedMember)
{
    auto window = openWindow(1500, 940);
    ASSERT_TRUE(window->document()->stepPart("RF", 1, false));
    ASSERT_TRUE(window->document()->isModified());
    QApplication::processEvents();
    window.reset();
    SUCCEED();
}

} // namespace
