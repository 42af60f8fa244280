// The Noise panel and the Readout's noise cell against core's NoiseAnalysis: one band per
// source plus the total, the stack's top equal to core's total density, the linked cursor,
// the integrated RMS text, and the reason shown when there is no noise analysis.

#include "demowindowtest.h"
#include "panels/noisepanel.h"
#include "panels/panels.h"
#include "panels/readout.h"
#include "support/qtadapter.h"
#include "testwindow.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"
#include "windowchecks.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"
#include "numeric.h"

#include <QApplication>
#include <QAreaSeries>
#include <QChart>
#include <QDockWidget>
#include <QFile>
#include <QLegend>
#include <QLegendMarker>
#include <QLineSeries>
#include <QMouseEvent>
#include <QRegularExpression>
#include <QStandardPaths>
#include <QTest>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <memory>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

using loopsketch::test::relErr;

namespace {

const QString kDemo = QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch");

/// The demo with the gain block's voltage and current noise given (invented values).
std::string demoWithGainBlockNoise()
{
    QFile f(kDemo);
    EXPECT_TRUE(f.open(QIODevice::ReadOnly));
    std::string text = f.readAll().toStdString();
    const std::string rOut = R"("r_out": "50")";
    const auto at = text.find(rOut);
    EXPECT_NE(at, std::string::npos);
    text.replace(at, rOut.size(),
                 R"("r_out": "50", "en": "9n", "en_corner_hz": "300", "in": "3f")");
    return text;
}

/// The sweep index nearest `hz`.
std::size_t indexNear(const std::vector<double> &f, double hz)
{
    std::size_t best = 0;
    for (std::size_t i = 0; i < f.size(); ++i) {
        if (std::abs(std::log10(f[i] / hz)) < std::abs(std::log10(f[best] / hz)))
            best = i;
    }
    return best;
}

class NoisePanelTest : public DemoWindowTest
{
protected:
    void SetUp() override
    {
        DemoWindowTest::SetUp();
        if (HasFatalFailure())
            return;
        QDockWidget *dock = window->findChild<QDockWidget *>(QStringLiteral("NoiseDock"));
        ASSERT_NE(dock, nullptr);
        dock->raise();
        QTest::qWait(100);
        for (PlotPanel *p : window->panels()) {
            if (auto *n = qobject_cast<NoisePanel *>(p))
                panel = n;
        }
        ASSERT_NE(panel, nullptr);
        ASSERT_NE(window->document()->analysis(), nullptr);
        ASSERT_TRUE(window->document()->analysis()->noise.has_value());
    }

    const NoiseAnalysis &noise() const { return *window->document()->analysis()->noise; }

    /// The density at sweep index i of the top of the stack.
    double stackTopAt(std::size_t i) const
    {
        const QStringList names = panel->bandNames();
        EXPECT_FALSE(names.isEmpty());
        QAreaSeries *top = panel->band(names.back());
        EXPECT_NE(top, nullptr);
        const QList<QPointF> points = panel->fullPoints(top->upperSeries());
        EXPECT_EQ(points.size(), qsizetype(noise().frequenciesHz.size()));
        EXPECT_NEAR(points[qsizetype(i)].x(), std::log10(noise().frequenciesHz[i]), 1e-12);
        return std::pow(10.0, points[qsizetype(i)].y());
    }

