#pragma once

// Curves with more points than the plot has pixel columns, thinned for drawing without losing
// a peak (ui/README.md §3): 1,000 points per decade, long step responses.

#include <QList>
#include <QPointF>

namespace loopsketch::ui {

/// Thins a curve for drawing: the x axis is cut into columns `width` wide from `x0` (a few
/// pixels of the plot each, in x units) and each column keeps its lowest and its highest
/// point, in their order along the curve; the curve's first and last points stay too. A peak
/// or a notch of a single sample survives, and at most two points per column the curve
/// crosses remain, plus its two ends. `points` in increasing x; every point kept is one of
/// them, unchanged. With `width` not positive, the points as they are.
QList<QPointF> thinToColumns(const QList<QPointF> &points, double x0, double width);

/// Leaves out the points of a curve whose omission moves the line drawn by at most
/// `tolerancePixels` (the plot's scale: `xPerPixel`, `yPerPixel` data units per pixel): a
/// Douglas-Peucker reduction. The first and last points and the highest and lowest stay;
/// every point kept is one of `points`, unchanged. Straight runs (an asymptote, a flat band)
/// shrink to their ends, which spares Qt Charts laying out and stroking each segment. A curve
/// with a non-finite point, or a scale not positive, comes back as it is.
QList<QPointF> dropStraightRuns(const QList<QPointF> &points, double xPerPixel, double yPerPixel,
                                double tolerancePixels);

} // namespace loopsketch::ui
