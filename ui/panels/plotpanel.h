#pragma once

// Base of the linked plot panels: a chart view with our palette, a log frequency axis
// labelled 1, 10, 100, 1k ... 1G, helpers that push whole curves with replace(), and zoom
// and pan for every panel.

#include "support/plotstyle.h"

#include "loopsketch/analysis/analysis.h"

#include <QChartView>
#include <QColor>
#include <QList>
#include <QPointF>

#include <cmath>
#include <map>
#include <memory>
#include <string>
#include <vector>

class QAbstractAxis;
class QAction;
class QRubberBand;
class QToolButton;
class QGraphicsSimpleTextItem;
class QGraphicsLineItem;
class QGraphicsRectItem;
class QCategoryAxis;
class QLineSeries;
class QScatterSeries;
class QValueAxis;
class QXYSeries;

namespace loopsketch::ui {

/// One candidate's analysis for the overlays of the frequency panels.
struct OverlaySource
{
    QString name; ///< the candidate's name, shown in the legend
    std::shared_ptr<const Analysis> analysis;
};

class PlotPanel : public QChartView
{
    Q_OBJECT

public:
    /// The summary line above the plot (crossover, margins ...).
    QString summary() const;
    explicit PlotPanel(const QString &title, QWidget *parent = nullptr);

    virtual void showAnalysis(const Analysis &analysis) = 0;
    /// The design cannot be analysed: every curve is cleared and `reason` is shown over the
    /// plot, so no earlier numbers stand as if current. An empty reason removes the notice
    /// (the next showAnalysis() fills the curves again).
    void showUnavailable(const QString &reason);
    /// The notice shown over the plot, empty when the plot is current.
    QString unavailableText() const;

    /// The series named `name` (its legend text), nullptr when there is none.
    QXYSeries *series(const QString &name) const;
    /// The points handed to replaceThinned() before thinning for the screen.
    QList<QPointF> fullPoints(QXYSeries *series) const;

    /// True for panels over frequency, which take part in the linked frequency cursor.
    bool hasFrequencyAxis() const { return m_frequencyAxis != nullptr; }
    /// Shows the linked cursor at log10(f / Hz); NaN hides it.
    void showFrequencyCursor(double log10Hz);
    /// The cursor's text (empty when hidden).
    QString cursorText() const;

    // Candidate overlays: thin dashed curves (or hollow markers), one set per candidate, for
    // panels whose overlayLines() names any.
    /// True when the panel draws candidate overlays (it has a toggle).
    bool hasOverlays() const { return m_overlayAction != nullptr; }
    /// The checkable "Overlay candidates" toggle; nullptr for panels without overlays.
    QAction *overlayAction() const { return m_overlayAction; }
    /// The candidates to overlay, in column order; drawn while the toggle is on.
    void setOverlaySources(std::vector<OverlaySource> sources);
    /// Names of the overlay curves drawn now ("Fast: T"); the legend has one entry per
    /// candidate naming its quantities ("Fast: T, gain").
    QStringList overlaySeriesNames() const;
    /// The visible legend labels, in legend order (as of the legend's last layout, which
    /// runs from the event loop).
    QStringList legendLabels() const;

    // Zoom and pan. The wheel zooms about the pointer (over an axis, that axis alone), a left
    // drag zooms to the rectangle drawn (a flat one: that direction alone), a middle drag or
    // Shift+left drag pans, a double-click returns to the panel's own ranges. While zoomed the
    // view stays where the user put it and the panel's own ranges keep following the
    // analysis underneath, for the reset. Positions are in viewport pixels.
    /// True while any axis shows a range of the user's choosing.
    bool isZoomed() const { return !m_view.empty(); }
    /// Zooms about `at` by `factor` (below 1: in) on the axes of the given orientations.
    void zoomAt(QPoint at, double factor, Qt::Orientations which = Qt::Horizontal | Qt::Vertical);
    /// Zooms to the rectangle; a side under 6 px leaves that direction as it is.
    void zoomToRect(const QRect &rect);
    /// Moves the view with the pointer by `pixels`.
    void panBy(QPoint pixels);
    /// The panel's own ranges again.
    void resetZoom();
    /// "Reset zoom" (context menu, the button shown while zoomed).
    QAction *resetZoomAction() const { return m_resetZoomAction; }
    /// The shown range of an axis of this panel.
    static std::pair<double, double> axisRange(const QAbstractAxis *axis);

signals:
    /// The mouse hovers the plot at log10(f / Hz); NaN when it left.
    void frequencyHovered(double log10Hz);
    /// The user zoomed, panned or reset the view.
    void viewChanged(bool zoomed);

protected:
    /// How a curve's value reads in the cursor text; None leaves it out.
    enum class CursorFormat { None, Decibels, Degrees, Log10Ohms };