    NoisePanel *panel = nullptr;
};

TEST_F(NoisePanelTest, OneBandPerSourcePlusTotalAndInputReferred)
{
    const NoiseAnalysis &n = noise();
    ASSERT_GE(n.contributions.size(), 2u);
    const QStringList names = panel->bandNames();
    ASSERT_EQ(names.size(), qsizetype(n.contributions.size()));
    for (const NoiseContribution &c : n.contributions) {
        EXPECT_TRUE(names.contains(noiseSourceName(c))) << c.name;
        QAreaSeries *b = panel->band(noiseSourceName(c));
        ASSERT_NE(b, nullptr) << c.name;
        EXPECT_NE(b->chart(), nullptr) << c.name;
    }
    EXPECT_TRUE(names.contains(QStringLiteral("RF thermal")));
    EXPECT_TRUE(names.contains(QStringLiteral("PD1 r_parallel thermal")));
    // The demo's noise is set by RF (4kT/RF through the feedback resistor), so its band
    // lies at the bottom of the stack, right under the total.
    EXPECT_EQ(names.front(), QStringLiteral("RF thermal"));
    ASSERT_NE(panel->series(NoisePanel::kTotal), nullptr);
    ASSERT_NE(panel->series(NoisePanel::kInput), nullptr);
    // Every finite point of core's total density, unchanged (x = log10 f, y = log10 density).
    const QList<QPointF> total = panel->fullPoints(panel->series(NoisePanel::kTotal));
    ASSERT_EQ(total.size(), qsizetype(n.outputDensity.size()));
    for (qsizetype i = 0; i < total.size(); ++i)
        ASSERT_NEAR(std::pow(10.0, total[i].y()), n.outputDensity[std::size_t(i)],
                    1e-12 * n.outputDensity[std::size_t(i)]);
    const QList<QPointF> input = panel->fullPoints(panel->series(NoisePanel::kInput));
    ASSERT_EQ(input.size(), qsizetype(n.inputDensity.size()));
    EXPECT_NEAR(std::pow(10.0, input[0].y()), n.inputDensity[0], 1e-12 * n.inputDensity[0]);
    EXPECT_TRUE(panel->problemText().isEmpty());
    // The legend names the sources that reach a few % of the power somewhere: RF; the
    // photodiode's 500 MΩ shunt adds RF/R_sh = 0.2 % of RF's power at low frequency and never
    // gets there (core's shares). The gain block's r_in and r_out are noiseless: no band.
    const auto legendShows = [&](const char *name) {
        const auto markers
            = panel->chart()->legend()->markers(panel->band(QString::fromUtf8(name)));
        return !markers.isEmpty() && markers.front()->isVisible();
    };
    EXPECT_TRUE(legendShows("RF thermal"));
    EXPECT_FALSE(legendShows("PD1 r_parallel thermal")) << panel->toolTip().toStdString();
    EXPECT_EQ(panel->band(QStringLiteral("U1 r_in thermal")), nullptr);
    EXPECT_EQ(panel->band(QStringLiteral("U1 r_out thermal")), nullptr);
    // Such a band is thinner than its outline: not drawn, its power still in the stack.
    EXPECT_TRUE(panel->band(QStringLiteral("RF thermal"))->isVisible());
    ASSERT_NE(panel->band(QStringLiteral("PD1 r_parallel thermal")), nullptr);
    EXPECT_FALSE(panel->band(QStringLiteral("PD1 r_parallel thermal"))->isVisible());
    // Axis titles carry the units of a transimpedance stage: V at the output, A at the input.
    const auto axes = panel->chart()->axes(Qt::Vertical);
    QStringList titles;
    for (const QAbstractAxis *axis : axes)
        titles << axis->titleText();
    EXPECT_THAT(titles.join('|').toStdString(), HasSubstr("V/√Hz"));
    EXPECT_THAT(titles.join('|').toStdString(), HasSubstr("A/√Hz"));
}

TEST_F(NoisePanelTest, StackTopEqualsTotalDensity)
{
    // Uncorrelated sources add in power (common practice; the core test
    // Noise.ContributionsAddInPower holds core to it): the stack's top is the total.
    const NoiseAnalysis &n = noise();
    for (double hz : {1.0, 1e3, 1e5, 1e7}) {
        const std::size_t i = indexNear(n.frequenciesHz, hz);
        EXPECT_LT(relErr(stackTopAt(i), n.outputDensity[i]), 1e-9) << hz << " Hz";
    }
    // Each band's height, from the plot's bottom to the total on the log axis, is its
    // source's share of the power at that frequency (core's per-source output power over
    // core's total).
    for (double hz : {1e3, 3e6, 1e8}) {
        const std::size_t i = indexNear(n.frequenciesHz, hz);
        const double yBottom
            = panel->fullPoints(panel->band(panel->bandNames().front())->lowerSeries()).front().y();
        const double yTop = std::log10(n.outputDensity[i]);
        const double total = n.outputDensity[i] * n.outputDensity[i];
        double sum = 0;
        for (const NoiseContribution &c : n.contributions) {
            QAreaSeries *b = panel->band(noiseSourceName(c));
            ASSERT_NE(b, nullptr);
            const double upper = panel->fullPoints(b->upperSeries())[qsizetype(i)].y();
            const QList<QPointF> lowerPoints = panel->fullPoints(b->lowerSeries());
            const double lower
                = lowerPoints.size() == 2 ? lowerPoints.front().y() : lowerPoints[qsizetype(i)].y();
            const double share = (upper - lower) / (yTop - yBottom);
            EXPECT_NEAR(share, c.outputPsd[i] / total, 1e-9) << c.name << " at " << hz << " Hz";
            sum += share;
        }
        EXPECT_NEAR(sum, 1.0, 1e-9) << hz << " Hz";
    }
}

TEST_F(NoisePanelTest, GainBlockNoiseSourcesGetTheirOwnBands)
{
    QString error;
    ASSERT_TRUE(window->openText(demoWithGainBlockNoise(), QStringLiteral("noisy"), &error))
        << error.toStdString();
    ASSERT_TRUE(window->document()->waitForAnalysis());
    QApplication::processEvents();
    const NoiseAnalysis &n = noise();
    const QStringList names = panel->bandNames();
    ASSERT_EQ(names.size(), qsizetype(n.contributions.size()));
    for (const char *name : {"U1 e_n", "U1 i_n at in_n", "RF thermal"})
        EXPECT_TRUE(names.contains(QString::fromUtf8(name))) << name;
    // in_p is on ground: its current noise flows to ground and reaches nothing
    EXPECT_FALSE(names.contains(QStringLiteral("U1 i_n at in_p")));
    for (double hz : {10.0, 1e4, 1e6, 1e8}) {
        const std::size_t i = indexNear(n.frequenciesHz, hz);
        EXPECT_LT(relErr(stackTopAt(i), n.outputDensity[i]), 1e-9) << hz << " Hz";
    }
    QTest::qWait(100);
    const QImage shot = panel->grab().toImage();
    EXPECT_TRUE(
        shot.save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-noise-gain-block.png"));
    // What is painted, not only the data: at 2 Hz the 1/f voltage noise (9 nV/√Hz with a
    // 300 Hz corner, about 110 nV/√Hz there, against RF's 128 nV/√Hz) holds a large part
    // of the height, and the pixel in the middle of its band has its fill colour.
    {
        const std::size_t i = indexNear(n.frequenciesHz, 2.0);
        QAreaSeries *en = panel->band(QStringLiteral("U1 e_n"));
        ASSERT_NE(en, nullptr);
        ASSERT_TRUE(en->isVisible());
        // the bottom band's lower edge is the plot's floor, two points
        const QList<QPointF> lowerPoints = panel->fullPoints(en->lowerSeries());
        const double lower
            = lowerPoints.size() == 2 ? lowerPoints.front().y() : lowerPoints[qsizetype(i)].y();
        const double yMid = 0.5 * (lower + panel->fullPoints(en->upperSeries())[qsizetype(i)].y());
        const QPointF inChart
            = panel->chart()->mapToPosition(QPointF(std::log10(n.frequenciesHz[i]), yMid), en);
        const QPoint pixel = panel->mapFromScene(panel->chart()->mapToScene(inChart));
        const QColor painted = shot.pixelColor(pixel * shot.devicePixelRatio());
        const QColor fill = en->brush().color();
        // the fill (Okabe-Ito yellow at alpha 150) over the white plot
        const double a = fill.alphaF();
        const auto over = [a](int c) {
            return a * c + (1 - a) * 255;
        };
        EXPECT_NEAR(painted.red(), over(fill.red()), 12) << pixel.x() << "," << pixel.y();
        EXPECT_NEAR(painted.green(), over(fill.green()), 12);
        EXPECT_NEAR(painted.blue(), over(fill.blue()), 12);
    }
    // Back to the demo: the extra bands leave the chart and the legend.
    ASSERT_TRUE(window->openFile(kDemo, &error)) << error.toStdString();
    ASSERT_TRUE(window->document()->waitForAnalysis());
    QApplication::processEvents();
    EXPECT_EQ(panel->bandNames().size(), qsizetype(noise().contributions.size()));
    int inChart = 0;
    for (QAbstractSeries *s : panel->chart()->series())
        inChart += s->type() == QAbstractSeries::SeriesTypeArea;
    EXPECT_EQ(inChart, int(noise().contributions.size()));
    EXPECT_LT(relErr(stackTopAt(100), noise().outputDensity[100]), 1e-9);
}

TEST_F(NoisePanelTest, CursorMovesWithTheOtherPanels)
{
    QTest::qWait(200); // the dock layout settles (tab bars take their room)
    LoopGainPanel *loop = window->loopGainPanel();
    // The frequency of the pixel the event carries (the plot's centre rounded to it).
    const double log10Hz = loopsketch::ui::test::hoverLoopGainCentre(loop);
    const QString fText
        = QStringLiteral("f = ") + toQString(formatEngineering(std::pow(10.0, log10Hz), 3, "Hz"));
    EXPECT_EQ(panel->cursorText(), fText);
    EXPECT_EQ(loop->cursorText().section('\n', 0, 0), fText);
    // The values under it are core's at the nearest sweep point.
    const NoiseAnalysis &n = noise();
    const std::size_t i = indexNear(n.frequenciesHz, std::pow(10.0, log10Hz));
    const std::string values = panel->valuesText().toStdString();
    // Named as the legend names the curves (the curve table).
    EXPECT_THAT(values,
                HasSubstr(NoisePanel::kTotal.toStdString() + ": "
                          + formatEngineering(n.outputDensity[i], 3, "V/√Hz")));
    EXPECT_THAT(values,
                HasSubstr(NoisePanel::kInput.toStdString() + ": "
                          + formatEngineering(n.inputDensity[i], 3, "A/√Hz")));
    EXPECT_THAT(values, HasSubstr("RF thermal: "));
    window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-noise-cursor.png");

    QEvent leave(QEvent::Leave);
    QApplication::sendEvent(loop, &leave);
    EXPECT_TRUE(panel->cursorText().isEmpty());
    EXPECT_TRUE(panel->valuesText().isEmpty());
}

TEST_F(NoisePanelTest, ReadoutShowsCoreRmsWithTheBand)
{
    // core's own analysis of the same file, formatted as the Readout promises.
    auto design = loadDesign(kDemo.toStdString());
    ASSERT_TRUE(design) << design.errorText();
    auto a = analyze(*design);
    ASSERT_TRUE(a) << a.errorText();
    ASSERT_TRUE(a->noise && a->noise->outputRms && a->noise->inputRms);
    const NoiseAnalysis &n = *a->noise;
    const QString title = QStringLiteral("rms noise, ")
        + toQString(formatEngineering(n.bandLowHz, 3, "Hz")) + QStringLiteral("–")
        + toQString(formatEngineering(n.bandHighHz, 3, "Hz"));
    const QString want = toQString(formatEngineering(*n.outputRms, 3, "V")) + QStringLiteral(" / ")
        + toQString(formatEngineering(*n.inputRms, 3, "A"));
    EXPECT_EQ(window->readout()->cellText(title), want);
    // The strip sets the window's minimum width; with the noise cell it still fits a
    // 1280 px wide screen (common practice for a laptop-sized minimum).
    EXPECT_LE(window->readout()->minimumSizeHint().width(), 1280);
    EXPECT_THAT(window->readout()->plainText().toStdString(), testing::Not(HasSubstr("nan")));
    EXPECT_THAT(panel->summaryText().toStdString(),
                HasSubstr(want.section(" / ", 0, 0).toStdString()));
    // how the band was set, in the title; the whole method in the tooltip (issue 12)
    EXPECT_THAT(panel->summaryText().toStdString(), HasSubstr("(to convergence)"));
    EXPECT_THAT(panel->toolTip().toStdString(), HasSubstr(n.bandMethod));
}

TEST_F(NoisePanelTest, WritesAScreenshot)
{
    QTest::qWait(300);
    EXPECT_TRUE(window->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                    + "/loopsketch-noise-window.png"));
    EXPECT_TRUE(panel->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                   + "/loopsketch-noise-panel.png"));
}

