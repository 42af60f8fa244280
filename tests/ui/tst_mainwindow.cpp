// The desktop application against core: what the window shows after an edit must be what
// core's analyze() gives for the edited design.

#include "demowindowtest.h"
#include "panels/panels.h"
#include "panels/readout.h"
#include "sketch/inspector.h"
#include "sketch/partitem.h"
#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "support/qtadapter.h"
#include "testwindow.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"
#include "windowchecks.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/eseries.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"

#include <QApplication>
#include <QChart>
#include <QDir>
#include <QFile>
#include <QLabel>
#include <QLineEdit>
#include <QMouseEvent>
#include <QSettings>
#include <QSignalSpy>
#include <QStandardPaths>
#include <QTemporaryDir>
#include <QTest>
#include <QWheelEvent>
#include <QXYSeries>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <memory>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

namespace {

const std::string kDesigns = LOOPSKETCH_DESIGNS_DIR;

class MainWindowTest : public DemoWindowTest
{
protected:
    double valueOf(const std::string &id) const
    {
        return doc()->design().findPart(id)->number("value");
    }

    /// Selects `part` on the Sketch and gives the Inspector's editor of `field`; nullptr, and
    /// a failure, when the Inspector does not show the part.
    QLineEdit *inspectorEdit(const std::string &part, const std::string &field) const
    {
        window->sketchScene()->selectPart(part);
        if (window->inspector()->partId() != part) {
            ADD_FAILURE() << "the Inspector does not show " << part;
            return nullptr;
        }
        return window->inspector()->fieldEdit(field);
    }

    /// Types `text` over what `edit` holds and presses Return, as a user would.
    static void typeAndReturn(QLineEdit *edit, const char *text)
    {
        edit->selectAll();
        QTest::keyClicks(edit, text);
        QTest::keyClick(edit, Qt::Key_Return);
    }

    /// Types `text` into the Inspector's editor of `field`, which must refuse it: the design
    /// stays as it was and the field's error line names `named`.
    void expectRefused(QLineEdit *edit, const std::string &field, const char *text,
                       const std::string &named)
    {
        const Design before = doc()->design();
        typeAndReturn(edit, text);
        QApplication::processEvents();
        EXPECT_EQ(doc()->design(), before) << text;
        EXPECT_THAT(window->inspector()->fieldError(field).toStdString(), HasSubstr(named));
    }

    /// Sends a wheel notch (120 units per notch) to the Sketch's viewport over a part.
    void wheelOver(const std::string &id, int notches, Qt::KeyboardModifiers modifiers = {})
    {
        PartItem *item = window->sketchScene()->partItem(id);
        ASSERT_NE(item, nullptr);
        SketchView *view = window->sketchView();
        const QPoint pos = view->mapFromScene(item->mapToScene(QPointF(0, 0)));
        QWheelEvent event(QPointF(pos), QPointF(view->viewport()->mapToGlobal(pos)), QPoint(),
                          QPoint(0, 120 * notches), Qt::NoButton, modifiers, Qt::NoScrollPhase,
                          false);
        QApplication::sendEvent(view->viewport(), &event);
    }

    /// Waits for the coalesced recomputation that follows an edit.
    void waitForRecompute() { ASSERT_TRUE(doc()->waitForAnalysis()); }

    /// core's own result for the document's design with one value changed.
    Analysis expectedWith(const std::string &id, double value) const
    {
        Design d = doc()->design();
        d.findPart(id)->fields["value"].si = value;
        auto a = analyze(d);
        EXPECT_TRUE(a.ok()) << a.errorText();
        return *a;
    }

