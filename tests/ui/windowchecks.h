#pragma once

// Checks that the window shows core's analysis: the Readout's numbers and every point of the
// Loop gain panel's |T| curve, shared by the window tests.

#include "panels/panels.h"
#include "panels/readout.h"
#include "support/qtadapter.h"
#include "window/mainwindow.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/value.h"

#include <QApplication>
#include <QChart>
#include <QDockWidget>
#include <QList>
#include <QMouseEvent>
#include <QPointF>
#include <QXYSeries>

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

namespace loopsketch::ui::test {

/// Distance from p to the segment a-b, in pixels of a plot `xPerPx` and `yPerPx` data units
/// per pixel.
inline double pixelDistance(QPointF p, QPointF a, QPointF b, double xPerPx, double yPerPx)
{
    const auto px = [&](QPointF q) {
        return QPointF(q.x() / xPerPx, q.y() / yPerPx);
    };
    p = px(p);
    a = px(a);
    b = px(b);
    const QPointF ab = b - a;
    const double len2 = QPointF::dotProduct(ab, ab);
    const double t = len2 > 0 ? std::clamp(QPointF::dotProduct(p - a, ab) / len2, 0.0, 1.0) : 0;
    const QPointF off = p - a - t * ab;
    return std::hypot(off.x(), off.y());
}

/// Brings `panel`'s dock to the front of its tab group: a panel out of sight is drawn when it
/// comes on screen (ui/README.md §3), so what it shows is checked there.
inline void bringForward(PlotPanel *panel)
{
    for (QWidget *w = panel->parentWidget(); w; w = w->parentWidget()) {
        if (auto *dock = qobject_cast<QDockWidget *>(w)) {
            dock->show();
            dock->raise();
            break;
        }
    }
    QApplication::processEvents();
}

/// The Loop gain panel shows `expected`'s |T| curve: every point of core's curve held and a
/// subset of them drawn, unchanged.
inline void expectLoopGainCurveShows(const MainWindow &window, const Analysis &expected)
{
    QXYSeries *t = window.loopGainPanel()->series(LoopGainPanel::kT);
    ASSERT_NE(t, nullptr);
    const QList<QPointF> want
        = curvePoints(expected.frequenciesHz, expected.curves.loopGain, CurvePart::MagnitudeDb);
    ASSERT_GT(want.size(), 100);
    // Before thinning for the screen, the panel holds every point of core's curve.
    const QList<QPointF> full = window.loopGainPanel()->fullPoints(t);
    ASSERT_EQ(full.size(), want.size());
    for (qsizetype i = 0; i < full.size(); ++i) {
        ASSERT_NEAR(full[i].x(), want[i].x(), 1e-12) << "point " << i;
        ASSERT_NEAR(full[i].y(), want[i].y(), 1e-9) << "point " << i;
    }
    // What is drawn is a subset of those points, each at its own frequency, unchanged.
    const QList<QPointF> drawn = t->points();
    ASSERT_GE(drawn.size(), 2);
    qsizetype j = 0;
    for (const QPointF &p : drawn) {
        while (j < want.size() && want[j].x() < p.x() - 1e-12)
            ++j;
        ASSERT_LT(j, want.size());
        ASSERT_NEAR(p.x(), want[j].x(), 1e-12);
        ASSERT_NEAR(p.y(), want[j].y(), 1e-9);
    }
    // And the line through them passes within a pixel of every point of core's curve (the
    // column thinning moves it less than a column, the straight runs a quarter pixel).
    const QRectF plot = window.loopGainPanel()->chart()->plotArea();
    double xPerPx = 0, yPerPx = 0;
    for (const QAbstractAxis *axis : t->attachedAxes()) {
        const auto [lo, hi] = PlotPanel::axisRange(axis);
        if (axis->orientation() == Qt::Horizontal)
            xPerPx = (hi - lo) / plot.width();
        else
            yPerPx = (hi - lo) / plot.height();
    }
    ASSERT_GT(xPerPx, 0);
    ASSERT_GT(yPerPx, 0);
    qsizetype k = 1;
    for (const QPointF &p : want) {
        if (!std::isfinite(p.y()))
            continue;
        while (k + 1 < drawn.size() && drawn[k].x() < p.x())
            ++k;
        ASSERT_LE(pixelDistance(p, drawn[k - 1], drawn[k], xPerPx, yPerPx), 1.0)
            << "at log10 f = " << p.x();
    }
}

/// The window shows `expected`: the Readout's gain, bandwidth and phase margin texts, and the
/// |T| curve (expectLoopGainCurveShows).
inline void expectWindowShows(const MainWindow &window, const Analysis &expected)
{
    const Readout *readout = window.readout();
    EXPECT_EQ(readout->cellText("closed-loop gain, exact"),
              engineering(expected.exact.gain, expected.gainUnit, 4));
    EXPECT_EQ(readout->cellText("bandwidth −3 dB"), engineering(expected.bandwidthHz, "Hz"));
    // Three significant digits and the degree sign (common practice for angles on a display).
    const OptionalNumber pm = expected.margins.phaseMarginDeg;
    EXPECT_EQ(readout->cellText("phase margin"),
              pm ? QString::fromStdString(formatEngineering(*pm, 3)) + QStringLiteral("°")
                 : QStringLiteral("—"));
    expectLoopGainCurveShows(window, expected);
}

/// Moves the pointer (no button held) onto the centre of the Loop gain panel's plot and gives
/// log10 of the frequency (Hz) under the pixel the event went to: the event carries whole
/// pixels, and half a pixel is about one sweep point, so the exact centre may pick a neighbour.
inline double hoverLoopGainCentre(LoopGainPanel *loop)
{
    QChart *chart = loop->chart();
    const QPointF centre = chart->plotArea().center();
    const QPoint pos = loop->mapFromScene(chart->mapToScene(centre));
    QMouseEvent move(QEvent::MouseMove, QPointF(pos), QPointF(loop->viewport()->mapToGlobal(pos)),
                     Qt::NoButton, Qt::NoButton, Qt::NoModifier);
    QApplication::sendEvent(loop->viewport(), &move);
    const QPointF hovered = chart->mapFromScene(loop->mapToScene(pos));
    return chart->mapToValue(hovered, loop->series(LoopGainPanel::kT)).x();
}

} // namespace loopsketch::ui::test