/// Every example design: the axes carry the units its gain implies, the stack's top is the
/// total, and a screenshot of the panel is left for inspection.
class NoiseExample : public ::testing::TestWithParam<const char *>
{
};

TEST_P(NoiseExample, UnitsAndStackTopFollowTheDesign)
{
    MainWindow window;
    loopsketch::ui::test::showTestWindow(window);
    QString error;
    const QString path = QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/%1.loopsketch").arg(GetParam());
    ASSERT_TRUE(window.openFile(path, &error)) << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    window.findChild<QDockWidget *>(QStringLiteral("NoiseDock"))->raise();
    QTest::qWait(150);
    NoisePanel *panel = nullptr;
    for (PlotPanel *p : window.panels()) {
        if (auto *n = qobject_cast<NoisePanel *>(p))
            panel = n;
    }
    ASSERT_NE(panel, nullptr);
    const Analysis &a = *window.document()->analysis();
    ASSERT_TRUE(a.noise.has_value()) << a.noiseProblem;
    // "V/A": output density in V/√Hz, input-referred in A/√Hz (core/README.md §3, signs and gains).
    const QString unit = toQString(a.gainUnit);
    const QString out = unit.section('/', 0, 0), in = unit.section('/', 1, 1);
    QStringList titles;
    for (const QAbstractAxis *axis : panel->chart()->axes(Qt::Vertical))
        titles << axis->titleText();
    // "output (V/√Hz)", or the unit alone where the plot is short; then the cumulative rms
    ASSERT_EQ(titles.size(), 3);
    EXPECT_EQ(titles[2], QStringLiteral("cumulative rms (%1)").arg(out));
    EXPECT_TRUE(QRegularExpression(QStringLiteral("^(output \\()?%1/√Hz(\\))?$").arg(out))
                    .match(titles[0])
                    .hasMatch())
        << titles.join('|').toStdString();
    EXPECT_TRUE(QRegularExpression(QStringLiteral("^(input \\()?%1/√Hz(\\))?$").arg(in))
                    .match(titles[1])
                    .hasMatch())
        << titles.join('|').toStdString();
    const NoiseAnalysis &n = *a.noise;
    const QStringList names = panel->bandNames();
    ASSERT_EQ(names.size(), qsizetype(n.contributions.size()));
    const QList<QPointF> top = panel->fullPoints(panel->band(names.back())->upperSeries());
    ASSERT_EQ(top.size(), qsizetype(n.frequenciesHz.size()));
    const std::size_t i = indexNear(n.frequenciesHz, 1e3);
    EXPECT_LT(relErr(std::pow(10.0, top[qsizetype(i)].y()), n.outputDensity[i]), 1e-9);
    EXPECT_TRUE(panel->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                   + QStringLiteral("/loopsketch-noise-%1.png").arg(GetParam())));
}

