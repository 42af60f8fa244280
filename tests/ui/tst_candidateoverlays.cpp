// Candidates on the plots: the dashed overlays of each candidate on the frequency panels, on
// Step and on Poles, against core's analysis of the candidate, and the review sheet naming every
// curve and overlay as the screen does.
//
// Reference for every number: core's analyze() on the demo design with the candidate's values
// written into the parts' primary fields (the rule of `loopsketch analyze --candidate`, applied
// here independently of the ui's helper).

#include "candidatestest.h"
#include "clirun.h"
#include "panels/noisepanel.h"
#include "panels/panels.h"
#include "sheet/reviewsheet.h"
#include "support/plotstyle.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "designs.h"
#include "loopsketch/analysis/analysis.h"

#include <QAction>
#include <QApplication>
#include <QMenu>
#include <QScatterSeries>
#include <QTemporaryDir>
#include <QTest>
#include <QXYSeries>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;
using ::testing::Not;

using loopsketch::test::analyzeOrFail;
using loopsketch::test::withCandidateByHand;

namespace {

TEST_F(CandidatesTest, OverlaysAppearPerCandidateAndGoWhenToggledOff)
{
    LoopGainPanel *loop = window->loopGainPanel();
    ASSERT_TRUE(loop->hasOverlays());
    const auto seriesBefore = loop->chart()->series().size();
    EXPECT_TRUE(loop->overlaySeriesNames().isEmpty());
    loop->overlayAction()->setChecked(true);
    EXPECT_EQ(loop->overlaySeriesNames(),
              QStringList({"Fast: T", "Fast: gain", "High gain: T", "High gain: gain"}));
    EXPECT_EQ(loop->chart()->series().size(), seriesBefore + 4);
    // One legend entry per candidate naming it and each quantity it overlays, after the
    // panel's own curves (once the legend's posted layout has run).
    QApplication::processEvents();
    EXPECT_EQ(loop->legendLabels(),
              QStringList({LoopGainPanel::kA, LoopGainPanel::kT, LoopGainPanel::kTwoPort,
                           LoopGainPanel::kExact, "Fast: T, gain", "High gain: T, gain"}));

    // The overlay holds every point of core's loop gain for that candidate.
    const Design design = doc()->design();
    const Analysis fast
        = analyzeOrFail(withCandidateByHand(design, candidateNamed(design, "Fast")));
    const QList<QPointF> want
        = curvePoints(fast.frequenciesHz, fast.curves.loopGain, CurvePart::MagnitudeDb);
    QXYSeries *s = loop->series(QStringLiteral("Fast: T"));
    ASSERT_NE(s, nullptr);
    const QList<QPointF> full = loop->fullPoints(s);
    ASSERT_EQ(full.size(), want.size());
    for (qsizetype i = 0; i < full.size(); i += 37)
        EXPECT_NEAR(full[i].y(), want[i].y(), 1e-9) << i;
    // Thinner and dashed, unlike the panel's own solid curves.
    EXPECT_NE(s->pen().style(), Qt::SolidLine);
    EXPECT_LT(s->pen().widthF(), loop->series(LoopGainPanel::kT)->pen().widthF());

    // A new pin shows up once its analysis is in; a deletion takes its curves away.
    QString error;
    ASSERT_TRUE(doc()->pinCandidate(QStringLiteral("Wide"), &error));
    settle();
    EXPECT_TRUE(loop->overlaySeriesNames().contains(QStringLiteral("Wide: T")));
    ASSERT_TRUE(doc()->deleteCandidate(QStringLiteral("Fast")));
    settle();
    EXPECT_FALSE(loop->overlaySeriesNames().contains(QStringLiteral("Fast: T")));
    EXPECT_EQ(loop->series(QStringLiteral("Fast: T")), nullptr);

    loop->overlayAction()->setChecked(false);
    EXPECT_TRUE(loop->overlaySeriesNames().isEmpty());
    QApplication::processEvents();
    EXPECT_EQ(loop->legendLabels().size(), 4);
    EXPECT_EQ(loop->chart()->series().size(), seriesBefore);
    EXPECT_EQ(loop->series(QStringLiteral("Wide: T")), nullptr);

    // The Design menu's toggle turns on every frequency panel's overlays.
    QAction *all = nullptr;
    for (QAction *a : window->designMenu()->actions()) {
        if (a->text() == QStringLiteral("Overlay candidates on every plot"))
            all = a;
    }
    ASSERT_NE(all, nullptr);
    all->trigger();
    int withOverlays = 0;
    for (PlotPanel *p : window->panels()) {
        if (!p->hasOverlays())
            continue;
        ++withOverlays;
        EXPECT_FALSE(p->overlaySeriesNames().isEmpty()) << p->objectName().toStdString();
        for (const QString &n : p->overlaySeriesNames())
            EXPECT_TRUE(n.startsWith("High gain: ") || n.startsWith("Wide: ")) << n.toStdString();
    }
    // Loop gain, Impedance, Desensitivity, Step, Poles, Noise
    EXPECT_EQ(withOverlays, 6);
}

TEST_F(CandidatesTest, StepAndPolesOverlayEachCandidate)
{
    const auto panelOf = [this]<class T>() -> T * {
        for (PlotPanel *p : window->panels()) {
            if (auto *t = qobject_cast<T *>(p))
                return t;
        }
        return nullptr;
    };
    const Design design = doc()->design();
    const Analysis fast
        = analyzeOrFail(withCandidateByHand(design, candidateNamed(design, "Fast")));
    const Analysis current = analyzeOrFail(design);

    // Step: the candidate's own response, in the current design's time and output scale.
    StepPanel *step = panelOf.template operator()<StepPanel>();
    ASSERT_NE(step, nullptr);
    ASSERT_TRUE(step->hasOverlays());
    step->overlayAction()->setChecked(true);
    QXYSeries *s = step->series(QStringLiteral("Fast: step"));
    ASSERT_NE(s, nullptr);
    double tMax = 0, yMax = 0;
    for (double t : current.step.timeS)
        tMax = std::max(tMax, std::abs(t));
    for (double y : current.step.response)
        yMax = std::max(yMax, std::abs(y));
    const QList<QPointF> want
        = realPoints(fast.step.timeS, fast.step.response, scalePrefixFor(tMax).factor,
                     scalePrefixFor(yMax).factor);
    const QList<QPointF> full = step->fullPoints(s);
    ASSERT_EQ(full.size(), want.size());
    for (qsizetype i = 0; i < full.size(); i += 23) {
        EXPECT_NEAR(full[i].x(), want[i].x(), 1e-12 * std::abs(want[i].x()) + 1e-15) << i;
        EXPECT_NEAR(full[i].y(), want[i].y(), 1e-12 * std::abs(want[i].y()) + 1e-15) << i;
    }

    // Poles: hollow markers, one per finite pole of the candidate.
    PolesPanel *poles = panelOf.template operator()<PolesPanel>();
    ASSERT_NE(poles, nullptr);
    ASSERT_TRUE(poles->hasOverlays());
    poles->overlayAction()->setChecked(true);
    auto *markers = qobject_cast<QScatterSeries *>(poles->series(QStringLiteral("Fast: poles")));
    ASSERT_NE(markers, nullptr);
    EXPECT_EQ(markers->count(), qsizetype(fast.poles.size()));
    EXPECT_EQ(markers->brush().style(), Qt::NoBrush);
    EXPECT_EQ(markers->pen().color(), overlayColour(0));
    QApplication::processEvents();
    EXPECT_TRUE(poles->legendLabels().contains(QStringLiteral("High gain: poles")));
}

TEST_F(CandidatesTest, SheetAndScreenNameEveryCurveAndOverlayAlike)
{
    // Every panel's overlays on, as the Design menu's toggle does.
    for (PlotPanel *p : window->panels()) {
        if (p->hasOverlays())
            p->overlayAction()->setChecked(true);
    }
    QApplication::processEvents();
    QTemporaryDir dir;
    ASSERT_TRUE(dir.isValid());
    const QString pdf = dir.filePath(QStringLiteral("sheet.pdf"));
    QString error;
    ASSERT_TRUE(renderReviewSheet(doc()->design(), *doc()->analysis(), pdf, SheetPageSize::A4,
                                  QStringLiteral("demo"), &error))
        << error.toStdString();
    const CliRun text = run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"});
    ASSERT_EQ(text.exitCode, 0) << text.err.toStdString();
    const std::string sheet = text.out.toStdString();

    // The sheet's own curves carry the names the panels' legends carry (one table).
    const PlotCurve drawnOnBoth[]
        = {PlotCurve::LoopGain, PlotCurve::GainExact,   PlotCurve::GainTwoPort,
           PlotCurve::ZIn,      PlotCurve::ZOut,        PlotCurve::Desensitivity,
           PlotCurve::Step,     PlotCurve::NoiseOutput, PlotCurve::NoiseInput};
    for (PlotCurve curve : drawnOnBoth) {
        const QString name = curveName(curve);
        EXPECT_THAT(sheet, HasSubstr(name.toStdString()));
        bool onScreen = false;
        for (PlotPanel *p : window->panels())
            onScreen = onScreen || p->legendLabels().contains(name);
        EXPECT_TRUE(onScreen) << name.toStdString();
    }
    EXPECT_EQ(LoopGainPanel::kT, QStringLiteral("T (return ratio)"));
    EXPECT_THAT(sheet, Not(HasSubstr("|T| (return ratio)")));

    // Every overlay legend entry of the screen's panels ("Fast: T, gain", "Fast: poles") is
    // on the sheet too, and each names every overlay curve's quantity.
    QStringList candidates;
    for (const Candidate &c : doc()->design().candidates)
        candidates << toQString(c.name);
    int overlays = 0, entries = 0;
    for (PlotPanel *p : window->panels()) {
        overlays += int(p->overlaySeriesNames().size());
        for (const QString &label : p->legendLabels()) {
            const qsizetype colon = label.indexOf(QStringLiteral(": "));
            if (colon < 0 || !candidates.contains(label.left(colon)))
                continue;
            ++entries;
            EXPECT_THAT(sheet, HasSubstr(label.toStdString())) << p->objectName().toStdString();
            const QString prefix = label.left(colon + 2);
            const QStringList quantities = label.mid(colon + 2).split(QStringLiteral(", "));
            for (const QString &name : p->overlaySeriesNames()) {
                if (name.startsWith(prefix)) {
                    EXPECT_TRUE(quantities.contains(name.mid(prefix.size())))
                        << label.toStdString() << " / " << name.toStdString();
                }
            }
        }
    }
    // Two candidates: T, gain, z_in, z_out, |1 + T|, step, poles, output noise each; one
    // legend entry per candidate on each of the six plots.
    EXPECT_EQ(overlays, 2 * 8);
    EXPECT_EQ(entries, 2 * 6);
    for (const QString &c : candidates) {
        EXPECT_THAT(
            sheet,
            HasSubstr(
                overlayLegendText(c, {PlotCurve::LoopGain, PlotCurve::GainExact}).toStdString()));
        EXPECT_THAT(sheet, HasSubstr(overlayName(c, PlotCurve::Step).toStdString()));
    }

    // The comparison on paper is the panel's: every row title and every cell's text.
    for (const QString &row : panel()->rowNames()) {
        EXPECT_THAT(sheet, HasSubstr(row.toStdString()));
        for (const QString &column : panel()->columnNames())
            EXPECT_THAT(sheet, HasSubstr(panel()->cellText(row, column).toStdString()))
                << row.toStdString() << " / " << column.toStdString();
    }
}

} // namespace
