// A design session from a blank page: File > New, parts dropped from the palette, pins wired
// by dragging, values typed into the Inspector and the design's properties; the integrity of
// everything that names a part across deletions and renames (files that always reopen); and
// views that never show the last good numbers once the design cannot be analysed.

#include "blankdesigntest.h"
#include "windowchecks.h"

#include "panels/candidatespanel.h"
#include "panels/panels.h"
#include "panels/plotpanel.h"
#include "panels/readout.h"
#include "sketch/designpropertiespanel.h"
#include "sketch/groundsymbolitem.h"
#include "sketch/inspector.h"
#include "sketch/partitem.h"
#include "sketch/partspalette.h"
#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"
#include "window/partclipboard.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/candidate.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/design/designvalidation.h"

#include <QAction>
#include <QApplication>
#include <QComboBox>
#include <QDir>
#include <QDropEvent>
#include <QLineEdit>
#include <QListWidget>
#include <QMenu>
#include <QMimeData>
#include <QSignalSpy>
#include <QTemporaryDir>
#include <QTest>
#include <QXYSeries>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <memory>
#include <random>

using ::testing::HasSubstr;

// Inside the fixture's namespace: BlankDesignTest, kDesigns, and core's and the window's
// names without qualification.
namespace loopsketch::ui::test {
namespace {

// ---- From a blank page ----

TEST_F(BlankDesignTest, FromBlankNonInvertingGainOfElevenMatchesCore)
{
    auto *newAction = window->findChild<QAction *>(QStringLiteral("NewDesignAction"));
    ASSERT_NE(newAction, nullptr);
    EXPECT_EQ(newAction->shortcut(), QKeySequence(QKeySequence::New));
    newAction->trigger();
    settle();
    EXPECT_TRUE(doc()->design().parts.empty());
    EXPECT_TRUE(doc()->design().candidates.empty());
    EXPECT_TRUE(doc()->design().title.empty());
    ASSERT_EQ(doc()->layout().grounds.size(), 1u);
    EXPECT_FALSE(scene()->hintText().isEmpty());
    expectNotAnalysed();

    // Parts dropped from the palette land where they are dropped (on the grid).
    const QSize size = view()->viewport()->size();
    auto at = [&](double fx, double fy) {
        return QPoint(int(size.width() * fx), int(size.height() * fy));
    };
    struct Drop
    {
        QString label;
        QPoint where;
        std::string id;
    };
    const Drop drops[] = {
        {QStringLiteral("signal source (voltage)"), at(0.18, 0.55), "VS1"},
        {QStringLiteral("gain block"), at(0.45, 0.45), "U1"},
        {QStringLiteral("resistor"), at(0.40, 0.75), "R1"},
        {QStringLiteral("resistor"), at(0.50, 0.20), "R2"},
        {QStringLiteral("load"), at(0.78, 0.60), "RL1"},
    };
    for (const Drop &d : drops) {
        dropSymbol(d.label, d.where);
        PartItem *item = scene()->partItem(d.id);
        ASSERT_NE(item, nullptr) << d.id;
        const QPointF want = view()->mapToScene(d.where);
        EXPECT_NEAR(item->pos().x(), snapToGrid(want.x()), 1e-9) << d.id;
        EXPECT_NEAR(item->pos().y(), snapToGrid(want.y()), 1e-9) << d.id;
    }
    EXPECT_TRUE(scene()->hintText().isEmpty());
    EXPECT_EQ(doc()->design().input, "VS1"); // the only source, chosen automatically
    EXPECT_NEAR(doc()->design().findPart("U1")->number("gbw"), 10e6, 1.0);

    // Wiring, pin to pin by dragging; grounds by dragging a pin onto the ground symbol.
    wire("VS1", "pos", "U1", "in_p");
    wire("U1", "out", "R2", "b");
    wire("R2", "a", "U1", "in_n");
    wire("R1", "b", "U1", "in_n");
    wire("RL1", "a", "U1", "out");
    wireToGround("VS1", "neg");
    wireToGround("R1", "a");
    wireToGround("RL1", "b");

    // Values through the Inspector.
    scene()->selectPart("R2");
    QApplication::processEvents();
    ASSERT_EQ(window->inspector()->partId(), "R2");
    type(window->inspector()->fieldEdit("value"), QStringLiteral("10k"));
    scene()->selectPart("R1");
    QApplication::processEvents();
    type(window->inspector()->fieldEdit("value"), QStringLiteral("1k"));
    scene()->selectPart("RL1");
    QApplication::processEvents();
    type(window->inspector()->fieldEdit("r"), QStringLiteral("2k"));
    EXPECT_NEAR(doc()->design().findPart("R2")->number("value"), 10e3, 1e-9);
    EXPECT_NEAR(doc()->design().findPart("RL1")->number("r"), 2e3, 1e-9);

    // Design properties: title and specs.
    DesignPropertiesPanel *props = window->designProperties();
    type(props->edit("title"), QStringLiteral("Bench preamp, gain 11"));
    type(props->edit("gain_min"), QStringLiteral("10.9"));
    type(props->edit("gain_max"), QStringLiteral("11.1"));
    type(props->edit("bandwidth_min"), QStringLiteral("500k"));
    type(props->edit("phase_margin_min_deg"), QStringLiteral("60"));
    type(props->edit("noise_band_low"), QStringLiteral("10"));
    EXPECT_THAT(props->error("noise_band_low").toStdString(), HasSubstr("both ends"));
    type(props->edit("noise_band_high"), QStringLiteral("100k"));
    EXPECT_TRUE(props->error("noise_band_low").isEmpty());
    ASSERT_TRUE(doc()->design().noiseBand.has_value());
    EXPECT_NEAR(doc()->design().noiseBand->low.si, 10.0, 1e-12);
    EXPECT_NEAR(doc()->design().noiseBand->high.si, 1e5, 1e-6);
    type(props->edit("sweep_stop"), QStringLiteral("12kk"));
    EXPECT_THAT(props->error("sweep_stop").toStdString(), HasSubstr("12kk"));
    EXPECT_NEAR(doc()->design().sweep.stop.si, 1e9, 1.0);
    type(props->edit("sweep_stop"), QStringLiteral("1G"));
    EXPECT_EQ(doc()->design().title, "Bench preamp, gain 11");
    ASSERT_TRUE(doc()->design().specs.gainMin.has_value());
    EXPECT_NEAR(doc()->design().specs.gainMin->si, 10.9, 1e-12);
    EXPECT_EQ(props->inputChooser()->currentText(), QStringLiteral("VS1"));

    settle();
    ASSERT_NE(doc()->analysis(), nullptr) << doc()->lastDiagnostics().toStdString();
    auto expected = analyze(doc()->design());
    ASSERT_TRUE(expected.ok()) << expected.errorText();
    const Analysis &a = *expected;

    // Outside check: an ideal non-inverting stage has gain 1 + R2/R1 = 11; with an
    // open-loop gain of 1e5 the loop gain is 1e5/11, so the gain is 11/(1 + 11e-5) = 10.9988
    // (common practice: G = (1 + R2/R1) / (1 + 1/T)).
    ASSERT_TRUE(a.exact.gain.has_value());
    EXPECT_NEAR(*a.exact.gain, 11.0 / (1.0 + 11.0 / 1e5), 2e-3);
    // A one-pole gain block of gain-bandwidth 10 MHz in a loop with beta = 1/11 crosses
    // over near GBW * beta = 909 kHz (common practice; within 3 %).
    ASSERT_TRUE(a.margins.crossoverHz.has_value());
    EXPECT_NEAR(*a.margins.crossoverHz, 10e6 / 11.0, 0.03 * 10e6 / 11.0);

    ASSERT_NO_FATAL_FAILURE(loopsketch::ui::test::expectWindowShows(*window, a));
    for (PlotPanel *panel : window->panels()) {
        loopsketch::ui::test::bringForward(panel);
        EXPECT_TRUE(panel->unavailableText().isEmpty());
    }

    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/from-blank.png"));

    // The whole session undoes back to the blank page.
    while (doc()->undoStack()->canUndo())
        doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), DesignDocument::blankDesign());
}