INSTANTIATE_TEST_SUITE_P(Examples, NoiseExample,
                         ::testing::Values("contact-mic-preamp", "excitation-current-driver",
                                           "gas-cell-current-amplifier",
                                           "turbidity-probe-front-end"),
                         [](const ::testing::TestParamInfo<const char *> &param) {
                             std::string name = param.param;
                             std::erase(name, '-');
                             return name;
                         });

TEST(NoisePanelTab, DrawsTheLatestAnalysisWhenItsTabIsRaised)
{
    MainWindow window;
    loopsketch::ui::test::showTestWindow(window);
    QString error;
    ASSERT_TRUE(window.openFile(kDemo, &error)) << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    QApplication::processEvents();
    NoisePanel *panel = nullptr;
    for (PlotPanel *p : window.panels()) {
        if (auto *n = qobject_cast<NoisePanel *>(p))
            panel = n;
    }
    ASSERT_NE(panel, nullptr);
    // Behind the Impedance tab by default, once the dock layout has run (a tab behind
    // another stays visible but is moved off screen).
    QTest::qWait(200);
    const auto onScreen = [&](QWidget *w) {
        return QRect(w->mapTo(&window, QPoint(0, 0)), w->size()).intersects(window.rect());
    };
    ASSERT_FALSE(onScreen(panel));
    ASSERT_TRUE(onScreen(window.panels()[1]));
    // A new analysis while hidden is kept, not drawn: the bands are still the demo's.
    ASSERT_TRUE(window.openText(demoWithGainBlockNoise(), QStringLiteral("noisy"), &error))
        << error.toStdString();
    ASSERT_TRUE(window.document()->waitForAnalysis());
    QApplication::processEvents();
    const NoiseAnalysis &n = *window.document()->analysis()->noise;
    ASSERT_GT(n.contributions.size(), 4u); // PD1 r_parallel, RF, RL, e_n, i_n at in_n
    EXPECT_FALSE(panel->bandNames().contains(QStringLiteral("U1 e_n")));
    window.findChild<QDockWidget *>(QStringLiteral("NoiseDock"))->raise();
    QApplication::processEvents();
    ASSERT_TRUE(onScreen(panel));
    EXPECT_EQ(panel->bandNames().size(), qsizetype(n.contributions.size()));
    EXPECT_TRUE(panel->bandNames().contains(QStringLiteral("U1 e_n")));
    const QList<QPointF> total = panel->fullPoints(panel->series(NoisePanel::kTotal));
    ASSERT_EQ(total.size(), qsizetype(n.outputDensity.size()));
    EXPECT_LT(relErr(std::pow(10.0, total[200].y()), n.outputDensity[200]), 1e-12);
}

