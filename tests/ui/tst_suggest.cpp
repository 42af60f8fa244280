// The Suggest values dialog against core's suggestValues: it finds an exact E-series ratio
// where one exists, one click applies a row as one undo step, and undo restores the design
// text exactly.

#include "panels/suggestdialog.h"
#include "testwindow.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "loopsketch/analysis/suggest.h"
#include "loopsketch/base/eseries.h"
#include "loopsketch/design/designfile.h"

#include "ratiostage.h"

#include <QApplication>
#include <QMenu>
#include <QPushButton>
#include <QSignalSpy>
#include <QStandardPaths>
#include <QTest>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

namespace {

// Invented test circuit: a non-inverting stage 1 + R2/R1 around a 180 dB gain block (loop
// gain error about 3e-9), both resistors E12 and off target. The gain window is centred on
// 1 + 10/4.7 = 3.12766, which 10k and 4.7k hit exactly: 1.0 and 4.7 are both in the IEC 60063
// E12 table.
std::string nonInverting(const std::string &specs)
{
    return loopsketch::test::nonInvertingStageText(
        "Ratio test stage", R"("value": "15k", "tolerance": "1%")", "3.3k", specs);
}

const char *kWindow = R"({"gain": ["3.11202", "3.14330"]})";

Design parse(const std::string &text)
{
    auto d = parseDesign(text, "ratio.loopsketch");
    EXPECT_TRUE(d.ok()) << d.errorText();
    return d ? *d : Design{};
}

class SuggestDialogTest : public ::testing::Test
{
protected:
    void SetUp() override
    {
        document.reset(parse(nonInverting(kWindow)), QString());
        dialog = std::make_unique<SuggestDialog>(&document);
    }

    void searchAndWait()
    {
        QSignalSpy finished(dialog.get(), &SuggestDialog::searchFinished);
        dialog->run();
        ASSERT_TRUE(dialog->isRunning());
        ASSERT_TRUE(finished.wait(60000));
        ASSERT_FALSE(dialog->isRunning());
    }

    double value(const std::string &id) const
    {
        return document.design().findPart(id)->number("value");
    }