    /// The window shows `expected` (windowchecks.h).
    void expectShows(const Analysis &expected) const
    {
        loopsketch::ui::test::expectWindowShows(*window, expected);
    }
};

TEST_F(MainWindowTest, OpensTheDemoLaidOutAsStored)
{
    EXPECT_EQ(doc()->design().title, "Dust-sensor photodiode front end, rev A");
    // The stored sketch places RF at (0, -80) (resources/designs/demo.loopsketch).
    PartItem *rf = window->sketchScene()->partItem("RF");
    ASSERT_NE(rf, nullptr);
    EXPECT_NEAR(rf->pos().x(), 0.0, 1e-9);
    EXPECT_NEAR(rf->pos().y(), -80.0, 1e-9);
    expectShows(*analyze(doc()->design()));
    EXPECT_EQ(window->sketchView()->badgeText(), topologyBadge(*doc()->analysis()));
    EXPECT_THAT(window->sketchView()->badgeText().toStdString(), HasSubstr("shunt-shunt"));
    EXPECT_THAT(window->statusText().toStdString(), HasSubstr("recomputed in"));
    EXPECT_THAT(window->windowTitle().toStdString(), HasSubstr("demo.loopsketch"));
}

TEST_F(MainWindowTest, WheelStepMovesFeedbackResistorToNextE24Value)
{
    ASSERT_NEAR(valueOf("RF"), 1e6, 1e-3);
    wheelOver("RF", 1);
    waitForRecompute();
    // IEC 60063 E24: 1.0 is followed by 1.1.
    EXPECT_NEAR(valueOf("RF"), 1.1e6, 1e-3);
    EXPECT_EQ(doc()->design().findPart("RF")->fields.at("value").text, "1.1M");
    expectShows(expectedWith("RF", 1.1e6));
    EXPECT_TRUE(window->isWindowModified());
}

// The demo with its sweep ending at 80 kHz, below its 92 kHz bandwidth and its 273 kHz loop
// crossover: no -3 dB point and no crossover in the sweep. The Readout says the bandwidth
// lies beyond the sweep; the verdicts are core's checkSpecs() (the sheet, the Candidates
// panel and the spread yield use the same): a sweep ending above the 50 kHz bandwidth spec
// meets it, a missing phase margin fails its spec, the gain passes.
TEST_F(MainWindowTest, BandwidthBeyondTheSweepReadsAsSuchAndMeetsItsSpec)
{
    QFile in(QString::fromStdString(kDesigns + "/demo.loopsketch"));
    ASSERT_TRUE(in.open(QIODevice::ReadOnly));
    QByteArray text = in.readAll();
    const QByteArray stop = "\"stop\": \"1G\"";
    ASSERT_TRUE(text.contains(stop));
    text.replace(stop, "\"stop\": \"80k\"");
    QString error;
    ASSERT_TRUE(window->openText(text.toStdString(), QStringLiteral("short sweep"), &error))
        << error.toStdString();
    ASSERT_TRUE(window->document()->waitForAnalysis());
    QApplication::processEvents();
    const Analysis *a = doc()->analysis();
    ASSERT_NE(a, nullptr);
    ASSERT_FALSE(a->bandwidthHz.has_value());
    // The loop crossover lies above the sweep stop: found on the model all the same.
    ASSERT_TRUE(a->margins.phaseMarginDeg.has_value());
    ASSERT_TRUE(a->margins.crossoverHz.has_value());
    EXPECT_GT(*a->margins.crossoverHz, 80e3);
    EXPECT_EQ(window->readout()->cellText("bandwidth −3 dB"), QStringLiteral("> 80 kHz"));
    ASSERT_TRUE(doc()->design().specs.bandwidthMin);
    // The Readout shows core's spec check (bandwidth meets its spec: the sweep ends above
    // bandwidth_min with no -3 dB point) and names the failing specs.
    const SpecCheck check
        = checkSpecs(doc()->design().specs, doc()->design().sweep, trialMetricsOf(*a));
    EXPECT_TRUE(check.bandwidth);
    QStringList failing;
    if (!check.gain)
        failing << QStringLiteral("gain");
    if (!check.bandwidth)
        failing << QStringLiteral("bandwidth");
    if (!check.phaseMargin)
        failing << QStringLiteral("phase margin");
    EXPECT_EQ(window->readout()->cellText("specs"),
              failing.isEmpty() ? QStringLiteral("all pass (3)")
                                : QStringLiteral("fails: ") + failing.join(QStringLiteral(", ")));
}

TEST_F(MainWindowTest, UndoRestoresValueReadoutAndCurve)
{
    const Analysis before = *doc()->analysis();
    wheelOver("RF", 1);
    waitForRecompute();
    ASSERT_NEAR(valueOf("RF"), 1.1e6, 1e-3);
    doc()->undoStack()->undo();
    waitForRecompute();
    EXPECT_NEAR(valueOf("RF"), 1e6, 1e-3);
    expectShows(before);
    EXPECT_FALSE(window->isWindowModified());
}

TEST_F(MainWindowTest, WheelBurstMergesIntoOneUndoStep)
{
    wheelOver("RF", 1);
    wheelOver("RF", 1);
    wheelOver("RF", 1);
    waitForRecompute();
    // IEC 60063 E24: 1.0, 1.1, 1.2, 1.3.
    EXPECT_NEAR(valueOf("RF"), 1.3e6, 1e-3);
    EXPECT_EQ(doc()->undoStack()->count(), 1);
    doc()->undoStack()->undo();
    EXPECT_NEAR(valueOf("RF"), 1e6, 1e-3);
}

TEST_F(MainWindowTest, ShiftWheelStepsADecadeAndDownwardsWorks)
{
    wheelOver("RF", 1, Qt::ShiftModifier);
    waitForRecompute();
    EXPECT_NEAR(valueOf("RF"), 10e6, 1e-2);
    // CF is E12 in the demo: 2.2 p steps down to 1.8 p (IEC 60063 E12).
    wheelOver("CF", -1);
    waitForRecompute();
    EXPECT_NEAR(valueOf("CF"), 1.8e-12, 1e-18);
}

TEST_F(MainWindowTest, DraggingTheValueLabelUpStepsTheValue)
{
    PartItem *rf = window->sketchScene()->partItem("RF");
    SketchView *view = window->sketchView();
    const QPointF label = rf->mapToScene(rf->labelRect().center());
    const QPoint from = view->mapFromScene(label);
    // Three steps' worth of pixels upwards: IEC 60063 E24 1.0 -> 1.1 -> 1.2 -> 1.3.
    const QPoint to = from - QPoint(0, int(3 * PartItem::kPixelsPerStep + 4));
    QTest::mousePress(view->viewport(), Qt::LeftButton, {}, from);
    QTest::mouseMove(view->viewport(), from - QPoint(0, 8));
    QTest::mouseMove(view->viewport(), to);
    QTest::mouseRelease(view->viewport(), Qt::LeftButton, {}, to);
    waitForRecompute();
    EXPECT_NEAR(valueOf("RF"), 1.3e6, 1e-3);
    EXPECT_NEAR(rf->pos().y(), -80.0, 1e-9); // the part itself did not move
    EXPECT_EQ(doc()->undoStack()->count(), 1);
}

TEST_F(MainWindowTest, ArrowKeysStepTheSelectedPart)
{
    window->sketchScene()->selectPart("RF");
    QTest::keyClick(window->sketchView(), Qt::Key_Down);
    waitForRecompute();
    // IEC 60063 E24: below 1.0 comes 0.91 of the decade beneath.
    EXPECT_NEAR(valueOf("RF"), 910e3, 1e-3);
}

TEST_F(MainWindowTest, InvalidInspectorTextLeavesTheDesignUnchanged)
{
    QLineEdit *edit = inspectorEdit("RF", "value");
    ASSERT_NE(edit, nullptr);
    Inspector *inspector = window->inspector();
    expectRefused(edit, "value", "12kk", "12kk");
    EXPECT_EQ(doc()->undoStack()->count(), 0);
    EXPECT_THAT(inspector->fieldError("value").toStdString(), HasSubstr("RF"));

    // Valid RKM text then goes through (IEC 60062: 2M2 = 2.2 MΩ) and clears the mark.
    typeAndReturn(edit, "2M2");
    waitForRecompute();
    EXPECT_NEAR(valueOf("RF"), 2.2e6, 1e-3);
    EXPECT_TRUE(inspector->fieldError("value").isEmpty());
    expectShows(expectedWith("RF", 2.2e6));
}

TEST_F(MainWindowTest, GainBlockPolesPresetsAndClearedFieldsAreUndoable)
{
    QLineEdit *poles = inspectorEdit("U1", "poles_hz");
    ASSERT_NE(poles, nullptr);
    Inspector *inspector = window->inspector();
    const Design before = doc()->design();

    expectRefused(poles, "poles_hz", "10, 2xM", "poles_hz[1]");

    typeAndReturn(poles, "10, 20M");
    waitForRecompute();
    const Part *u1 = doc()->design().findPart("U1");
    ASSERT_EQ(u1->polesHz.size(), 2u);
    EXPECT_NEAR(u1->polesHz[1].si, 20e6, 1e-3);
    EXPECT_TRUE(inspector->fieldError("poles_hz").isEmpty());

    // Clearing an optional field removes it; the spec's default applies again.
    QLineEdit *cIn = inspector->fieldEdit("c_in");
    ASSERT_NE(cIn, nullptr);
    cIn->clear();
    QTest::keyClick(cIn, Qt::Key_Return);
    EXPECT_FALSE(doc()->design().findPart("U1")->has("c_in"));

    // Preset 0 is "general purpose": poles 10 Hz and 5 MHz.
    doc()->applyGainBlockPreset("U1", 0);
    ASSERT_EQ(doc()->design().findPart("U1")->polesHz.size(), 2u);
    EXPECT_NEAR(doc()->design().findPart("U1")->polesHz[1].si, 5e6, 1e-3);
    const int steps = doc()->undoStack()->count();
    EXPECT_EQ(steps, 3); // poles, c_in, and the whole preset as one step
    for (int i = 0; i < steps; ++i)
        doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);
}