TEST(NoisePanelAlone, SaysWhyWhenThereIsNoNoise)
{
    auto design = loadDesign(kDemo.toStdString());
    ASSERT_TRUE(design) << design.errorText();
    auto a = analyze(*design);
    ASSERT_TRUE(a) << a.errorText();
    NoisePanel panel;
    panel.resize(600, 360);
    panel.show();
    panel.showAnalysis(*a);
    EXPECT_FALSE(panel.bandNames().isEmpty());
    Analysis without = *a;
    without.noise.reset();
    without.noiseProblem = "noise: the circuit has no solution at 12 Hz";
    panel.showAnalysis(without);
    EXPECT_THAT(panel.problemText().toStdString(),
                HasSubstr("No noise analysis: the circuit has no solution at 12 Hz"));
    EXPECT_TRUE(panel.bandNames().isEmpty());
    EXPECT_TRUE(panel.fullPoints(panel.series(NoisePanel::kTotal)).isEmpty());
    EXPECT_TRUE(panel.grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                  + "/loopsketch-noise-absent.png"));
    Readout readout;
    readout.showAnalysis(without, *design);
    EXPECT_EQ(readout.cellText(QStringLiteral("rms noise")), QStringLiteral("—"));
    // And back: the plot returns, the message goes.
    panel.showAnalysis(*a);
    EXPECT_TRUE(panel.problemText().isEmpty());
    EXPECT_EQ(panel.bandNames().size(), qsizetype(a->noise->contributions.size()));
}

} // namespace

