// The Spread panel against core: what it shows after a run must be what core's worstCase()
// and monteCarlo() give for the same design, options and seed; cancel, design changes and
// destruction during a run must stop the worker without a crash.

#include "panels/spreadpanel.h"
#include "testwindow.h"
#include "window/designdocument.h"
#include "window/exportactions.h"
#include "window/mainwindow.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/feedback/exactsolution.h"

#include <QAbstractSeries>
#include <QApplication>
#include <QAreaSeries>
#include <QChart>
#include <QDockWidget>
#include <QElapsedTimer>
#include <QLineSeries>
#include <QLocale>
#include <QProcess>
#include <QSignalSpy>
#include <QStandardPaths>
#include <QTemporaryDir>
#include <QTest>
#include <QValueAxis>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <memory>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;
using ::testing::Not;
using Metric = SpreadPanel::Metric;
using Column = SpreadPanel::Column;

namespace {

const std::string kDesigns = LOOPSKETCH_DESIGNS_DIR;

Design demo()
{
    auto d = loadDesign(kDesigns + "/demo.loopsketch");
    EXPECT_TRUE(d.ok()) << d.errorText();
    return d ? *d : Design{};
}

/// The demo with every tolerance removed.
Design withoutTolerances()
{
    Design d = demo();
    for (Part &p : d.parts)
        p.tolerance.reset();
    return d;
}

class SpreadPanelTest : public ::testing::Test
{
protected:
    void SetUp() override
    {
        document = std::make_unique<DesignDocument>();
        document->reset(demo(), QString::fromStdString(kDesigns + "/demo.loopsketch"));
        panel = std::make_unique<SpreadPanel>(document.get());
        panel->resize(900, 600);
    }

    /// Runs and waits for the result.
    void runAndWait()
    {
        QSignalSpy finished(panel.get(), &SpreadPanel::runFinished);
        panel->run();
        ASSERT_TRUE(panel->isRunning()) << panel->messageText().toStdString();
        ASSERT_TRUE(finished.wait(60000));
        ASSERT_FALSE(panel->isRunning());
    }