TEST_F(MainWindowTest, PlaceWireGroundAndDeleteAPartAreUndoable)
{
    const Design before = doc()->design();
    const std::string id = doc()->addPart(PartType::Resistor, 0, 200);
    EXPECT_EQ(id, "R1");
    ASSERT_NE(window->sketchScene()->partItem(id), nullptr);
    const Part *r1 = doc()->design().findPart(id);
    ASSERT_NE(r1, nullptr);
    EXPECT_EQ(r1->nodes.size(), 2u);
    EXPECT_NE(r1->nodes[0], r1->nodes[1]);

    // Draw a wire with the mouse from R1's pin a to RL's pin a (the output node).
    SketchView *view = window->sketchView();
    std::string part, terminal;
    QPointF from, to;
    PartItem *r1Item = window->sketchScene()->partItem(id);
    ASSERT_TRUE(window->sketchScene()->pinAt(r1Item->mapToScene(QPointF(-40, 0)), 1.0, &part,
                                             &terminal, &from));
    EXPECT_EQ(terminal, "a");
    PartItem *rl = window->sketchScene()->partItem("RL");
    const SketchPlacement rlPlace{rl->pos().x(), rl->pos().y(), rl->symbolRotation()};
    to = toScene(rlPlace, QPointF(-40, 0));
    QTest::mousePress(view->viewport(), Qt::LeftButton, {}, view->mapFromScene(from));
    QTest::mouseMove(view->viewport(), view->mapFromScene(to));
    QTest::mouseRelease(view->viewport(), Qt::LeftButton, {}, view->mapFromScene(to));
    EXPECT_EQ(doc()->design().findPart(id)->nodes[0], "out");

    ASSERT_TRUE(doc()->groundPin(id, "b"));
    EXPECT_EQ(doc()->design().findPart(id)->nodes[1], "0");
    waitForRecompute();
    // R1 from out to ground now loads the output: core's result for the edited design.
    expectShows(*analyze(doc()->design()));

    window->sketchScene()->selectPart(id);
    QTest::keyClick(view, Qt::Key_Delete);
    EXPECT_EQ(doc()->design().findPart(id), nullptr);
    EXPECT_EQ(window->sketchScene()->partItem(id), nullptr);

    while (doc()->undoStack()->canUndo())
        doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);
}