    DesignDocument document;
    std::unique_ptr<SuggestDialog> dialog;
};

TEST_F(SuggestDialogTest, OffersTheResistorsAndStatesTheTargets)
{
    EXPECT_EQ(dialog->offeredParts(), (QStringList{"R2", "R1"}));
    EXPECT_THAT(dialog->targetsText().toStdString(), HasSubstr("3.128")); // window centre
    EXPECT_THAT(dialog->targetsText().toStdString(), HasSubstr("no minimum bandwidth"));
    EXPECT_FALSE(dialog->series().has_value()); // each part's own series to begin with
}

TEST_F(SuggestDialogTest, FindsTheExactE12RatioAndApplyUndoRestoresTheText)
{
    dialog->setPartChecked("R2", true);
    dialog->setPartChecked("R1", true);
    dialog->setSeries(ESeries::E12);
    dialog->setDecades(2);
    searchAndWait();
    const SuggestResult *r = dialog->result();
    ASSERT_NE(r, nullptr) << dialog->statusText().toStdString();
    EXPECT_TRUE(r->targetsMet);
    ASSERT_FALSE(r->suggestions.empty());
    const Suggestion &best = r->suggestions.front();
    ASSERT_EQ(best.values.size(), 2u);
    EXPECT_EQ(best.values[0].first, "R2");
    // 10k / 4.7k (IEC 60063 E12)
    EXPECT_NEAR(best.values[0].second, 10e3, 1e-6);
    EXPECT_NEAR(best.values[1].second, 4.7e3, 1e-6);
    EXPECT_TRUE(isSeriesValue(ESeries::E12, best.values[0].second));
    EXPECT_TRUE(best.meetsSpecs);
    // Row 0 shows both forms: IEC 60062 RKM code and engineering notation.
    EXPECT_THAT(dialog->cellText(0, 1).toStdString(), HasSubstr("10k"));
    EXPECT_THAT(dialog->cellText(0, 1).toStdString(), HasSubstr("10 kΩ"));
    EXPECT_THAT(dialog->cellText(0, 2).toStdString(), HasSubstr("4k7"));
    EXPECT_THAT(dialog->cellText(0, 2).toStdString(), HasSubstr("4.7 kΩ"));
    EXPECT_EQ(dialog->cellText(0, 8), QStringLiteral("pass")); // specs at nominal
    // the worst case over the tolerances and the yield (issue 18), from core's row
    EXPECT_EQ(dialog->cellText(0, 9),
              best.worstCasePass ? QStringLiteral("pass") : QStringLiteral("nominal only"));
    EXPECT_THAT(dialog->cellText(0, 10).toStdString(), HasSubstr("%"));
    EXPECT_EQ(dialog->resultRows(), int(r->suggestions.size()));

    // The same search by core directly.
    SuggestOptions options;
    options.parts = {"R2", "R1"};
    options.decades = 2;
    options.best = SuggestDialog::kBest;
    auto direct = suggestValues(document.design(), options);
    ASSERT_TRUE(direct.ok()) << direct.errorText();
    EXPECT_EQ(direct->combinations, r->combinations);
    EXPECT_NEAR(direct->suggestions.front().values[1].second, 4.7e3, 1e-6);

    const std::string before = serializeDesign(document.design());
    const int commands = document.undoStack()->count();
    // One click on the row's Apply button.
    auto *apply = dialog->findChild<QPushButton *>(QStringLiteral("ApplySuggestion0"));
    ASSERT_NE(apply, nullptr);
    QTest::mouseClick(apply, Qt::LeftButton);
    QApplication::processEvents();
    EXPECT_NEAR(value("R2"), 10e3, 1e-6);
    EXPECT_NEAR(value("R1"), 4.7e3, 1e-6);
    EXPECT_EQ(document.undoStack()->count(), commands + 1);
    EXPECT_THAT(dialog->statusText().toStdString(), HasSubstr("Applied"));
    document.undoStack()->undo();
    EXPECT_EQ(serializeDesign(document.design()), before);
    document.undoStack()->redo();
    EXPECT_NEAR(value("R1"), 4.7e3, 1e-6);
}

TEST_F(SuggestDialogTest, ASeriesOtherThanThePartsIsAppliedWithTheValues)
{
    dialog->setPartChecked("R2", true);
    dialog->setPartChecked("R1", true);
    dialog->setSeries(ESeries::E24);
    dialog->setDecades(1);
    searchAndWait();
    ASSERT_NE(dialog->result(), nullptr) << dialog->statusText().toStdString();
    const std::string before = serializeDesign(document.design());
    ASSERT_TRUE(dialog->applySuggestion(0));
    EXPECT_EQ(document.design().findPart("R1")->series, ESeries::E24);
    EXPECT_TRUE(isSeriesValue(ESeries::E24, value("R1")));
    document.undoStack()->undo();
    EXPECT_EQ(serializeDesign(document.design()), before);
    EXPECT_EQ(document.design().findPart("R1")->series, ESeries::E12);
}

TEST_F(SuggestDialogTest, ApplyingTheCurrentValuesIsNoUndoStep)
{
    const int commands = document.undoStack()->count();
    document.applyValues({{"R2", value("R2")}, {"R1", value("R1")}}, std::nullopt,
                         QStringLiteral("no change"));
    EXPECT_EQ(document.undoStack()->count(), commands);
    document.applyValues({{"R2", 22e3}}, std::nullopt, QStringLiteral("one change"));
    EXPECT_EQ(document.undoStack()->count(), commands + 1);
    EXPECT_NEAR(value("R2"), 22e3, 1e-9);
}

TEST_F(SuggestDialogTest, CancelStopsTheSearch)
{
    dialog->setPartChecked("R2", true);
    dialog->setPartChecked("R1", true);
    dialog->setSeries(ESeries::E192);
    // IEC 60063 E192 over six decades: 1153 values about R2's 15k, 1152 about R1's 3.3k (not
    // an E192 value): 1.33 million combinations, over the 1 million cap, but bisecting the
    // gain over one resistor's series computes under 50,000 DC gains: the search runs, for a
    // tenth of a second or more, so a cancel 10 ms after the start lands inside it
    dialog->setDecades(6);
    EXPECT_THAT(dialog->previewText().toStdString(), HasSubstr("1,328,256 combinations"));
    EXPECT_THAT(dialog->previewText().toStdString(), HasSubstr("DC gains computed"));
    QSignalSpy finished(dialog.get(), &SuggestDialog::searchFinished);
    dialog->run();
    QTest::qWait(10);
    dialog->cancel();
    ASSERT_TRUE(finished.wait(20000));
    ASSERT_NE(dialog->result(), nullptr) << dialog->statusText().toStdString();
    EXPECT_TRUE(dialog->result()->cancelled);
    EXPECT_LT(dialog->result()->evaluated, dialog->result()->combinations);
    EXPECT_THAT(dialog->statusText().toStdString(), HasSubstr("Cancelled after"));
}

TEST_F(SuggestDialogTest, DesignChangeStopsTheSearchAndClearsTheRows)
{
    dialog->setPartChecked("R2", true);
    dialog->setPartChecked("R1", true);
    dialog->setSeries(ESeries::E192);
    dialog->setDecades(4);
    dialog->run();
    ASSERT_TRUE(dialog->isRunning());
    ASSERT_TRUE(document.stepPart("R2", 1, false));
    EXPECT_FALSE(dialog->isRunning());
    EXPECT_EQ(dialog->result(), nullptr);
    EXPECT_EQ(dialog->resultRows(), 0);
    EXPECT_THAT(dialog->statusText().toStdString(), HasSubstr("design changed"));
}

TEST(SuggestDialogErrors, NoGainWindowAndUnreachableTargets)
{
    DesignDocument document;
    document.reset(parse(nonInverting(R"({"bandwidth_min": "1k"})")), QString());
    SuggestDialog dialog(&document);
    EXPECT_THAT(dialog.targetsText().toStdString(), HasSubstr("no gain window"));
    dialog.setPartChecked("R2", true);
    // Started anyway: core's diagnostic is shown.
    QSignalSpy finished(&dialog, &SuggestDialog::searchFinished);
    dialog.run();
    ASSERT_TRUE(finished.wait(20000));
    EXPECT_EQ(dialog.result(), nullptr);
    EXPECT_THAT(dialog.statusText().toStdString(), HasSubstr("gain window"));

    // A window no E6 pair within half a decade reaches: core's "no combination meets".
    DesignDocument far;
    far.reset(parse(nonInverting(R"({"gain": ["40", "41"]})")), QString());
    SuggestDialog farDialog(&far);
    farDialog.setPartChecked("R2", true);
    farDialog.setSeries(ESeries::E6);
    farDialog.setDecades(0.5);
    QSignalSpy farFinished(&farDialog, &SuggestDialog::searchFinished);
    farDialog.run();
    ASSERT_TRUE(farFinished.wait(20000));
    ASSERT_NE(farDialog.result(), nullptr);
    EXPECT_FALSE(farDialog.result()->targetsMet);
    EXPECT_THAT(farDialog.statusText().toStdString(), HasSubstr("no combination meets"));
}

TEST(SuggestDialogWindow, OpensFromTheDesignMenuWithAScreenshot)
{
    MainWindow window;
    loopsketch::ui::test::showTestWindow(window);
    QString error;
    ASSERT_TRUE(window.openFile(QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    QAction *open = nullptr;
    for (QAction *a : window.designMenu()->actions())
        if (a->text().startsWith(QStringLiteral("Suggest")))
            open = a;
    ASSERT_NE(open, nullptr);
    open->trigger();
    SuggestDialog *dialog = window.suggestDialog();
    ASSERT_TRUE(dialog->isVisible());
    // The demo's feedback network, RF and CF, is ticked to begin with.
    EXPECT_EQ(dialog->checkedParts(), (QStringList{"RF", "CF"}));
    QSignalSpy finished(dialog, &SuggestDialog::searchFinished);
    dialog->run();
    ASSERT_TRUE(finished.wait(60000));
    ASSERT_NE(dialog->result(), nullptr) << dialog->statusText().toStdString();
    QTest::qWait(200);
    EXPECT_TRUE(
        dialog->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-suggest.png"));
    // Each part's own series: RF E24, CF E12; two decades hold 49 E24 and 25 E12 values
    // (IEC 60063: 24 and 12 per decade, both ends included).
    const std::size_t combinations = dialog->result()->combinations;
    EXPECT_EQ(combinations, 49u * 25u);
    const std::string before = serializeDesign(window.document()->design());
    // the first row that changes the design (the current values may rank first)
    int row = 0;
    const Design &current = window.document()->design();
    while (row < dialog->resultRows()) {
        bool differs = false;
        for (const auto &[id, v] : dialog->result()->suggestions[std::size_t(row)].values)
            differs = differs || std::abs(current.findPart(id)->number("value") - v) > 1e-9 * v;
        if (differs)
            break;
        ++row;
    }
    ASSERT_LT(row, dialog->resultRows());
    ASSERT_TRUE(dialog->applySuggestion(row));
    EXPECT_EQ(window.document()->design().findPart("CF")->series, ESeries::E12);
    window.document()->undoStack()->undo();
    EXPECT_EQ(serializeDesign(window.document()->design()), before);
    EXPECT_EQ(dialog->result(), nullptr); // the rows described the design before the edit
    std::cout << "suggest RF, CF (" << combinations
              << " combinations) in the GUI: " << dialog->lastRunMs() << " ms\n";
}

} // namespace