TEST_F(BlankDesignTest, FromBlankDoubleClickPlacesAtTheCentreAndGroundIsPlaceable)
{
    window->newDesign();
    settle();
    const QPointF centre = view()->mapToScene(view()->viewport()->rect().center());
    emit window->partsPalette()->placeRequested(int(PartType::Resistor));
    PartItem *r1 = scene()->partItem("R1");
    ASSERT_NE(r1, nullptr);
    // Within one grid step of the centre, or beside the ground symbol if that sits there.
    EXPECT_LT(QLineF(r1->pos(), centre).length(), 120.0);
    EXPECT_TRUE(view()->viewport()->rect().contains(view()->mapFromScene(r1->pos())));

    dropSymbol(QStringLiteral("ground"), view()->viewport()->rect().center() + QPoint(0, 150));
    ASSERT_EQ(doc()->layout().grounds.size(), 2u);
    doc()->undoStack()->undo();
    EXPECT_EQ(doc()->layout().grounds.size(), 1u);
}

// ---- Integrity: what names a part follows it; files always reopen ----

TEST_F(BlankDesignTest, ReopenAfterDeletingAPartNamedByACandidate)
{
    openExample(QStringLiteral("demo.loopsketch"));
    const Design before = doc()->design();
    // The demo's candidates name CF; find one that names only CF, if any, and one more.
    int naming = 0;
    for (const Candidate &c : before.candidates)
        naming += c.values.count("CF") != 0;
    ASSERT_GT(naming, 0) << "the demo has no candidate naming CF";
    QSignalSpy notices(doc(), &DesignDocument::noticeIssued);

    scene()->selectPart("CF");
    QTest::keyClick(view(), Qt::Key_Delete);
    ASSERT_EQ(doc()->design().findPart("CF"), nullptr);
    for (const Candidate &c : doc()->design().candidates) {
        EXPECT_EQ(c.values.count("CF"), 0u) << c.name;
        EXPECT_FALSE(c.values.empty()) << c.name;
    }
    EXPECT_EQ(notices.count(), 1);

    QTemporaryDir dir;
    ASSERT_NE(saveAndReopen(*window, dir.filePath(QStringLiteral("no-cf.loopsketch"))), nullptr);

    // One undo step brings the part and every candidate entry back.
    doc()->undoStack()->undo();
    EXPECT_EQ(doc()->design(), before);
}