TEST_F(MainWindowTest, SaveReloadGivesTheSameDesign)
{
    wheelOver("RF", 2);
    waitForRecompute();
    QTemporaryDir dir;
    ASSERT_TRUE(dir.isValid());
    const QString path = dir.filePath("stepped.loopsketch");
    ASSERT_NE(loopsketch::ui::test::saveAndReopen(*window, path), nullptr);
    EXPECT_FALSE(window->isWindowModified());
    EXPECT_NEAR(doc()->design().findPart("RF")->number("value"), 1.2e6, 1e-3);
}

TEST_F(MainWindowTest, DraggingAPartIsOneUndoableMoveOnTheGrid)
{
    PartItem *rl = window->sketchScene()->partItem("RL");
    SketchView *view = window->sketchView();
    const QPoint from = view->mapFromScene(rl->mapToScene(QPointF(0, 0)));
    const QPoint to = view->mapFromScene(rl->mapToScene(QPointF(0, 0)) + QPointF(43, 18));
    QTest::mousePress(view->viewport(), Qt::LeftButton, {}, from);
    QTest::mouseMove(view->viewport(), (from + to) / 2);
    QTest::mouseMove(view->viewport(), to);
    QTest::mouseRelease(view->viewport(), Qt::LeftButton, {}, to);
    ASSERT_TRUE(doc()->design().sketch.has_value());
    const SketchPlacement moved = doc()->design().sketch->parts.at("RL");
    EXPECT_NEAR(std::fmod(moved.x, kGrid), 0.0, 1e-9);
    EXPECT_NEAR(std::fmod(moved.y, kGrid), 0.0, 1e-9);
    EXPECT_GT(moved.x, 220.0);
    EXPECT_EQ(doc()->undoStack()->count(), 1);
    doc()->undoStack()->undo();
    EXPECT_NEAR(doc()->design().sketch->parts.at("RL").x, 220.0, 1e-9);
    EXPECT_NEAR(rl->pos().x(), 220.0, 1e-9);
}