    /// One curve a panel overlays for each candidate.
    struct OverlayLine
    {
        PlotCurve curve; ///< its quantity follows the candidate's name in the legend
        QList<QPointF> points; ///< in the units of the panel's own curves
        QAbstractAxis *y = nullptr;
        CursorFormat format = CursorFormat::None;
        bool markers = false; ///< hollow markers (poles) instead of a line
    };
    /// The curves to overlay from a candidate's analysis; a panel returning any calls
    /// enableOverlays() in its constructor.
    virtual std::vector<OverlayLine> overlayLines(const Analysis &) const { return {}; }
    /// Creates the "Overlay candidates" toggle (a corner button and a context-menu entry);
    /// overlays share the x axis `x` with the panel's own curves.
    void enableOverlays(QAbstractAxis *x);
    /// Draws the overlays again (a panel whose scale changed calls it).
    void refreshOverlays();

    QLineSeries *addLine(const QString &name, const QColor &colour, Qt::PenStyle style,
                         QAbstractAxis *x, QAbstractAxis *y, bool inLegend = true);
    QScatterSeries *addMarker(const QString &name, const QColor &colour, QAbstractAxis *x,
                              QAbstractAxis *y, double size = 9.0);
    QValueAxis *addValueAxis(const QString &title, Qt::Alignment alignment, bool grid = true);
    /// x = log10(f / Hz); decade labels drawn by us (QLogValueAxis prints 1e+06).
    QCategoryAxis *addLogAxis(const QString &title, Qt::Alignment alignment);
    /// Sets a decade axis to cover [lo, hi] (log10 units) with a label at every decade, or
    /// at every second or third one when the plot is too small to hold them all.
    void setDecadeRange(QCategoryAxis *axis, double lo, double hi, std::string_view unit);
    /// Sets a value axis to a range with round ticks, `step` apart.
    /// Steps double while the labels would crowd the axis.
    void setRoundRange(QValueAxis *axis, double lo, double hi, double step);
    /// Sets a value axis to [lo, hi] with about `ticks` ticks at 1, 2 or 5 times a power of 10.
    void setNiceRange(QValueAxis *axis, double lo, double hi, int ticks);
    /// Sets the panel's own range of a value axis as it is (no rounding), ticks `step` apart.
    void setHomeRange(QValueAxis *axis, double lo, double hi, double step);
    /// Sets the home ranges of `x` and `y` to hold [left, right] across and [-reach, reach]
    /// up with one unit as long across as up on the plot area as it is (circles stay round),
    /// ticks `step` apart. Does nothing while the plot area is empty, nor when called again
    /// from the geometry change its own ranges cause.
    void fitEqualScales(QValueAxis *x, QValueAxis *y, double left, double right, double reach,
                        double step);
    /// Rubber-band zooms keep one unit the same length on both axes (the s-plane).
    void setEqualAspect(bool on) { m_equalAspect = on; }
    /// Called after the plot area or the shown ranges changed (zoom, pan, resize), for items
    /// a panel places over the plot.
    virtual void plotGeometryChanged() { }
    /// A left click in the plot that drew no band (under kMinBandPixels either way), at
    /// `position` in the view: a panel whose points act on a click takes it here (the band
    /// zoom takes every left press, so a series' own clicked() never comes).
    virtual void plotClicked(QPoint /*position*/) { }
    /// Replaces a frequency curve's points, thinned to the points that matter on screen: in
    /// each three-pixel column its lowest and highest point survive, so peaks stay exact.
    /// Every point kept is one of core's, unchanged. `format` puts it in the cursor text.
    void replaceThinned(QXYSeries *series, const QList<QPointF> &points, double xMin, double xMax,
                        CursorFormat format = CursorFormat::None);
    /// Exactly the same points (QPointF's == is fuzzy): a series that would get them again
    /// keeps its drawing.
    static bool samePoints(const QList<QPointF> &a, const QList<QPointF> &b);
    /// Sets the axis only where it differs (each change relayouts the chart).
    static void applyRange(QValueAxis *axis, double lo, double hi, double step);
    /// Sets the summary line above the plot.
    void setTitle(const QString &title);
    /// Hides a series' legend entry.
    void hideFromLegend(QXYSeries *series);
    void resizeEvent(QResizeEvent *event) override;
    void mouseMoveEvent(QMouseEvent *event) override;
    void mousePressEvent(QMouseEvent *event) override;
    void mouseReleaseEvent(QMouseEvent *event) override;
    void mouseDoubleClickEvent(QMouseEvent *event) override;
    void wheelEvent(QWheelEvent *event) override;
    void leaveEvent(QEvent *event) override;
    void paintEvent(QPaintEvent *event) override;
    /// Sets a series' name, keeping the lookup table in step.
    void rename(QXYSeries *series, const QString &name);

