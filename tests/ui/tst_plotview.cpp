// Plots you can read: zoom, pan and reset on every frequency and time plot, and the Poles
// panel's log-magnitude radial scale with the demo's poles, all through the real mouse and
// wheel event paths.

#include "demowindowtest.h"
#include "panels/nyquistpanel.h"
#include "panels/panels.h"
#include "support/columnthinning.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"
#include "windowchecks.h"

#include <QAction>
#include <QApplication>
#include <QCategoryAxis>
#include <QChart>
#include <QDockWidget>
#include <QLegendMarker>
#include <QMenu>
#include <QMenuBar>
#include <QRegularExpression>
#include <QSignalSpy>
#include <QTest>
#include <QValueAxis>
#include <QWheelEvent>
#include <QXYSeries>

#include "loopsketch/design/designfile.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <complex>

using namespace loopsketch;
using namespace loopsketch::ui;

namespace {

class PlotViewTest : public DemoWindowTest
{
protected:
    /// The panels over frequency or time (every panel but Poles); the Noise panel's dock is
    /// raised first so that it has a size.
    std::vector<PlotPanel *> curvePanels() const
    {
        std::vector<PlotPanel *> out;
        for (PlotPanel *p : window->panels()) {
            if (!qobject_cast<PolesPanel *>(p))
                out.push_back(p);
        }
        return out;
    }

    static QValueAxis *axisOf(PlotPanel *panel, Qt::Orientation orientation)
    {
        const auto axes = panel->chart()->axes(orientation);
        return axes.isEmpty() ? nullptr : qobject_cast<QValueAxis *>(axes.front());
    }

    static QPoint plotCentre(PlotPanel *panel)
    {
        const QPointF c = panel->chart()->plotArea().center();
        return panel->mapFromScene(panel->chart()->mapToScene(c));
    }

    static void wheel(PlotPanel *panel, QPoint at, int notches)
    {
        QWheelEvent event(QPointF(at), QPointF(panel->viewport()->mapToGlobal(at)), QPoint(),
                          QPoint(0, 120 * notches), Qt::NoButton, Qt::NoModifier, Qt::NoScrollPhase,
                          false);
        QApplication::sendEvent(panel->viewport(), &event);
    }

    /// The frequency (or time) value at a viewport pixel column.
    static double xValueAt(PlotPanel *panel, int x)
    {
        const QRectF plot = panel->chart()->plotArea();
        QValueAxis *axis = axisOf(panel, Qt::Horizontal);
        const QPointF at = panel->chart()->mapFromScene(panel->mapToScene(QPoint(x, 0)));
        return axis->min() + (at.x() - plot.left()) / plot.width() * (axis->max() - axis->min());
    }