TEST_F(BlankDesignTest, ReopenAfterRenamingAndDeletingTheSource)
{
    openExample(QStringLiteral("demo.loopsketch"));
    const std::string source = doc()->design().input;
    ASSERT_FALSE(source.empty());
    QString error;
    ASSERT_TRUE(doc()->renamePart(source, "SRC9", &error)) << error.toStdString();
    EXPECT_EQ(doc()->design().input, "SRC9");
    EXPECT_FALSE(doc()->renamePart("SRC9", "bad id!", &error));
    EXPECT_THAT(error.toStdString(), HasSubstr("bad id!"));
    doc()->removeParts({"SRC9"});
    EXPECT_TRUE(doc()->design().input.empty());
    QTemporaryDir dir;
    const QString path = dir.filePath(QStringLiteral("no-source.loopsketch"));
    // A design without a source is a draft: it saves and opens again, and the command
    // line's strict loader says what is missing.
    ASSERT_NE(saveAndReopen(*window, path, DesignRules::Draft), nullptr);
    auto strict = loadDesign(path.toStdString());
    ASSERT_FALSE(strict.ok());
    EXPECT_THAT(strict.errorText(), HasSubstr("no signal source"));
}

/// The random choices of randomEdit(): one index below n, a pin, a selection of parts.
struct RandomPicks
{
    const Design &d;
    std::mt19937 &rng;

    std::size_t pick(std::size_t n)
    {
        return std::uniform_int_distribution<std::size_t>(0, n - 1)(rng);
    }
    bool pin(std::string *part, std::string *terminal)
    {
        if (d.parts.empty())
            return false;
        const Part &p = d.parts[pick(d.parts.size())];
        const auto &terminals = partSpec(p.type).terminals;
        *part = p.id;
        *terminal = std::string(terminals[pick(terminals.size())]);
        return true;
    }
    std::vector<std::string> parts()
    {
        std::vector<std::string> ids;
        for (const Part &p : d.parts) {
            if (pick(3) == 0)
                ids.push_back(p.id);
        }
        return ids;
    }
};