    std::map<QString, QXYSeries *> m_series;

private:
    struct DecadeAxis
    {
        double lo = 0, hi = 0;
        std::string unit;
        int step = 0; ///< decades between labels as last drawn; 0 = never drawn
        int fine = 0; ///< labels inside a decade as last drawn: 0 none, 1 at 2 and 5, 2 at 2..9
        double drawnLo = 0, drawnHi = 0;
        std::string drawnUnit;
    };
    struct AxisRange
    {
        double lo = 0, hi = 0, step = 0;
    };
    /// Applies the shown range of an axis: the user's view when zoomed, else the panel's own.
    void applyAxis(QValueAxis *axis);
    /// Sets (or, when it equals the panel's own, drops) the user's view of one axis.
    void setView(QValueAxis *axis, double lo, double hi);
    /// After a zoom, pan or reset: curves thinned for the new range, cursor, button, signal.
    void viewUpdated();
    std::vector<QValueAxis *> zoomAxes(Qt::Orientations which) const;
    QPointF toChart(QPoint viewportPos) const;
    std::map<QValueAxis *, AxisRange> m_home; ///< the ranges the panel chose
    std::map<QValueAxis *, AxisRange> m_view; ///< the user's zoom; absent: the panel's own
    enum class Drag { None, Band, Pan };
    Drag m_drag = Drag::None;
    QPoint m_dragFrom;
    QRubberBand *m_band = nullptr;
    QAction *m_resetZoomAction = nullptr;
    QToolButton *m_resetZoomButton = nullptr;
    bool m_equalAspect = false;
    bool m_fitting = false; ///< inside fitEqualScales()
    void applyDecades(QCategoryAxis *axis, DecadeAxis &state);
    void placeSummary();
    struct RoundAxis
    {
        double lo = 0, hi = 0, step = 1;
    };
    void applyRound(QValueAxis *axis, const RoundAxis &r);
    std::map<QValueAxis *, RoundAxis> m_roundAxes;
    void plotAreaChanged();
    void rebuildOverlays();
    /// The overlay series in `slot`, made or remade to suit `line`.
    QXYSeries *overlaySeries(std::size_t slot, const OverlayLine &line, const QString &name);
    void removeOverlaySeries(QXYSeries *series);
    /// Puts the legend below the plot, or beside it when one row would cut its labels.
    void placeLegend();
    QGraphicsSimpleTextItem *m_summary = nullptr;
    QGraphicsTextItem *m_unavailable = nullptr;
    QString m_homeToolTip; ///< the tooltip before any analysis, shown while unavailable
    bool m_homeCaptured = false;
    QAction *m_overlayAction = nullptr;
    QToolButton *m_overlayButton = nullptr;
    std::vector<OverlaySource> m_overlaySources;
    QAbstractAxis *m_overlayX = nullptr;
    std::vector<QXYSeries *> m_overlaySeries;
    void thin(QXYSeries *series, const QList<QPointF> &points, double xMin, double xMax);
    struct FullCurve
    {
        QList<QPointF> points;
        double xMin = 0, xMax = 0;
        CursorFormat format = CursorFormat::None;
        int order = 0; ///< first-shown order, the order of the cursor's lines
    };
    QCategoryAxis *m_frequencyAxis = nullptr;
    QGraphicsLineItem *m_cursorLine = nullptr;
    QGraphicsSimpleTextItem *m_cursorText = nullptr;
    QGraphicsRectItem *m_cursorBox = nullptr;
    double m_cursorAt = std::nan("");
    std::map<QXYSeries *, FullCurve> m_fullCurves; ///< re-thinned when the panel resizes
    std::map<QCategoryAxis *, DecadeAxis> m_decadeAxes;
};

/// Minimum and maximum y of point lists; false when all are empty.
bool yRange(std::initializer_list<const QList<QPointF> *> lists, double *lo, double *hi);

} // namespace loopsketch::ui