TEST_F(MainWindowTest, HoveringOnePanelShowsTheFrequencyInAllFrequencyPanels)
{
    QTest::qWait(200);
    LoopGainPanel *loop = window->loopGainPanel();
    // The frequency under the pixel the event was sent to (windowchecks.h).
    const double log10Hz = loopsketch::ui::test::hoverLoopGainCentre(loop);
    const Analysis &a = *doc()->analysis();
    std::size_t nearest = 0;
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i) {
        if (std::abs(std::log10(a.frequenciesHz[i]) - log10Hz)
            < std::abs(std::log10(a.frequenciesHz[nearest]) - log10Hz))
            nearest = i;
    }
    const QString fText
        = QStringLiteral("f = ") + toQString(formatEngineering(std::pow(10.0, log10Hz), 3, "Hz"));
    int frequencyPanels = 0;
    for (PlotPanel *panel : window->panels()) {
        if (!panel->hasFrequencyAxis()) {
            EXPECT_TRUE(panel->cursorText().isEmpty());
            continue;
        }
        ++frequencyPanels;
        loopsketch::ui::test::bringForward(panel);
        EXPECT_THAT(panel->cursorText().toStdString(), HasSubstr(fText.toStdString()));
    }
    EXPECT_EQ(frequencyPanels, 4); // loop gain, impedance, desensitivity, noise
    // The loop gain's value in the cursor is core's |T| at the nearest sweep frequency.
    const QString tText = LoopGainPanel::kT + QStringLiteral(": ")
        + QString::number(toDecibels(std::abs(a.curves.loopGain[nearest])), 'f', 1)
        + QStringLiteral(" dB");
    EXPECT_THAT(loop->cursorText().toStdString(), HasSubstr(tText.toStdString()));
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-cursor.png");

    QEvent leave(QEvent::Leave);
    QApplication::sendEvent(loop, &leave);
    EXPECT_TRUE(loop->cursorText().isEmpty());
}

