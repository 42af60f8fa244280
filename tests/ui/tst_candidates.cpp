// Candidates in the desktop application: pin, rename, delete and make current through the
// document's undo stack, the side-by-side table against core's own analyze() and worstCase()
// of each candidate, the best-value marks, and the candidates' round trip through the design
// file. Their overlays on the plots: tst_candidateoverlays.cpp.
//
// Reference for every number: core's analyze() / worstCase() on the demo design with the
// candidate's values written into the parts' primary fields (the rule of
// `loopsketch analyze --candidate`, applied here independently of the ui's helper).

#include "candidatestest.h"
#include "panels/candidatespanel.h"
#include "panels/panels.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "designs.h"
#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/report/noisenames.h"

#include <QAction>
#include <QApplication>
#include <QDockWidget>
#include <QInputDialog>
#include <QTableWidget>
#include <QTemporaryDir>
#include <QTest>
#include <QTimer>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

using loopsketch::test::analyzeOrFail;
using loopsketch::test::withCandidateByHand;

namespace {

const std::string kDesigns = LOOPSKETCH_DESIGNS_DIR;

TEST_F(CandidatesTest, PinStoresEveryPartValueAndUndoRedoRestoreTheText)
{
    EXPECT_EQ(doc()->nextCandidateName(), QStringLiteral("Candidate 1"));
    const std::string before = text();
    QString error;
    ASSERT_TRUE(doc()->pinCandidate(QStringLiteral("  Candidate 1 "), &error))
        << error.toStdString();
    const std::string after = text();
    const Candidate &c = candidateNamed(doc()->design(), "Candidate 1");
    // RF and CF are the demo's resistors and capacitors; the load RL is not pinned.
    ASSERT_EQ(c.values.size(), 2u);
    EXPECT_EQ(c.values.at("RF").text, "1M");
    EXPECT_EQ(c.values.at("CF").text, "2.2p");
    EXPECT_EQ(c.values.count("RL"), 0u);
    EXPECT_EQ(doc()->nextCandidateName(), QStringLiteral("Candidate 2"));
    expectUndoRedo(before, after);
    EXPECT_TRUE(window->isWindowModified());
}

TEST_F(CandidatesTest, NamesMustBeUniqueAndNotEmpty)
{
    const std::string before = text();
    const int commands = doc()->undoStack()->count();
    QString error;
    EXPECT_FALSE(doc()->pinCandidate(QStringLiteral("   "), &error));
    EXPECT_THAT(error.toStdString(), HasSubstr("not empty"));
    EXPECT_FALSE(doc()->pinCandidate(QStringLiteral("Fast"), &error));
    EXPECT_THAT(error.toStdString(), HasSubstr("\"Fast\" exists already"));
    EXPECT_FALSE(
        doc()->renameCandidate(QStringLiteral("Fast"), QStringLiteral("High gain"), &error));
    EXPECT_THAT(error.toStdString(), HasSubstr("\"High gain\" exists already"));
    EXPECT_FALSE(doc()->renameCandidate(QStringLiteral("Turbo"), QStringLiteral("X"), &error));
    EXPECT_THAT(error.toStdString(), HasSubstr("no candidate named \"Turbo\""));
    EXPECT_EQ(text(), before);
    EXPECT_EQ(doc()->undoStack()->count(), commands);
}

/// Answers the next name dialogs in turn: each entry is typed into the dialog's line edit
/// and accepted; the label text each dialog showed is kept.
class DialogAnswers : public QObject
{
public:
    explicit DialogAnswers(QStringList answers) : m_answers(std::move(answers))
    {
        m_timer.setInterval(20);
        connect(&m_timer, &QTimer::timeout, this, &DialogAnswers::poll);
        m_timer.start();
    }
    QStringList labels;
    QStringList defaults;

private:
    void poll()
    {
        auto *dialog = qobject_cast<QInputDialog *>(QApplication::activeModalWidget());
        if (!dialog || m_answers.isEmpty())
            return;
        labels << dialog->labelText();
        defaults << dialog->textValue();
        dialog->setTextValue(m_answers.takeFirst());
        dialog->accept();
    }
    QStringList m_answers;
    QTimer m_timer;
};

TEST_F(CandidatesTest, PinDialogOffersADefaultAndAsksAgainWithTheReason)
{
    DialogAnswers answers({"Fast", "", "Wide"});
    panel()->pinAction()->trigger(); // returns once a name was accepted
    ASSERT_EQ(answers.labels.size(), 3);
    EXPECT_EQ(answers.defaults[0], QStringLiteral("Candidate 1"));
    EXPECT_THAT(answers.labels[1].toStdString(), HasSubstr("\"Fast\" exists already"));
    EXPECT_THAT(answers.labels[2].toStdString(), HasSubstr("not empty"));
    EXPECT_EQ(doc()->design().candidates.size(), 3u);
    EXPECT_EQ(doc()->design().candidates.back().name, "Wide");
    EXPECT_EQ(panel()->selectedCandidate(), QStringLiteral("Wide"));
    // Pinning brings the Candidates dock forward.
    EXPECT_TRUE(panel()->isVisible());
}

TEST_F(CandidatesTest, KeyboardRenamesDeletesAndMakesCurrent)
{
    window->showCandidates();
    window->activateWindow();
    ASSERT_TRUE(QTest::qWaitForWindowActive(window.get()));
    QTableWidget *table = panel()->table();
    table->setFocus();
    ASSERT_TRUE(panel()->selectCandidate(QStringLiteral("Fast")));
    {
        DialogAnswers answers({"Quick"});
        QTest::keyClick(table, Qt::Key_F2);
        ASSERT_EQ(answers.defaults.size(), 1);
        EXPECT_EQ(answers.defaults[0], QStringLiteral("Fast"));
    }
    EXPECT_EQ(panel()->selectedCandidate(), QStringLiteral("Quick"));
    // Focus goes back to the table once the dialog has closed.
    window->activateWindow();
    ASSERT_TRUE(QTest::qWaitForWindowActive(window.get()));
    table->setFocus();
    QTest::keyClick(table, Qt::Key_Return, Qt::ControlModifier);
    EXPECT_EQ(doc()->design().findPart("CF")->fields.at("value").text, "1p");
    QTest::keyClick(table, Qt::Key_Delete);
    ASSERT_EQ(doc()->design().candidates.size(), 1u);
    EXPECT_EQ(doc()->design().candidates[0].name, "High gain");
    // The arrow keys move the selection between columns; the current design has no actions.
    ASSERT_TRUE(panel()->selectCandidate(QStringLiteral("High gain")));
    QTest::keyClick(table, Qt::Key_Left);
    EXPECT_TRUE(panel()->selectedCandidate().isEmpty());
    EXPECT_FALSE(panel()->deleteAction()->isEnabled());
}

TEST_F(CandidatesTest, RenameDeleteAndMakeCurrentAreUndoable)
{
    std::string before = text();
    QString error;
    ASSERT_TRUE(doc()->renameCandidate(QStringLiteral("Fast"), QStringLiteral("Quick"), &error));
    EXPECT_EQ(candidateNamed(doc()->design(), "Quick").values.at("CF").text, "1p");
    expectUndoRedo(before, text());
    settle();
    EXPECT_EQ(panel()->columnNames(),
              QStringList({CandidatesPanel::kCurrentColumn, "Quick", "High gain"}));

    // Delete from the panel: select the column, trigger the action (Delete key).
    before = text();
    ASSERT_TRUE(panel()->selectCandidate(QStringLiteral("High gain")));
    EXPECT_TRUE(panel()->deleteAction()->isEnabled());
    panel()->deleteAction()->trigger();
    EXPECT_EQ(doc()->design().candidates.size(), 1u);
    expectUndoRedo(before, text());

    // Make current from the panel: CF takes the candidate's 1p; the Readout follows.
    before = text();
    ASSERT_TRUE(panel()->selectCandidate(QStringLiteral("Quick")));
    panel()->makeCurrentAction()->trigger();
    EXPECT_EQ(doc()->design().findPart("CF")->fields.at("value").text, "1p");
    const std::string after = text();
    doc()->undoStack()->undo();
    EXPECT_EQ(text(), before);
    doc()->undoStack()->redo();
    EXPECT_EQ(text(), after);
    // A second time there is nothing to change, and the panel says so.
    panel()->makeCurrentAction()->trigger();
    EXPECT_EQ(text(), after);
    EXPECT_THAT(panel()->statusText().toStdString(), HasSubstr("already has the values"));
}

TEST_F(CandidatesTest, TableShowsCoreAnalysisOfEachCandidate)
{
    const Design design = doc()->design();
    const Analysis current = analyzeOrFail(design);
    const std::string unit = current.gainUnit;
    EXPECT_EQ(panel()->cellText(CandidatesPanel::kGainRow, CandidatesPanel::kCurrentColumn),
              engineering(current.exact.gain, unit, 4));
    for (const Candidate &c : design.candidates) {
        const QString name = toQString(c.name);
        const Analysis a = analyzeOrFail(withCandidateByHand(design, c));
        ASSERT_TRUE(a.exact.gain);
        EXPECT_EQ(panel()->cellText(CandidatesPanel::kGainRow, name),
                  engineering(a.exact.gain, unit, 4))
            << c.name;
        EXPECT_EQ(panel()->cellText(CandidatesPanel::kBandwidthRow, name),
                  engineering(a.bandwidthHz, "Hz"))
            << c.name;
        EXPECT_EQ(panel()->cellText(CandidatesPanel::kZOutRow, name),
                  engineering(a.exact.zOut, "Ω"))
            << c.name;
        // Worst case: core's vertex enumeration over RF 1 % and CF 10 % of this candidate.
        auto worst = worstCase(withCandidateByHand(design, c), SpreadOptions{});
        ASSERT_TRUE(worst.ok()) << worst.errorText();
        EXPECT_THAT(panel()->cellText(CandidatesPanel::kWorstCaseRow, name).toStdString(),
                    HasSubstr(formatEngineering(*worst->gain.min, 4) + " … "
                              + formatEngineering(*worst->gain.max, 4)))
            << c.name;
    }
    // The columns really differ: "High gain" doubles RF, so its gain is not the design's.
    EXPECT_NE(panel()->cellText(CandidatesPanel::kGainRow, "High gain"),
              panel()->cellText(CandidatesPanel::kGainRow, CandidatesPanel::kCurrentColumn));

    // An edit of a part no candidate sets (the load) moves every column once it settles.
    QString error;
    ASSERT_TRUE(doc()->setFieldText("RL", "r", QStringLiteral("1k"), &error));
    settle();
    const Analysis fastAfter = analyzeOrFail(
        withCandidateByHand(doc()->design(), candidateNamed(doc()->design(), "Fast")));
    EXPECT_EQ(panel()->cellText(CandidatesPanel::kZOutRow, "Fast"),
              engineering(fastAfter.exact.zOut, "Ω"));
}

TEST_F(CandidatesTest, ABurstOfEditsLeavesTheTableUntilItSettles)
{
    window->showCandidates();
    QApplication::processEvents();
    ASSERT_TRUE(panel()->isVisible());
    const QTableWidgetItem *cell = panel()->table()->item(
        int(panel()->rowNames().indexOf(CandidatesPanel::kBandwidthRow)), 0);
    ASSERT_NE(cell, nullptr);
    const QString drawn = cell->text();
    const QString before
        = panel()->cellText(CandidatesPanel::kBandwidthRow, CandidatesPanel::kCurrentColumn);
    // Three E12 steps of CF as a wheel burst sends them, back to back: the visible table is
    // not touched by an edit. (No wait between the steps: waiting turns the event loop, and
    // on a loaded machine a wait longer than the panel's settling time is a burst that ended.)
    for (int i = 0; i < 3; ++i) {
        ASSERT_TRUE(doc()->stepPart("CF", 1, false));
        EXPECT_EQ(cell->text(), drawn) << "step " << i;
    }
    EXPECT_TRUE(doc()->waitForAnalysis());
    // Once the edits stop, the table follows: waited for on the panel's own state.
    settle();
    const Analysis now = analyzeOrFail(doc()->design());
    EXPECT_EQ(panel()->cellText(CandidatesPanel::kBandwidthRow, CandidatesPanel::kCurrentColumn),
              engineering(now.bandwidthHz, "Hz"));
    EXPECT_NE(panel()->cellText(CandidatesPanel::kBandwidthRow, CandidatesPanel::kCurrentColumn),
              before);
}

TEST_F(CandidatesTest, BestMarksTheRightCell)
{
    const Design design = doc()->design();
    const QStringList columns = panel()->columnNames();
    const std::vector<Analysis> analyses = columnAnalyses(design);
    ASSERT_EQ(std::size_t(columns.size()), analyses.size());
    const double centre = 0.5 * (design.specs.gainMin->si + design.specs.gainMax->si);
    // The columns with the highest score; ties are all marked.
    auto bestColumns = [&](auto score) {
        double top = score(analyses[0]);
        for (const Analysis &a : analyses)
            top = std::max(top, score(a));
        std::vector<bool> marked;
        for (const Analysis &a : analyses)
            marked.push_back(top - score(a) <= 1e-9 * std::abs(top));
        return marked;
    };
    struct Expectation
    {
        QString row;
        std::vector<bool> columns;
        std::string tip;
    };
    const Expectation rows[] = {
        {CandidatesPanel::kBandwidthRow,
         bestColumns([](const Analysis &a) { return *a.bandwidthHz; }), "widest bandwidth"},
        {CandidatesPanel::kPhaseMarginRow,
         bestColumns([](const Analysis &a) { return *a.margins.phaseMarginDeg; }),
         "largest phase margin"},
        {CandidatesPanel::kGainErrorRow,
         bestColumns([&](const Analysis &a) { return -std::abs(*a.exact.gain - centre); }),
         "smallest gain error"},
    };
    for (const Expectation &e : rows) {
        ASSERT_LT(std::count(e.columns.begin(), e.columns.end(), true), qsizetype(analyses.size()))
            << e.row.toStdString() << ": all equal, nothing to check";
        for (std::size_t i = 0; i < analyses.size(); ++i) {
            EXPECT_EQ(panel()->isBest(e.row, columns[qsizetype(i)]), e.columns[i])
                << e.row.toStdString() << " / " << columns[qsizetype(i)].toStdString();
            if (e.columns[i]) {
                EXPECT_THAT(panel()->cellToolTip(e.row, columns[qsizetype(i)]).toStdString(),
                            HasSubstr(e.tip));
            }
        }
    }
    const std::size_t widest = std::size_t(
        std::find(rows[0].columns.begin(), rows[0].columns.end(), true) - rows[0].columns.begin());
    // Marked by a glyph and bold, not by colour alone.
    const QStringList rowNames = panel()->rowNames();
    const QTableWidgetItem *item = panel()->table()->item(
        int(rowNames.indexOf(CandidatesPanel::kBandwidthRow)), int(widest));
    ASSERT_NE(item, nullptr);
    EXPECT_TRUE(item->text().startsWith(CandidatesPanel::kBestMarker));
    EXPECT_TRUE(item->font().bold());
    // "High gain" misses the gain window, so it meets fewer specs than the design does.
    EXPECT_FALSE(panel()->isBest(CandidatesPanel::kSpecsMetRow, "High gain"));
    // No spec says which way is better for peaking, impedance or noise: never marked, though
    // the columns differ there.
    EXPECT_NE(panel()->cellText(CandidatesPanel::kPeakingRow, columns[0]),
              panel()->cellText(CandidatesPanel::kPeakingRow, columns[1]));
    for (const QString &row : {CandidatesPanel::kPeakingRow, CandidatesPanel::kDesensitivityRow,
                               CandidatesPanel::kZInRow, CandidatesPanel::kZOutRow,
                               CandidatesPanel::kOutputNoiseRow, CandidatesPanel::kInputNoiseRow}) {
        for (const QString &column : columns)
            EXPECT_FALSE(panel()->isBest(row, column)) << row.toStdString();
    }
}

TEST_F(CandidatesTest, NoiseRowsShowCoreRmsOfEachColumn)
{
    const Design design = doc()->design();
    const QStringList columns = panel()->columnNames();
    const std::vector<Analysis> analyses = columnAnalyses(design);
    const NoiseUnits units = noiseUnits(analyses[0].gainUnit);
    for (std::size_t i = 0; i < analyses.size(); ++i) {
        ASSERT_TRUE(analyses[i].noise && analyses[i].noise->outputRms);
        EXPECT_EQ(panel()->cellText(CandidatesPanel::kOutputNoiseRow, columns[qsizetype(i)]),
                  toQString(formatEngineering(*analyses[i].noise->outputRms, 3, units.output)));
        EXPECT_EQ(panel()->cellText(CandidatesPanel::kInputNoiseRow, columns[qsizetype(i)]),
                  toQString(formatEngineering(*analyses[i].noise->inputRms, 3, units.input)));
    }
}

TEST_F(CandidatesTest, NoNumberIsNaNAndMissingOnesSayWhy)
{
    Design d = doc()->design();
    d.specs = Specs{};
    for (Part &p : d.parts)
        p.tolerance.reset();
    doc()->reset(d, {});
    settle();
    const QString fast = QStringLiteral("Fast");
    EXPECT_EQ(panel()->cellText(CandidatesPanel::kGainErrorRow, fast), QStringLiteral("—"));
    EXPECT_THAT(panel()->cellToolTip(CandidatesPanel::kGainErrorRow, fast).toStdString(),
                HasSubstr("no gain spec"));
    EXPECT_EQ(panel()->cellText(CandidatesPanel::kWorstCaseRow, fast),
              QStringLiteral("no tolerances"));
    for (const QString &row : panel()->rowNames()) {
        for (const QString &column : panel()->columnNames()) {
            const QString t = panel()->cellText(row, column);
            EXPECT_FALSE(t.isEmpty()) << row.toStdString() << " / " << column.toStdString();
            EXPECT_FALSE(t.contains(QStringLiteral("nan"), Qt::CaseInsensitive)) << t.toStdString();
            EXPECT_FALSE(t.contains(QStringLiteral("inf"), Qt::CaseInsensitive)) << t.toStdString();
        }
    }
}

TEST_F(CandidatesTest, SavingAndReloadingKeepsCandidates)
{
    QString error;
    ASSERT_TRUE(doc()->pinCandidate(QStringLiteral("Bench copy"), &error));
    ASSERT_TRUE(
        doc()->renameCandidate(QStringLiteral("Fast"), QStringLiteral("Fast, 1 pF"), &error));
    QTemporaryDir dir;
    ASSERT_TRUE(dir.isValid());
    const QString path = dir.filePath(QStringLiteral("with-candidates.loopsketch"));
    ASSERT_TRUE(window->saveTo(path, &error)) << error.toStdString();
    EXPECT_FALSE(window->isWindowModified());
    const std::vector<Candidate> saved = doc()->design().candidates;

    auto loaded = loadDesign(toStdString(path));
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    EXPECT_EQ(loaded->candidates, saved);

    MainWindow other;
    other.setAskBeforeDiscarding(false);
    ASSERT_TRUE(other.openFile(path, &error)) << error.toStdString();
    ASSERT_TRUE(other.document()->waitForAnalysis());
    ASSERT_TRUE(QTest::qWaitFor(
        [&] {
            QApplication::processEvents();
            return other.candidatesPanel()->isUpToDate();
        },
        15000));
    EXPECT_EQ(
        other.candidatesPanel()->columnNames(),
        QStringList({CandidatesPanel::kCurrentColumn, "Fast, 1 pF", "High gain", "Bench copy"}));
    EXPECT_EQ(other.candidatesPanel()->cellText(CandidatesPanel::kGainRow, "Bench copy"),
              other.candidatesPanel()->cellText(CandidatesPanel::kGainRow,
                                                CandidatesPanel::kCurrentColumn));
}

TEST_F(CandidatesTest, WritesACandidatesScreenshot)
{
    QString error;
    // A third candidate: CF one E12 step up from the design's 2.2p.
    ASSERT_TRUE(doc()->setFieldText("CF", "value", QStringLiteral("2.7p"), &error));
    ASSERT_TRUE(doc()->pinCandidate(QStringLiteral("Calm"), &error));
    ASSERT_TRUE(doc()->setFieldText("CF", "value", QStringLiteral("2.2p"), &error));
    ASSERT_EQ(doc()->design().candidates.size(), 3u);
    EXPECT_EQ(doc()->design().findPart("CF")->fields.at("value").text, "2.2p");
    settle();
    window->showCandidates();
    window->loopGainPanel()->overlayAction()->setChecked(true);
    for (PlotPanel *p : window->panels()) {
        if (p->objectName() == QStringLiteral("Desensitivity")
            || p->objectName() == QStringLiteral("Step")
            || p->objectName() == QStringLiteral("Poles"))
            p->overlayAction()->setChecked(true);
    }
    QTest::qWait(400);
    const QString dirName = QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR);
    ASSERT_TRUE(window->grab().save(dirName + "/loopsketch-candidates-window.png"));
    ASSERT_TRUE(panel()->grab().save(dirName + "/loopsketch-candidates-panel.png"));
    ASSERT_TRUE(
        window->loopGainPanel()->grab().save(dirName + "/loopsketch-candidates-overlay.png"));
    for (PlotPanel *p : window->panels()) {
        if (p->objectName() == QStringLiteral("Step")
            || p->objectName() == QStringLiteral("Poles")) {
            ASSERT_TRUE(p->grab().save(dirName + "/loopsketch-candidates-"
                                       + p->objectName().toLower() + ".png"));
        }
    }
    auto *impedanceDock = window->findChild<QDockWidget *>(QStringLiteral("ImpedanceDock"));
    ASSERT_NE(impedanceDock, nullptr);
    impedanceDock->raise();
    for (PlotPanel *p : window->panels()) {
        if (p->objectName() == QStringLiteral("Impedance")) {
            p->overlayAction()->setChecked(true);
            QTest::qWait(200);
            ASSERT_TRUE(p->grab().save(dirName + "/loopsketch-candidates-impedance.png"));
        }
    }
    // The whole table, undocked with room to spare.
    auto *dock = window->findChild<QDockWidget *>(QStringLiteral("CandidatesDock"));
    ASSERT_NE(dock, nullptr);
    dock->setFloating(true);
    dock->resize(760, 470);
    QTest::qWait(100);
    ASSERT_TRUE(panel()->grab().save(dirName + "/loopsketch-candidates-table.png"));
}

} // namespace