/// Edits 0 to 10 of randomEdit(): parts, names, candidates, properties, grounds, mirroring.
void randomPartEdit(DesignDocument *doc, RandomPicks &r, std::size_t kind)
{
    const Design &d = r.d;
    QString error;
    switch (kind) {
    case 0: {
        const auto specs = allPartSpecs();
        doc->addPart(specs[r.pick(specs.size())].type, double(r.pick(600)) - 300,
                     double(r.pick(400)) - 200);
        break;
    }
    case 1: {
        std::string pa, ta, pb, tb;
        if (r.pin(&pa, &ta) && r.pin(&pb, &tb))
            doc->connectPins(pa, ta, pb, tb);
        break;
    }
    case 2:
        if (!d.parts.empty())
            doc->removeParts({d.parts[r.pick(d.parts.size())].id});
        break;
    case 3:
        if (!d.parts.empty())
            doc->renamePart(d.parts[r.pick(d.parts.size())].id, "X" + std::to_string(r.pick(50)),
                            &error);
        break;
    case 4:
        if (!d.parts.empty())
            doc->rotatePart(d.parts[r.pick(d.parts.size())].id);
        break;
    case 5:
        doc->pinCandidate(doc->nextCandidateName(), &error);
        break;
    case 6: {
        Design after = d;
        after.title = "edit " + std::to_string(r.pick(1000));
        after.output = r.pick(2) ? OutputKind::Current : OutputKind::Voltage;
        after.sweep.pointsPerDecade = int(10 + r.pick(90));
        doc->setProperties(after, QStringLiteral("properties"));
        break;
    }
    case 7: {
        std::string p, t;
        if (r.pin(&p, &t))
            doc->groundPin(p, t);
        break;
    }
    case 8:
        doc->addGround(double(r.pick(400)) - 200, double(r.pick(400)));
        break;
    case 9:
        if (!d.candidates.empty())
            doc->deleteCandidate(toQString(d.candidates[r.pick(d.candidates.size())].name));
        break;
    case 10: // mirror
        if (!d.parts.empty())
            doc->mirrorPart(d.parts[r.pick(d.parts.size())].id);
        break;
    default:
        break;
    }
}

/// Edits 11 and up of randomEdit(): wires, pins, the clipboard, typed fields, stepping.
void randomWiringEdit(DesignDocument *doc, RandomPicks &r, std::size_t kind)
{
    const Design &d = r.d;
    QString error;
    switch (kind) {
    case 11: { // unwire: delete one of the Sketch's wires
        const SketchWiring wiring = routeWires(d, doc->layout());
        if (!wiring.edges.empty()) {
            const RoutedWire &w = wiring.edges[r.pick(wiring.edges.size())];
            doc->removeWires({{w.from, w.to}});
        }
        break;
    }
    case 12: { // a wire's end dragged to another pin, or to ground
        const SketchWiring wiring = routeWires(d, doc->layout());
        std::string p, t;
        if (!wiring.edges.empty() && r.pin(&p, &t)) {
            const RoutedWire &w = wiring.edges[r.pick(wiring.edges.size())];
            doc->reattachWire(w.from, w.to, r.pick(4) == 0 ? PinRef{} : PinRef{p, t});
        }
        break;
    }
    case 13: { // a pin disconnected, or moved to another pin
        std::string p, t, q, u;
        if (r.pin(&p, &t)) {
            if (r.pick(2) && r.pin(&q, &u))
                doc->movePin({p, t}, {q, u});
            else
                doc->disconnectPin(p, t);
        }
        break;
    }
    case 14: // copy and paste (a duplicate)
        doc->pasteParts(copyParts(d, doc->layout(), r.parts()), QStringLiteral("paste"));
        break;
    case 15: // cut
        doc->removeParts(r.parts());
        break;
    case 16: { // a field typed into the Inspector, valid or not
        if (!d.parts.empty()) {
            const Part &p = d.parts[r.pick(d.parts.size())];
            const auto &fields = partSpec(p.type).fields;
            const char *texts[] = {"4k7", "2.2p", "1e3", "", "-5", "12kk", "100dB", "10M"};
            doc->setFieldText(p.id, std::string(fields[r.pick(fields.size())].name),
                              QString::fromLatin1(texts[r.pick(std::size(texts))]), &error);
        }
        break;
    }
    default:
        if (!d.parts.empty()) {
            const Part &p = d.parts[r.pick(d.parts.size())];
            if (!p.primaryField().empty())
                doc->stepPart(p.id, int(r.pick(5)) - 2, false);
        }
        break;
    }
}