    void raise(const char *dock)
    {
        window->findChild<QDockWidget *>(dock)->raise();
        QApplication::processEvents();
    }
};

TEST_F(PlotViewTest, WheelZoomsEveryCurvePanelAboutThePointerAndDoubleClickResets)
{
    raise("NoiseDock");
    for (PlotPanel *panel : curvePanels()) {
        if (panel->objectName() == QStringLiteral("Impedance"))
            raise("ImpedanceDock");
        SCOPED_TRACE(panel->objectName().toStdString());
        QValueAxis *x = axisOf(panel, Qt::Horizontal);
        QValueAxis *y = axisOf(panel, Qt::Vertical);
        ASSERT_NE(x, nullptr);
        ASSERT_NE(y, nullptr);
        const double x0 = x->min(), x1 = x->max(), y0 = y->min(), y1 = y->max();
        ASSERT_GT(x1, x0);
        const QPoint centre = plotCentre(panel);
        const double fixed = xValueAt(panel, centre.x());
        wheel(panel, centre, 2); // two notches in: 0.8^2 of each range
        EXPECT_TRUE(panel->isZoomed());
        EXPECT_NEAR(x->max() - x->min(), 0.64 * (x1 - x0), 1e-9 * (x1 - x0));
        EXPECT_NEAR(y->max() - y->min(), 0.64 * (y1 - y0), 1e-9 * (y1 - y0));
        // The value under the pointer stays under it.
        EXPECT_NEAR(xValueAt(panel, centre.x()), fixed, 1e-6 * (x1 - x0));
        EXPECT_TRUE(panel->resetZoomAction()->isEnabled());

        QTest::mouseDClick(panel->viewport(), Qt::LeftButton, {}, centre);
        EXPECT_FALSE(panel->isZoomed());
        EXPECT_DOUBLE_EQ(x->min(), x0);
        EXPECT_DOUBLE_EQ(x->max(), x1);
        EXPECT_DOUBLE_EQ(y->min(), y0);
        EXPECT_DOUBLE_EQ(y->max(), y1);
        EXPECT_FALSE(panel->resetZoomAction()->isEnabled());
    }
}

TEST_F(PlotViewTest, WheelOverTheFrequencyAxisZoomsFrequencyOnly)
{
    PlotPanel *panel = window->loopGainPanel();
    QValueAxis *x = axisOf(panel, Qt::Horizontal);
    QValueAxis *y = axisOf(panel, Qt::Vertical);
    const double xSpan = x->max() - x->min(), y0 = y->min(), y1 = y->max();
    const QRectF plot = panel->chart()->plotArea();
    const QPoint below = panel->mapFromScene(
        panel->chart()->mapToScene(QPointF(plot.center().x(), plot.bottom() + 8)));
    wheel(panel, below, 1);
    EXPECT_NEAR(x->max() - x->min(), 0.8 * xSpan, 1e-9 * xSpan);
    EXPECT_DOUBLE_EQ(y->min(), y0);
    EXPECT_DOUBLE_EQ(y->max(), y1);
}

TEST_F(PlotViewTest, RubberBandZoomsToTheRectangleAndShowsTheCurveInFullDetail)
{
    PlotPanel *panel = window->loopGainPanel();
    QValueAxis *x = axisOf(panel, Qt::Horizontal);
    const QRectF plot = panel->chart()->plotArea();
    const QPoint from = panel->mapFromScene(panel->chart()->mapToScene(
        QPointF(plot.left() + 0.40 * plot.width(), plot.top() + 0.2 * plot.height())));
    const QPoint to = panel->mapFromScene(panel->chart()->mapToScene(
        QPointF(plot.left() + 0.55 * plot.width(), plot.top() + 0.6 * plot.height())));
    const double wantLo = xValueAt(panel, from.x()), wantHi = xValueAt(panel, to.x());
    QTest::mousePress(panel->viewport(), Qt::LeftButton, {}, from);
    QTest::mouseMove(panel->viewport(), (from + to) / 2);
    QTest::mouseMove(panel->viewport(), to);
    QTest::mouseRelease(panel->viewport(), Qt::LeftButton, {}, to);
    ASSERT_TRUE(panel->isZoomed());
    // Pixel-exact ends: within one pixel's worth of the old range.
    const double pixel = (wantHi - wantLo) / (to.x() - from.x());
    EXPECT_NEAR(x->min(), wantLo, pixel);
    EXPECT_NEAR(x->max(), wantHi, pixel);

    // Zoomed in, the curve is thinned for the range shown: there are fewer sweep points in
    // it than pixel columns, so every one of them is drawn.
    QXYSeries *t = panel->series(LoopGainPanel::kT);
    ASSERT_NE(t, nullptr);
    int full = 0, drawn = 0;
    for (const QPointF &p : panel->fullPoints(t))
        full += p.x() >= x->min() && p.x() <= x->max();
    for (const QPointF &p : t->points())
        drawn += p.x() >= x->min() && p.x() <= x->max();
    ASSERT_GT(full, 20);
    EXPECT_EQ(drawn, full);

    // Decade labels alone would leave a zoomed axis bare: 2 and 5 times a decade appear.
    auto *decades = qobject_cast<QCategoryAxis *>(x);
    ASSERT_NE(decades, nullptr);
    const QStringList labels = decades->categoriesLabels();
    bool inside = false;
    for (const QString &l : labels)
        inside = inside || l.startsWith(QLatin1Char('2')) || l.startsWith(QLatin1Char('5'));
    EXPECT_TRUE(inside) << labels.join(QLatin1Char(' ')).toStdString();
}

TEST_F(PlotViewTest, MiddleDragPansAndTheViewOutlivesAnEdit)
{
    PlotPanel *panel = window->loopGainPanel();
    QValueAxis *x = axisOf(panel, Qt::Horizontal);
    const QPoint centre = plotCentre(panel);
    wheel(panel, centre, 3);
    const double lo = x->min(), hi = x->max();
    const double perPixel = (hi - lo) / panel->chart()->plotArea().width();
    QTest::mousePress(panel->viewport(), Qt::MiddleButton, {}, centre);
    QTest::mouseMove(panel->viewport(), centre + QPoint(40, 0));
    QTest::mouseRelease(panel->viewport(), Qt::MiddleButton, {}, centre + QPoint(40, 0));
    // Dragging right brings lower frequencies into view.
    EXPECT_NEAR(x->min(), lo - 40 * perPixel, 1e-9);
    EXPECT_NEAR(x->max(), hi - 40 * perPixel, 1e-9);

    // An edit re-analyses; the user's view stays where it was.
    const double panLo = x->min(), panHi = x->max();
    doc()->stepPart("RF", 1, false);
    QSignalSpy spy(doc(), &DesignDocument::analysisChanged);
    ASSERT_TRUE(spy.wait(5000));
    EXPECT_DOUBLE_EQ(x->min(), panLo);
    EXPECT_DOUBLE_EQ(x->max(), panHi);
    EXPECT_TRUE(panel->isZoomed());
}

TEST_F(PlotViewTest, ViewMenuResetsEveryPlot)
{
    for (PlotPanel *panel : window->panels())
        wheel(panel, plotCentre(panel), 1);
    QAction *reset = nullptr;
    for (QAction *menu : window->menuBar()->actions()) {
        if (menu->menu() && menu->text().remove(QLatin1Char('&')) == QStringLiteral("View")) {
            for (QAction *a : menu->menu()->actions()) {
                if (a->text() == QStringLiteral("Reset plot zoom"))
                    reset = a;
            }
        }
    }
    ASSERT_NE(reset, nullptr);
    EXPECT_FALSE(reset->shortcut().isEmpty());
    reset->trigger();
    for (PlotPanel *panel : window->panels())
        EXPECT_FALSE(panel->isZoomed()) << panel->objectName().toStdString();
}

/// The demo's closed-loop poles (core's analysis: a well-damped pair at about
/// -0.86 ± j0.17 Mrad/s and two real poles near -250 and -410 Mrad/s) are all on the plot,
/// the dominant pair clear of the origin and of each other, one marker per pole counted in
/// the legend.
TEST_F(PlotViewTest, PolesPanelShowsTheDemoDominantPairApartFromTheOrigin)
{
    auto *poles = qobject_cast<PolesPanel *>(window->panels()[4]);
    ASSERT_NE(poles, nullptr);
    QApplication::processEvents();
    const Analysis &a = *doc()->analysis();
    ASSERT_EQ(a.poles.size(), 4u);

    QXYSeries *markers = nullptr;
    for (QAbstractSeries *s : poles->chart()->series()) {
        if (s->name().startsWith(QStringLiteral("closed-loop poles")))
            markers = qobject_cast<QXYSeries *>(s);
    }
    ASSERT_NE(markers, nullptr);
    ASSERT_EQ(markers->count(), 4);
    // The legend's count is the markers' count.
    const QStringList legend = poles->legendLabels();
    ASSERT_EQ(legend.size(), 1);
    const auto count = QRegularExpression(QStringLiteral("\\((\\d+)\\)")).match(legend.front());
    ASSERT_TRUE(count.hasMatch()) << legend.front().toStdString();
    EXPECT_EQ(count.captured(1).toInt(), markers->count());

    const QRectF plot = poles->chart()->plotArea();
    auto pixel = [&](QPointF value) {
        return poles->chart()->mapToPosition(value, markers);
    };
    for (const QPointF &p : markers->points())
        EXPECT_TRUE(plot.contains(pixel(p))) << p.x() << ", " << p.y();

    // The dominant pair: the two poles of smallest |s|.
    std::vector<ClosedLoopPole> sorted = a.poles;
    std::sort(sorted.begin(), sorted.end(),
              [](const auto &l, const auto &r) { return std::abs(l.s) < std::abs(r.s); });
    EXPECT_NEAR(sorted[0].s.real(), -0.856e6, 0.01e6);
    EXPECT_NEAR(std::abs(sorted[0].s.imag()), 0.174e6, 0.01e6);
    const QPointF origin = pixel(QPointF(0, 0));
    const QPointF upper = pixel(poles->plotted(sorted[0].s));
    const QPointF lower = pixel(poles->plotted(sorted[1].s));
    const double markerSize = 10;
    EXPECT_GT(std::hypot(upper.x() - origin.x(), upper.y() - origin.y()), 3 * markerSize);
    EXPECT_GT(std::abs(upper.y() - lower.y()), markerSize);
    EXPECT_LT(upper.x(), origin.x()); // left half-plane, as on a linear plot
    // Each pole keeps its angle, so the damping reads off the plot: cos(angle) = zeta.
    const double angle = std::atan2(std::abs(upper.y() - origin.y()), origin.x() - upper.x());
    EXPECT_NEAR(std::cos(angle), sorted[0].damping, 0.01);
    // The far poles are farther out, in the order of their |s|.
    const QPointF far = pixel(poles->plotted(sorted[3].s));
    EXPECT_GT(origin.x() - far.x(), origin.x() - upper.x());

    // The pair's value is written beside it.
    const QStringList labels = poles->poleLabels();
    EXPECT_THAT(labels.join(QLatin1Char('|')).toStdString(), ::testing::HasSubstr("± j174k"));
    EXPECT_TRUE(
        poles->grab().save(QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR) + "/loopsketch-poles.png"));
}