TEST(MainWindowLayout, DesignWithoutSketchGetsAReadableLayout)
{
    MainWindow window;
    QString error;
    ASSERT_TRUE(window.openFile(QString::fromStdString(kDesigns + "/contact-mic-preamp.loopsketch"),
                                &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    const Design &d = window.document()->design();
    ASSERT_FALSE(d.sketch.has_value());
    std::vector<QRectF> bodies;
    for (const Part &p : d.parts) {
        PartItem *item = window.sketchScene()->partItem(p.id);
        ASSERT_NE(item, nullptr) << p.id;
        QTransform t;
        t.rotate(item->symbolRotation());
        bodies.push_back(t.mapRect(bodyRect(p.type)).translated(item->pos()));
    }
    for (std::size_t i = 0; i < bodies.size(); ++i) {
        for (std::size_t j = i + 1; j < bodies.size(); ++j)
            EXPECT_FALSE(bodies[i].intersects(bodies[j])) << d.parts[i].id << " " << d.parts[j].id;
    }
    // Gain block in the middle, source left of it, load right of it.
    EXPECT_LT(window.sketchScene()->partItem("VS")->pos().x(),
              window.sketchScene()->partItem("U1")->pos().x());
    EXPECT_GT(window.sketchScene()->partItem("RL")->pos().x(),
              window.sketchScene()->partItem("U1")->pos().x());
}

TEST_F(MainWindowTest, WritesAWindowScreenshot)
{
    wheelOver("CF", 1);
    waitForRecompute();
    // Let the charts' layouts settle (label spacing follows the plot's final size) and the
    // settled, antialiased frame follow the burst.
    QTest::qWait(500);
    window->sketchScene()->selectPart("RF");
    QApplication::processEvents();
    const QString path = QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-window.png";
    QFile::remove(path);
    const QPixmap shot = window->grab();
    ASSERT_FALSE(shot.isNull());
    ASSERT_TRUE(shot.save(path));
    QImage image(path);
    EXPECT_EQ(image.width(), shot.width());
    EXPECT_GE(image.width(), 1200);
    window->sketchScene()->selectPart("U1");
    QApplication::processEvents();
    EXPECT_TRUE(window->inspector()->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                                 + "/loopsketch-inspector-gain-block.png"));
    for (std::size_t i = 0; i < window->panels().size(); ++i) {
        const QString panelPath = QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
            + QStringLiteral("/loopsketch-panel-%1.png").arg(i);
        EXPECT_TRUE(window->panels()[i]->grab().save(panelPath));
    }
}

/// Every example design opens, is analysed and leaves a screenshot for inspection; designs
/// without a stored sketch show the automatic layout.
class ExampleDesign : public ::testing::TestWithParam<const char *>
{
};

TEST_P(ExampleDesign, OpensAnalysedWithAScreenshot)
{
    MainWindow window;
    loopsketch::ui::test::showTestWindow(window);
    QString error;
    const std::string name = GetParam();
    ASSERT_TRUE(
        window.openFile(QString::fromStdString(kDesigns + "/" + name + ".loopsketch"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    ASSERT_NE(window.document()->analysis(), nullptr);
    EXPECT_EQ(window.sketchView()->badgeText(), topologyBadge(*window.document()->analysis()));
    QTest::qWait(200);
    EXPECT_TRUE(window.grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-"
                                   + QString::fromStdString(name) + ".png"));
}

// An unstable design (invented; a pair of right-half-plane poles): the Readout leads with
// UNSTABLE and the poles, the closed-loop cells read unstable instead of numbers, every spec
// fails for that reason, the Poles panel says so and keeps the poles on the plot, and the
// Step panel shows no response. Core's verdict is the reference.
// A negative open-loop gain inverts: dB says only the magnitude, so the Sketch's label says
// the sign in words (found driving the window: -316k read "110 dB" beside an UNSTABLE banner).
TEST(GainBlockLabel, NegativeGainSaysInverting)
{
    loopsketch::Part block;
    block.id = "U1";
    block.type = loopsketch::PartType::GainBlock;
    block.fields["gain"] = loopsketch::Value{316e3, "316k"};
    EXPECT_EQ(PartItem::valueText(block).toStdString(), "110 dB");
    block.fields["gain"] = loopsketch::Value{-316e3, "-316k"};
    EXPECT_EQ(PartItem::valueText(block).toStdString(), "110 dB, inverting");
}

TEST(UnstableDesign, WindowSaysUnstableAndListsThePoles)
{
    MainWindow window;
    loopsketch::ui::test::showTestWindow(window);
    QString error;
    ASSERT_TRUE(window.openFile(
        QStringLiteral(LOOPSKETCH_TEST_DATA_DIR "/stability/unstable-preamp.loopsketch"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    const Analysis *a = window.document()->analysis();
    ASSERT_NE(a, nullptr);
    ASSERT_FALSE(a->stable);
    EXPECT_EQ(a->rhpPoles, 2);
    Readout *readout = window.readout();
    EXPECT_THAT(readout->bannerText().toStdString(), HasSubstr("UNSTABLE"));
    EXPECT_THAT(readout->bannerText().toStdString(), HasSubstr("2 RHP poles"));
    EXPECT_THAT(readout->bannerText().toStdString(),
                HasSubstr(unstablePolesText(*a, 1).toStdString()));
    EXPECT_THAT(readout->cellText(QStringLiteral("specs")).toStdString(), HasSubstr("unstable"));
    EXPECT_THAT(readout->cellText(QStringLiteral("bandwidth −3 dB")).toStdString(),
                HasSubstr("unstable"));
    EXPECT_THAT(readout->cellText(QStringLiteral("peaking")).toStdString(), HasSubstr("unstable"));
    const QString text = readout->plainText();
    EXPECT_FALSE(text.contains(QStringLiteral("nan"), Qt::CaseInsensitive)) << text.toStdString();
    bool polesSeen = false, stepSeen = false;
    for (PlotPanel *panel : window.panels()) {
        if (auto *poles = dynamic_cast<PolesPanel *>(panel)) {
            polesSeen = true;
            EXPECT_THAT(poles->summary().toStdString(), HasSubstr("UNSTABLE"));
            EXPECT_THAT(poles->summary().toStdString(), HasSubstr("right half-plane"));
        }
        if (auto *step = dynamic_cast<StepPanel *>(panel)) {
            stepSeen = true;
            EXPECT_THAT(step->summary().toStdString(), HasSubstr("UNSTABLE"));
        }
    }
    EXPECT_TRUE(polesSeen);
    EXPECT_TRUE(stepSeen);
    // A stable design clears the banner.
    ASSERT_TRUE(window.openFile(QString::fromStdString(kDesigns + "/contact-mic-preamp.loopsketch"),
                                &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    QTest::qWait(50);
    EXPECT_TRUE(window.readout()->bannerText().isEmpty());
    ASSERT_TRUE(window.openFile(
        QStringLiteral(LOOPSKETCH_TEST_DATA_DIR "/stability/unstable-preamp.loopsketch"), &error));
    ASSERT_TRUE(window.document()->waitForAnalysis());
    QTest::qWait(200);
    EXPECT_TRUE(
        window.grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-unstable.png"));
}

// On a 1280-pixel screen the UNSTABLE badge and the longer "— (unstable)" readings do not fit
// in one line: the Readout takes a second line instead of widening the window past the screen
// (found driving the window under Xvfb: the plots were pushed off to the right). (Heights are
// not checked here: the offscreen platform lets docks grow a window past its screen, which
// resetLayout() gives back only on a real screen.)
TEST(UnstableDesign, ReadoutWrapsInsteadOfWideningTheWindow)
{
    QSettings().clear(); // the default arrangement for this size, not one an earlier test saved
    MainWindow window;
    window.setAskBeforeDiscarding(false);
    window.resize(1264, 752);
    window.show();
    QString error;
    ASSERT_TRUE(window.openFile(QString::fromStdString(kDesigns + "/demo.loopsketch"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    QTest::qWait(100);
    const int oneLine = window.readout()->height();
    ASSERT_TRUE(window.openFile(
        QStringLiteral(LOOPSKETCH_TEST_DATA_DIR "/stability/unstable-preamp.loopsketch"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    ASSERT_FALSE(window.readout()->bannerText().isEmpty());
    // The main window lays the dock out again on its next turn of the event loop; waited for
    // (up to 5 s on a loaded machine), not assumed.
    const auto everyReadingFits = [&] {
        for (QLabel *label : window.readout()->findChildren<QLabel *>())
            if (label->isVisible() && label->width() < label->sizeHint().width())
                return false;
        return true;
    };
    for (int i = 0;
         i < 250 && (window.readout()->height() <= oneLine + oneLine / 2 || !everyReadingFits());
         ++i)
        QTest::qWait(20);
    EXPECT_LE(window.minimumSizeHint().width(), 1264);
    EXPECT_LE(window.width(), 1264);
    EXPECT_GT(window.readout()->height(), oneLine + oneLine / 2) << "a second line of readings";
    // Every reading still shows in full inside the window.
    for (QLabel *label : window.readout()->findChildren<QLabel *>()) {
        if (!label->isVisible() || label->text().isEmpty())
            continue;
        const QRect inWindow(label->mapTo(&window, QPoint(0, 0)), label->size());
        EXPECT_TRUE(window.rect().contains(inWindow)) << label->text().toStdString();
        EXPECT_GE(label->width(), label->sizeHint().width()) << label->text().toStdString();
    }
}

INSTANTIATE_TEST_SUITE_P(Examples, ExampleDesign,
                         ::testing::Values("contact-mic-preamp", "excitation-current-driver",
                                           "gas-cell-current-amplifier",
                                           "turbidity-probe-front-end"));

} // namespace

// A value no real part has (RF = 1e-300 ohm, a short) analyses, and the warning naming the
// part and field reaches the status line and the Readout; the demo itself shows none.
TEST_F(MainWindowTest, WarningReachesTheStatusLineAndTheReadout)
{
    EXPECT_TRUE(window->readout()->warningText().isEmpty());
    EXPECT_THAT(window->statusText().toStdString(), ::testing::Not(HasSubstr("Warning")));
    Design d = doc()->design();
    d.findPart("RF")->fields["value"] = Value{1e-300, {}};
    doc()->reset(d, QString());
    EXPECT_TRUE(doc()->waitForAnalysis());
    QApplication::processEvents();
    EXPECT_THAT(window->statusText().toStdString(), HasSubstr("Warning: part RF, field value"));
    EXPECT_THAT(window->readout()->warningText().toStdString(), HasSubstr("part RF, field value"));
    QTest::qWait(300);
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-warning.png");
}