/// One random edit of the kinds a user makes; the document decides what is allowed.
void randomEdit(DesignDocument *doc, std::mt19937 &rng)
{
    RandomPicks r{doc->design(), rng};
    const std::size_t kind = r.pick(18);
    if (kind <= 10)
        randomPartEdit(doc, r, kind);
    else
        randomWiringEdit(doc, r, kind);
}

TEST_F(BlankDesignTest, ReopenAfterRandomEditSequencesOnEveryExampleAndABlankDesign)
{
    QStringList starts = QDir(kDesigns).entryList({QStringLiteral("*.loopsketch")});
    ASSERT_GE(starts.size(), 3);
    starts << QString(); // the blank design
    QTemporaryDir dir;
    int saved = 0, complete = 0;
    for (const QString &start : starts) {
        for (unsigned seed = 1; seed <= 8; ++seed) {
            if (start.isEmpty())
                window->newDesign();
            else
                openExample(start);
            const Design original = doc()->design();
            std::mt19937 rng(seed * 7919u + unsigned(start.size()));
            // Short sequences (which often leave a complete circuit) and long ones.
            constexpr int kLengths[] = {1, 2, 3, 5, 8, 12, 18, 26};
            for (int step = 0; step < kLengths[seed - 1]; ++step)
                randomEdit(doc(), rng);
            const QString path = dir.filePath(QStringLiteral("edited.loopsketch"));
            QString error;
            const std::string where = (start.isEmpty() ? std::string("blank") : start.toStdString())
                + " seed " + std::to_string(seed);
            ASSERT_TRUE(window->saveTo(path, &error)) << where << ": " << error.toStdString();
            auto reloaded = loadDesign(path.toStdString(), DesignRules::Draft);
            ASSERT_TRUE(reloaded.ok()) << where << ": " << reloaded.errorText();
            EXPECT_EQ(*reloaded, doc()->design()) << where;
            // A design complete enough to analyse loads under the strict rules as well.
            if (validateDesign(doc()->design()).empty()) {
                auto strict = loadDesign(path.toStdString());
                EXPECT_TRUE(strict.ok()) << where << ": " << strict.errorText();
                ++complete;
            }
            ++saved;
            while (doc()->undoStack()->canUndo())
                doc()->undoStack()->undo();
            EXPECT_EQ(doc()->design(), original) << where;
        }
    }
    EXPECT_EQ(saved, 8 * int(starts.size()));
    EXPECT_GT(complete, 0) << "no edited design was complete: the strict loader went untested";
    std::cout << "[          ] " << saved << " edited designs saved and reopened, " << complete
              << " of them complete\n";
}

// ---- Never stale ----

TEST_F(BlankDesignTest, StaleNeverAfterDeletingTheSource)
{
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    ASSERT_NE(doc()->analysis(), nullptr);
    doc()->removeParts({doc()->design().input});
    settle();
    expectNotAnalysed();
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/stale-no-source.png"));
    doc()->undoStack()->undo();
    settle();
    ASSERT_NE(doc()->analysis(), nullptr);
    for (PlotPanel *panel : window->panels()) {
        loopsketch::ui::test::bringForward(panel);
        EXPECT_TRUE(panel->unavailableText().isEmpty());
    }
    EXPECT_NE(window->readout()->cellText("closed-loop gain, exact"), QStringLiteral("—"));
}

TEST_F(BlankDesignTest, StaleNeverAfterDeletingAllParts)
{
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    std::vector<std::string> ids;
    for (const Part &p : doc()->design().parts)
        ids.push_back(p.id);
    doc()->removeParts(ids);
    settle();
    expectNotAnalysed();
    EXPECT_FALSE(scene()->hintText().isEmpty());
}