TEST_F(PlotViewTest, PolesPanelKeepsCirclesRoundWhenZoomed)
{
    auto *poles = qobject_cast<PolesPanel *>(window->panels()[4]);
    ASSERT_NE(poles, nullptr);
    auto unitsPerPixel = [&] {
        const QRectF plot = poles->chart()->plotArea();
        auto *x = axisOf(poles, Qt::Horizontal);
        auto *y = axisOf(poles, Qt::Vertical);
        return std::pair((x->max() - x->min()) / plot.width(),
                         (y->max() - y->min()) / plot.height());
    };
    const auto [ux, uy] = unitsPerPixel();
    EXPECT_NEAR(ux, uy, 1e-9 * ux);
    // A flat rubber band on the s-plane grows to the plot's proportions.
    const QPoint c = plotCentre(poles);
    QTest::mousePress(poles->viewport(), Qt::LeftButton, {}, c - QPoint(40, 5));
    QTest::mouseMove(poles->viewport(), c + QPoint(40, 5));
    QTest::mouseRelease(poles->viewport(), Qt::LeftButton, {}, c + QPoint(40, 5));
    ASSERT_TRUE(poles->isZoomed());
    const auto [zx, zy] = unitsPerPixel();
    EXPECT_LT(zx, ux);
    EXPECT_NEAR(zx, zy, 1e-6 * zx);
}

} // namespace