    std::unique_ptr<DesignDocument> document;
    std::unique_ptr<SpreadPanel> panel;
};

/// The text of a PDF by pdftotext (Debian's poppler-utils).
std::string pdfText(const QString &pdf)
{
    QProcess p;
    p.start(QStringLiteral("pdftotext"), {pdf, QStringLiteral("-")});
    if (!p.waitForFinished(30000) || p.exitCode() != 0)
        return {};
    return QString::fromUtf8(p.readAllStandardOutput()).toStdString();
}

QString coreText(Metric m, double v, const std::string &unit)
{
    // The panel's formats: engineering with 4 digits (value.h formatEngineering), degrees
    // with two decimals (two significant digits below 0.01).
    if (m == Metric::PhaseMargin)
        return QString::number(v, v != 0 && std::abs(v) < 0.01 ? 'g' : 'f', 2)
            + QStringLiteral("°");
    return QString::fromStdString(formatEngineering(v, 4, m == Metric::Gain ? unit : "Hz"));
}

void expectPanelShowsCore(const SpreadPanel &panel, const Design &design,
                          const SpreadOptions &options)
{
    auto mc = monteCarlo(design, options);
    ASSERT_TRUE(mc.ok()) << mc.errorText();
    auto wc = worstCase(design, options);
    ASSERT_TRUE(wc.ok()) << wc.errorText();
    const std::string unit = gainUnit(design);
    const MetricStats *stats[] = {&mc->gain, &mc->bandwidthHz, &mc->phaseMarginDeg};
    const MetricRange *ranges[] = {&wc->gain, &wc->bandwidthHz, &wc->phaseMarginDeg};
    for (int i = 0; i < 3; ++i) {
        const auto m = static_cast<Metric>(i);
        ASSERT_GT(stats[i]->count, 0u) << i;
        EXPECT_EQ(panel.cellText(m, Column::Mean), coreText(m, stats[i]->mean, unit)) << i;
        EXPECT_EQ(panel.cellText(m, Column::Std), coreText(m, stats[i]->std, unit)) << i;
        EXPECT_EQ(panel.cellText(m, Column::Min), coreText(m, stats[i]->min, unit)) << i;
        EXPECT_EQ(panel.cellText(m, Column::Max), coreText(m, stats[i]->max, unit)) << i;
        ASSERT_TRUE(ranges[i]->min && ranges[i]->max) << i;
        EXPECT_EQ(panel.cellText(m, Column::WorstMin), coreText(m, *ranges[i]->min, unit)) << i;
        EXPECT_EQ(panel.cellText(m, Column::WorstMax), coreText(m, *ranges[i]->max, unit)) << i;
    }
    ASSERT_NE(panel.lastResult(), nullptr);
    EXPECT_EQ(panel.lastResult()->monteCarlo.completed, mc->completed);
    EXPECT_EQ(panel.lastResult()->monteCarlo.passed, mc->passed);
    EXPECT_THAT(panel.yieldText().toStdString(),
                HasSubstr(QString::number(mc->yield * 100.0, 'f', 2).toStdString() + " %"));
}

TEST_F(SpreadPanelTest, RunShowsCoreMonteCarloAndWorstCaseForTheSameSeed)
{
    panel->setTrials(3000);
    panel->setSeed(5);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    const SpreadOptions options = panel->options();
    EXPECT_EQ(options.trials, 3000);
    EXPECT_EQ(options.seed, 5u);
    expectPanelShowsCore(*panel, document->design(), options);
    // RF and CF toleranced: 2^2 = 4 vertices of the tolerance box, all evaluated.
    EXPECT_THAT(panel->methodText().toStdString(), HasSubstr("all 4 corners"));
    EXPECT_NE(panel->completedResult(), nullptr);
    EXPECT_THAT(panel->messageText().toStdString(),
                HasSubstr(QLocale().toString(3000).toStdString() + " trials"));
    EXPECT_THAT(panel->messageText().toStdString(), HasSubstr("seed 5"));
}

// Issue 18: with a noise spec the trials compute the output noise, and the panel shows its
// range: nominal, over the worst-case corners and over the trials, as core's worstCase() and
// monteCarlo() give them for the same options and seed. Without one (the demo as shipped) the
// line is hidden and empty, not a row of dashes.
TEST_F(SpreadPanelTest, NoiseRangesShownWhenTheRunComputedThem)
{
    panel->setTrials(400);
    panel->setSeed(3);
    runAndWait();
    EXPECT_TRUE(panel->noiseText().isEmpty()) << panel->noiseText().toStdString();

    Design d = demo();
    d.specs.outputNoiseMax = Value{1e-3, {}};
    document->reset(d, QString::fromStdString(kDesigns + "/demo.loopsketch"));
    runAndWait();
    const SpreadOptions options = panel->options();
    auto mc = monteCarlo(document->design(), options);
    ASSERT_TRUE(mc.ok()) << mc.errorText();
    auto wc = worstCase(document->design(), options);
    ASSERT_TRUE(wc.ok()) << wc.errorText();
    ASSERT_TRUE(mc->hasNoise);
    ASSERT_EQ(mc->outputNoiseRms.count, 400u);
    ASSERT_TRUE(wc->outputNoiseRms.min && wc->outputNoiseRms.max);
    const auto v = [](double x) {
        return formatEngineering(x, 4, "V rms");
    };
    const std::string text = panel->noiseText().toStdString();
    EXPECT_THAT(text, HasSubstr("Output noise: nominal " + v(*mc->nominal.outputNoiseRms)));
    EXPECT_THAT(
        text,
        HasSubstr("worst case " + v(*wc->outputNoiseRms.min) + " … " + v(*wc->outputNoiseRms.max)));
    EXPECT_THAT(text,
                HasSubstr("Monte Carlo min " + v(mc->outputNoiseRms.min) + ", mean "
                          + v(mc->outputNoiseRms.mean) + ", max " + v(mc->outputNoiseRms.max)));
    // The trials lie inside the corners' range: the worst case evaluates every vertex of the
    // box (RF and CF), which bounds a quantity monotonic in each toleranced value.
    EXPECT_GE(mc->outputNoiseRms.min, *wc->outputNoiseRms.min * (1 - 1e-9));
    EXPECT_LE(mc->outputNoiseRms.max, *wc->outputNoiseRms.max * (1 + 1e-9));
}

TEST_F(SpreadPanelTest, NormalDistributionAndGainBlockSpreadReachCore)
{
    panel->setTrials(1500);
    panel->setSeed(11);
    panel->setDistribution(SpreadDistribution::Normal);
    panel->setGainSpreadPct(50);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    const SpreadOptions options = panel->options();
    EXPECT_EQ(options.distribution, SpreadDistribution::Normal);
    ASSERT_TRUE(options.gainSpread);
    EXPECT_NEAR(*options.gainSpread, 0.5, 1e-12);
    expectPanelShowsCore(*panel, document->design(), options);
    ASSERT_NE(panel->lastResult(), nullptr);
    EXPECT_EQ(panel->lastResult()->monteCarlo.quantities.size(), 3u); // RF, CF, U1 gain
    EXPECT_THAT(panel->methodText().toStdString(), HasSubstr("all 8 corners"));
}

TEST_F(SpreadPanelTest, HistogramsHoldEveryTrialAndNameTheirUnits)
{
    panel->setTrials(2000);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    const MonteCarloResult &mc = panel->lastResult()->monteCarlo;
    const MetricStats *stats[] = {&mc.gain, &mc.bandwidthHz, &mc.phaseMarginDeg};
    // demo: about -1 MV/A, about 90 kHz, about 76 degrees
    const char *units[] = {"(MV/A)", "(kHz)", "(°)"};
    for (int i = 0; i < 3; ++i) {
        QChart *chart = panel->histogramChart(static_cast<Metric>(i));
        auto *axis = qobject_cast<QValueAxis *>(chart->axes(Qt::Horizontal).front());
        ASSERT_NE(axis, nullptr);
        EXPECT_THAT(axis->titleText().toStdString(), HasSubstr(units[i])) << i;
        // The outline's bin tops (points 1, 3, 5 ...) add up to the trials in the histogram.
        QLineSeries *outline = nullptr;
        for (QAbstractSeries *s : chart->series()) {
            if (auto *area = qobject_cast<QAreaSeries *>(s))
                outline = area->upperSeries();
        }
        ASSERT_NE(outline, nullptr) << i;
        double sum = 0;
        for (int k = 1; k + 1 < outline->count(); k += 2)
            sum += outline->at(k).y();
        EXPECT_NEAR(sum, double(stats[i]->count), 0.5) << i;
        // The demo's specs as dashed vertical lines, in the axis units: gain -1.05 and
        // -0.95 MV/A, bandwidth_min 50 kHz. phase_margin_min_deg 50 lies more than three
        // histogram widths below the trials (about 73 to 78 degrees), so it is named instead.
        std::vector<double> specX;
        for (QAbstractSeries *s : chart->series()) {
            auto *line = qobject_cast<QLineSeries *>(s);
            if (line && line->pen().style() == Qt::DashLine && line->count() == 2) {
                EXPECT_NEAR(line->at(0).x(), line->at(1).x(), 1e-12);
                specX.push_back(line->at(0).x());
            }
        }
        std::sort(specX.begin(), specX.end());
        const std::vector<double> expected = i == 0 ? std::vector<double>{-1.05, -0.95}
            : i == 1                                ? std::vector<double>{50.0}
                                                    : std::vector<double>{};
        if (i == 2) {
            EXPECT_THAT(chart->title().toStdString(), HasSubstr("spec ≥ 50.00°, left of the plot"));
        } else {
            EXPECT_TRUE(chart->title().trimmed().isEmpty()) << i;
        }
        ASSERT_EQ(specX.size(), expected.size()) << i;
        for (std::size_t k = 0; k < expected.size(); ++k)
            EXPECT_NEAR(specX[k], expected[k], 1e-9) << i;
        for (QAbstractSeries *s : chart->series()) {
            if (auto *line = qobject_cast<QLineSeries *>(s)) {
                for (const QPointF &p : line->points()) {
                    EXPECT_TRUE(std::isfinite(p.x()) && std::isfinite(p.y())) << i;
                }
            }
        }
    }
}

TEST_F(SpreadPanelTest, SameSeedTwiceGivesTheSameTexts)
{
    panel->setTrials(800);
    panel->setSeed(3);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    const QString first = panel->cellText(Metric::Bandwidth, Column::Mean);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    EXPECT_EQ(panel->cellText(Metric::Bandwidth, Column::Mean), first);
    panel->setSeed(4);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    EXPECT_NE(panel->cellText(Metric::Bandwidth, Column::Mean), first);
}

TEST_F(SpreadPanelTest, CancelStopsALongRunAndShowsThePartialResult)
{
    // a long run within the work budget (limits.h: about 205,000 trials of the demo)
    panel->setTrials(200000);
    QSignalSpy finished(panel.get(), &SpreadPanel::runFinished);
    panel->run();
    ASSERT_TRUE(panel->isRunning());
    // past the 4 worst-case corners, into the Monte Carlo trials
    ASSERT_TRUE(QTest::qWaitFor([&] { return panel->progressDone() > 100; }, 30000));
    panel->cancel();
    ASSERT_TRUE(finished.wait(10000));
    EXPECT_FALSE(panel->isRunning());
    ASSERT_NE(panel->lastResult(), nullptr);
    const MonteCarloResult &mc = panel->lastResult()->monteCarlo;
    EXPECT_TRUE(mc.cancelled);
    EXPECT_LT(mc.completed, mc.trials);
    EXPECT_GT(mc.completed, 0u);
    EXPECT_THAT(panel->messageText().toStdString(), HasSubstr("Cancelled at"));
    // The bar stays where the run stopped: "cancelled at N of M", not a full bar.
    EXPECT_EQ(panel->progressText(),
              QStringLiteral("cancelled at %1 of %2")
                  .arg(QLocale().toString(qulonglong(mc.completed)),
                       QLocale().toString(qulonglong(mc.trials))));
    EXPECT_EQ(panel->progressMaximum(), static_cast<int>(mc.trials));
    EXPECT_EQ(panel->progressValue(), static_cast<int>(mc.completed));
    EXPECT_LT(panel->progressValue(), panel->progressMaximum());
    EXPECT_EQ(panel->completedResult(), nullptr); // a partial run never goes on the sheet
    EXPECT_NE(panel->cellText(Metric::Gain, Column::Mean), QStringLiteral("—"));
}

TEST_F(SpreadPanelTest, DesignChangeDuringARunCancelsIt)
{
    panel->setTrials(200000);
    QSignalSpy discarded(panel.get(), &SpreadPanel::runDiscarded);
    QSignalSpy finished(panel.get(), &SpreadPanel::runFinished);
    panel->run();
    ASSERT_TRUE(QTest::qWaitFor([&] { return panel->progressDone() > 100; }, 30000));
    ASSERT_TRUE(document->stepPart("RF", 1, false));
    EXPECT_FALSE(panel->isRunning());
    ASSERT_TRUE(discarded.wait(10000));
    EXPECT_LT(discarded.front().front().toULongLong(), 200000u);
    EXPECT_EQ(finished.count(), 0);
    EXPECT_EQ(panel->lastResult(), nullptr);
    // The next run is for the design as it is now.
    panel->setTrials(500);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    expectPanelShowsCore(*panel, document->design(), panel->options());
}

TEST_F(SpreadPanelTest, EditAfterARunMarksTheResultOutOfDate)
{
    panel->setTrials(500);
    ASSERT_NO_FATAL_FAILURE(runAndWait());
    ASSERT_NE(panel->completedResult(), nullptr);
    ASSERT_TRUE(document->stepPart("CF", 1, false));
    EXPECT_EQ(panel->completedResult(), nullptr);
    EXPECT_THAT(panel->messageText().toStdString(), HasSubstr("design changed"));
}

TEST_F(SpreadPanelTest, DestructionWhileRunningJoinsTheWorker)
{
    panel->setTrials(200000);
    panel->run();
    ASSERT_TRUE(QTest::qWaitFor([&] { return panel->progressDone() > 10; }, 30000));
    QElapsedTimer clock;
    clock.start();
    panel.reset();
    // The worker stops within one chunk of trials (spread.cpp runs 64 at most per chunk).
    EXPECT_LT(clock.elapsed(), 2000);
    QApplication::processEvents(); // a late delivery would reach a deleted panel here
}

TEST(SpreadPanelNoTolerance, ShowsCoresMessage)
{
    DesignDocument document;
    document.reset(withoutTolerances(), QStringLiteral("plain.loopsketch"));
    SpreadPanel panel(&document);
    auto expected = spreadQuantities(document.design(), panel.options(), "plain.loopsketch");
    ASSERT_FALSE(expected.ok());
    EXPECT_EQ(panel.messageText().toStdString(), expected.errorText());
    EXPECT_THAT(panel.messageText().toStdString(), HasSubstr("nothing to spread"));
    panel.run();
    EXPECT_FALSE(panel.isRunning());
    EXPECT_EQ(panel.messageText().toStdString(), expected.errorText());
    EXPECT_EQ(panel.cellText(Metric::Gain, Column::Mean), QStringLiteral("—"));
    // A gain block spread gives it something to spread after all.
    panel.setGainSpreadPct(20);
    EXPECT_THAT(panel.messageText().toStdString(), HasSubstr("U1 gain ±20 %"));
}

TEST(SpreadPanelWindow, DockIsNamedSpreadAndAScreenshotAfterARun)
{
    MainWindow window;
    loopsketch::ui::test::showTestWindow(window);
    QString error;
    ASSERT_TRUE(window.openFile(QString::fromStdString(kDesigns + "/demo.loopsketch"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    auto *dock = window.findChild<QDockWidget *>(QStringLiteral("SpreadDock"));
    ASSERT_NE(dock, nullptr);
    EXPECT_EQ(dock->windowTitle(), QStringLiteral("Spread")); // ui/README.md §4 (panel names)
    dock->show();
    dock->raise();
    SpreadPanel *panel = window.spreadPanel();
    ASSERT_NE(panel, nullptr);
    panel->setTrials(10000);
    QSignalSpy finished(panel, &SpreadPanel::runFinished);
    panel->run();
    ASSERT_TRUE(finished.wait(60000));
    std::cout << "10,000-trial spread run in the GUI: " << panel->lastRunMs() << " ms\n";
    EXPECT_NE(panel->completedResult(), nullptr);
    QTest::qWait(300);
    EXPECT_TRUE(window.grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                   + "/loopsketch-spread-window.png"));
    EXPECT_TRUE(panel->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                   + "/loopsketch-spread-panel.png"));

    // The review sheet exported from the GUI (File > Export) carries this run; after an edit
    // the run is out of date and the sheet carries the command line's default run instead.
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString withRun = tmp.filePath("with.pdf"), afterEdit = tmp.filePath("after.pdf");
    ASSERT_TRUE(exportReviewSheet(*window.document(), withRun, SheetPageSize::A4,
                                  QStringLiteral("demo.loopsketch"), &error,
                                  panel->completedResult()))
        << error.toStdString();
    const std::string sheet = pdfText(withRun);
    EXPECT_THAT(sheet, HasSubstr("Spread over tolerances"));
    EXPECT_THAT(sheet, HasSubstr("10000 trials (10000 completed), uniform distribution, seed 1"));
    ASSERT_TRUE(window.document()->stepPart("CF", 1, false));
    EXPECT_TRUE(window.document()->waitForAnalysis());
    ASSERT_EQ(panel->completedResult(), nullptr);
    ASSERT_TRUE(exportReviewSheet(*window.document(), afterEdit, SheetPageSize::A4,
                                  QStringLiteral("demo.loopsketch"), &error,
                                  panel->completedResult()))
        << error.toStdString();
    EXPECT_THAT(
        pdfText(afterEdit),
        HasSubstr(
            QStringLiteral("%1 trials (%1 completed)").arg(kSheetSpreadTrials).toStdString()));
}

} // namespace