TEST_F(BlankDesignTest, StaleNeverWithAFloatingNode)
{
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    // Two new parts joined only to each other: an island with no path to ground.
    const std::string r = doc()->addPart(PartType::Resistor, 300, 300);
    const std::string c = doc()->addPart(PartType::Capacitor, 420, 300);
    ASSERT_TRUE(doc()->connectPins(r, "b", c, "a"));
    ASSERT_TRUE(doc()->connectPins(r, "a", c, "b"));
    settle();
    expectNotAnalysed();
    EXPECT_FALSE(scene()->problemPart().empty());
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/stale-floating.png"));
}

TEST_F(BlankDesignTest, StaleAxisUnitsNeverSurviveFileNew)
{
    // The demo is a transimpedance stage: its Step axis reads in V/A. A blank design has no
    // gain unit, so after File > New every axis must read as in a window that never held a
    // design.
    MainWindow fresh;
    fresh.setAskBeforeDiscarding(false);
    fresh.resize(1500, 940);
    fresh.show();
    fresh.newDesign();
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    ASSERT_NE(doc()->analysis(), nullptr);
    window->newDesign();
    settle();
    QApplication::processEvents();
    // The reason over the plots tells a user of a blank page how to begin.
    EXPECT_EQ(window->panels().front()->unavailableText().toStdString(),
              "Not analysed: no parts yet: place a signal source, a gain block, a load and a "
              "ground to start");
    ASSERT_EQ(window->panels().size(), fresh.panels().size());
    for (std::size_t i = 0; i < window->panels().size(); ++i) {
        const QList<QAbstractAxis *> used = window->panels()[i]->chart()->axes();
        const QList<QAbstractAxis *> blank = fresh.panels()[i]->chart()->axes();
        ASSERT_EQ(used.size(), blank.size());
        for (qsizetype k = 0; k < used.size(); ++k) {
            EXPECT_EQ(used[k]->titleText(), blank[k]->titleText())
                << window->panels()[i]->chart()->title().toStdString();
            EXPECT_FALSE(used[k]->titleText().contains(QStringLiteral("V/A")))
                << used[k]->titleText().toStdString();
        }
    }
}

TEST_F(BlankDesignTest, StaleCandidateOverlaysNeverOutliveAPasteThatBreaksTheDesign)
{
    // With the candidates overlaid on every plot, pasting a copy of the whole demo (a second
    // source, gain block and load) leaves a design that cannot be analysed: no curve of the
    // design or of its candidates may stay, not even once the candidates have been redone.
    openExample(QStringLiteral("demo.loopsketch"));
    settle();
    QAction *overlayAll = nullptr;
    for (QAction *a : window->designMenu()->actions())
        if (a->text() == QStringLiteral("Overlay candidates on every plot"))
            overlayAll = a;
    ASSERT_NE(overlayAll, nullptr);
    overlayAll->trigger();
    CandidatesPanel *candidates = window->candidatesPanel();
    ASSERT_TRUE(QTest::qWaitFor(
        [&] {
            for (PlotPanel *p : window->panels())
                if (p->hasOverlays() && p->overlaySeriesNames().isEmpty())
                    return false;
            return candidates->isUpToDate();
        },
        15000));
    window->findChild<QAction *>(QStringLiteral("SelectAllAction"))->trigger();
    window->findChild<QAction *>(QStringLiteral("CopyAction"))->trigger();
    window->findChild<QAction *>(QStringLiteral("PasteAction"))->trigger();
    settle();
    expectNotAnalysed();
    // The candidate columns are worked out again for the broken design; then too nothing
    // may be drawn.
    ASSERT_TRUE(QTest::qWaitFor(
        [&] {
            QApplication::processEvents();
            return candidates->isUpToDate();
        },
        15000));
    QApplication::processEvents();
    expectNotAnalysed();
    // Nor the gain sensitivities of the parts in the Desensitivity panel's tooltip.
    for (PlotPanel *p : window->panels())
        EXPECT_FALSE(p->toolTip().contains(QStringLiteral("RF"))) << p->toolTip().toStdString();
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/stale-paste.png"));
}

} // namespace
} // namespace loopsketch::ui::test