namespace {

/// A smooth curve over nine decades at 1,000 points per decade (log10 f across, dB up) with one
/// sample far above its neighbours at `peak` and one far below at `notch`.
QList<QPointF> curveWithSpikes(qsizetype peak, qsizetype notch)
{
    QList<QPointF> points;
    for (int i = 0; i <= 9000; ++i) {
        const double x = i / 1000.0;
        points.append({x, 60.0 - 20.0 * x + 0.5 * std::sin(40.0 * x)});
    }
    points[peak].ry() += 30.0;
    points[notch].ry() -= 30.0;
    return points;
}

} // namespace

// Min/max decimation for drawing (common practice: each pixel column keeps its extremes, so
// what the eye sees of a dense curve is unchanged): a one-sample peak and notch survive, the
// points stay in order and unchanged, and no more than two per column remain.
TEST(ColumnThinning, OneSamplePeakAndNotchSurviveWithinTwoPointsPerColumn)
{
    const QList<QPointF> points = curveWithSpikes(4321, 7007);
    const double plotWidthPx = 600.0, columnPx = 3.0;
    const double columns = plotWidthPx / columnPx;
    const QList<QPointF> kept = thinToColumns(points, 0.0, 9.0 / columns);
    EXPECT_LE(kept.size(), qsizetype(2 * (columns + 1) + 2));
    EXPECT_LE(kept.size(), qsizetype(2 * plotWidthPx));
    EXPECT_GE(kept.size(), qsizetype(columns)) << "thinned past one point per column";
    const auto has = [&](const QPointF &p) {
        return std::any_of(kept.begin(), kept.end(),
                           [&](const QPointF &q) { return q.x() == p.x() && q.y() == p.y(); });
    };
    EXPECT_TRUE(has(points[4321])) << "the peak was lost";
    EXPECT_TRUE(has(points[7007])) << "the notch was lost";
    EXPECT_TRUE(has(points.front()));
    EXPECT_TRUE(has(points.back()));
    for (qsizetype i = 0; i < kept.size(); ++i) {
        // Every point kept is one of the curve's (x = index / 1000), unchanged, in order.
        const auto index = qsizetype(std::lround(kept[i].x() * 1000.0));
        ASSERT_EQ(kept[i].x(), points[index].x());
        ASSERT_EQ(kept[i].y(), points[index].y());
        if (i > 0) {
            ASSERT_GT(kept[i].x(), kept[i - 1].x());
        }
    }
    // At most one point per column: every point stays.
    QList<QPointF> sparse;
    for (qsizetype i = 0; i < points.size(); i += 100)
        sparse.append(points[i]);
    EXPECT_EQ(thinToColumns(sparse, 0.0, 9.0 / columns).size(), sparse.size());
}

