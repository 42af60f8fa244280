#pragma once

// The review sheet's plot engine: curves as series in the one curve table's styles, linear,
// logarithmic and decade axes, a panel with its frame, grid, ticks and curves, pole markers
// and legends. sheetplots.cpp draws each plot of the sheet with it.

#include "sheet/sheetplots.h"
#include "support/plotstyle.h"

#include "loopsketch/analysis/analysis.h"

#include <QColor>
#include <QFontMetricsF>
#include <QPainter>
#include <QPointF>
#include <QRectF>
#include <QString>

#include <cstddef>
#include <initializer_list>
#include <vector>

namespace loopsketch::ui::sheet {

inline constexpr double kLegendRowMm = 3.6;

struct Series
{
    QString name;
    std::vector<double> x, y; // x in Hz (log axes) or s; NaN breaks the line
    QColor colour;
    Qt::PenStyle style = Qt::SolidLine;
    int overlay = -1; ///< the candidate's index for an overlay curve
    PlotCurve curve = PlotCurve::A; ///< the table's curve (overlays)
    enum class Marker { None, Filled, Hollow };
    Marker marker = Marker::None; ///< drawn as markers (poles), not as a line
};

struct Axis
{
    double lo = 0, hi = 1;
    bool log = false;
    double step = 1; // linear axes
};

double mapAxis(const Axis &a, double v, double from, double to);

void finiteRange(const std::vector<Series> &series, bool useX, double &lo, double &hi);

/// One panel: frame, grid, tick labels, curves. `yFormat` gives a tick label.
void drawPanel(QPainter &p, const QRectF &area, double k, const Axis &xa, const Axis &ya,
               const std::vector<Series> &series, const QString &yTitle, bool xLabels,
               const QString &xTitle, bool yLogOhm);

Axis linearAxis(const std::vector<Series> &series, std::initializer_list<double> steps,
                double minSpan, int maxTicks = 6);

Axis frequencyAxis(const Analysis &a);

/// A curve's name, colour and style from the one curve table, or an overlay's (candidate
/// `overlay` >= 0: its colour and dash, "candidate: quantity").
Series styled(PlotCurve curve, int overlay = -1, const QString &candidate = {});

/// The legend's entries: the own curves, then one per candidate naming its quantities
/// ("Fast: T, gain"), as the panels' legends do.
std::vector<Series> legendEntries(const std::vector<Series> &series,
                                  const std::vector<SheetOverlay> &overlays);

Series dbSeries(Series s, const Analysis &a, const Curve &c);

Series logOhmSeries(Series s, const Analysis &a, const Curve &c);

Series phaseSeries(Series s, const Analysis &a, const Curve &c);

bool hasFinite(const Curve &c);

/// A pole's marker as the Poles panel draws it: the design's a filled square, a candidate's
/// a ring in its colour.
void drawPoleMarker(QPainter &p, QPointF at, double k, const Series &s);

/// Lays the legend out in rows within `width`; returns the rows' entries (indices).
std::vector<std::vector<std::size_t>> legendRows(const QFontMetricsF &fm, double width, double k,
                                                 const std::vector<Series> &series);

/// The legend's rows at `area`'s top; returns the height used (device units).
double drawLegend(QPainter &p, const QRectF &area, double k, const std::vector<Series> &series);

/// log10 of a density per sweep frequency; NaN where there is none (breaks the line).
Series logDensitySeries(Series s, const std::vector<double> &hz,
                        const std::vector<double> &density);

/// Decades from the first series' peak down to at most `decades` below it.
Axis decadeAxis(const std::vector<Series> &series, int decades);

} // namespace loopsketch::ui::sheet