// Issue 18: the cumulative output rms is core's, drawn on its own axis, and climbs to the rms
// over the sweep; the figures box shows the spot noise at the design's noise_spot_hz, the SNR
// and the slew rate; the Readout adds the SNR and colours the noise cell by the noise specs.
TEST(NoisePanelAlone, CumulativeRmsSpotNoiseAndSnr)
{
    auto design
        = loadDesign(std::string(LOOPSKETCH_DESIGNS_DIR) + "/turbidity-probe-front-end.loopsketch");
    ASSERT_TRUE(design) << design.errorText();
    auto a = analyze(*design);
    ASSERT_TRUE(a) << a.errorText();
    ASSERT_TRUE(a->noise && a->noise->snrDb);
    const NoiseAnalysis &n = *a->noise;
    NoisePanel panel;
    panel.resize(700, 420);
    panel.show();
    panel.showAnalysis(*a);
    const QList<QPointF> cumulative = panel.fullPoints(panel.cumulativeSeries());
    ASSERT_EQ(cumulative.size(), qsizetype(n.frequenciesHz.size() - 1)); // the first is 0
    EXPECT_LT(relErr(std::pow(10.0, cumulative.back().y()), n.cumulativeRms.back()), 1e-12);
    for (qsizetype i = 1; i < cumulative.size(); ++i)
        EXPECT_GE(cumulative[i].y(), cumulative[i - 1].y());
    const std::string figures = panel.figuresText().toStdString();
    EXPECT_THAT(figures, HasSubstr("spot at 1 MHz"));
    EXPECT_THAT(figures,
                HasSubstr(QStringLiteral("SNR %1 dB").arg(*n.snrDb, 0, 'f', 1).toStdString()));
    EXPECT_THAT(figures, HasSubstr("slew rate"));
    EXPECT_THAT(figures, HasSubstr("peak-to-peak"));
    EXPECT_TRUE(panel.grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR)
                                  + "/loopsketch-noise-cumulative.png"));
    Readout readout;
    readout.showAnalysis(*a, *design);
    EXPECT_THAT(readout.plainText().toStdString(),
                HasSubstr(QStringLiteral("SNR %1 dB").arg(*n.snrDb, 0, 'f', 1).toStdString()));
}