// Dropping the inner points of straight runs (Douglas-Peucker, common practice in line
// simplification; no source consulted): on a straight asymptote with a wiggle and two
// one-sample spikes, every point left out lies within the tolerance of the line drawn, the
// spikes and both ends stay, the points kept are the curve's own in order, and the straight
// stretches cost far fewer points than the column thinning leaves.
TEST(ColumnThinning, StraightRunsShrinkWithinAQuarterPixel)
{
    // Columns of 600 px across 9 x units, 200 px down across 300 y units.
    const double xPerPx = 9.0 / 600.0, yPerPx = 300.0 / 200.0, tolerance = 0.25;
    const QList<QPointF> points = curveWithSpikes(4321, 7007);
    const QList<QPointF> columns = thinToColumns(points, 0.0, 3 * xPerPx);
    const QList<QPointF> kept = dropStraightRuns(columns, xPerPx, yPerPx, tolerance);
    EXPECT_LT(kept.size(), columns.size() / 2) << "straight runs were not shortened";
    ASSERT_GE(kept.size(), 4);
    EXPECT_EQ(kept.front(), columns.front());
    EXPECT_EQ(kept.back(), columns.back());
    qsizetype k = 0; // the segment kept[k-1]..kept[k] spans the column point being checked
    for (const QPointF &p : columns) {
        while (k < kept.size() && kept[k].x() < p.x())
            ++k;
        if (k < kept.size() && kept[k].x() == p.x()) {
            EXPECT_EQ(kept[k].y(), p.y()) << "a point kept was changed";
            continue;
        }
        ASSERT_GT(k, 0);
        ASSERT_LT(k, kept.size());
        EXPECT_LE(ui::test::pixelDistance(p, kept[k - 1], kept[k], xPerPx, yPerPx), tolerance)
            << "at x = " << p.x();
    }
    const auto has = [&](const QPointF &p) {
        return std::any_of(kept.begin(), kept.end(),
                           [&](const QPointF &q) { return q.x() == p.x() && q.y() == p.y(); });
    };
    EXPECT_TRUE(has(points[4321])) << "the peak was lost";
    EXPECT_TRUE(has(points[7007])) << "the notch was lost";
    // A non-finite point: the curve as it is.
    QList<QPointF> broken = columns;
    broken[5].ry() = std::nan("");
    EXPECT_EQ(dropStraightRuns(broken, xPerPx, yPerPx, tolerance).size(), broken.size());
}

// Through the window: the demo at 1,000 points per decade (an invented design of ours). On
// every curve panel each curve with more points than the plot has pixel columns is drawn with
// at most two points per pixel column, and its highest and lowest points are among those drawn
// (the curve's peak and the step response's overshoot exact on screen). Common practice, as
// above. (The Nyquist plane's curve is not a function of x and is thinned otherwise.)
TEST_F(PlotViewTest, DenseCurvesAreDrawnWithinTwoPointsPerPixelColumnKeepingTheirExtremes)
{
    Design design = loadDesign(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch").value();
    design.sweep.pointsPerDecade = 1000;
    QString error;
    ASSERT_TRUE(window->openText(serializeDesign(design), QStringLiteral("dense"), &error))
        << error.toStdString();
    ASSERT_TRUE(doc()->waitForAnalysis());
    int dense = 0;
    for (PlotPanel *panel : curvePanels()) {
        if (qobject_cast<NyquistPanel *>(panel))
            continue;
        ui::test::bringForward(panel);
        const double width = panel->chart()->plotArea().width();
        ASSERT_GT(width, 100.0) << panel->chart()->title().toStdString();
        for (QAbstractSeries *a : panel->chart()->series()) {
            auto *s = qobject_cast<QXYSeries *>(a);
            const QList<QPointF> full = s ? panel->fullPoints(s) : QList<QPointF>();
            if (full.size() <= qsizetype(2 * width))
                continue;
            ++dense;
            SCOPED_TRACE(panel->chart()->title().toStdString() + ": " + s->name().toStdString());
            const QList<QPointF> drawn = s->points();
            EXPECT_LE(drawn.size(), qsizetype(2 * width));
            const auto byY = [](const QPointF &p, const QPointF &q) {
                return p.y() < q.y();
            };
            EXPECT_EQ(std::max_element(drawn.begin(), drawn.end(), byY)->y(),
                      std::max_element(full.begin(), full.end(), byY)->y());
            EXPECT_EQ(std::min_element(drawn.begin(), drawn.end(), byY)->y(),
                      std::min_element(full.begin(), full.end(), byY)->y());
        }
    }
    EXPECT_GE(dense, 10) << "the 9,001-point curves were not found";
}
