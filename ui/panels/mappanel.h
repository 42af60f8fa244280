#pragma once

// The Map panel: a heat map of one metric (phase margin unless chosen otherwise) over the
// E-series grid of two parts, from core's runScan(); the cells meeting every spec outlined,
// unstable cells crossed, the current design ringed; hover reads a cell, a click applies
// both values as one undo step.

#include "panels/scanrunpanel.h"

#include <memory>
#include <vector>

class QComboBox;

namespace loopsketch::ui {

/// The painted grid: first part across, second part up.
class HeatMap : public QWidget
{
    Q_OBJECT

public:
    explicit HeatMap(QWidget *parent = nullptr);
    void setScan(std::shared_ptr<const ScanResult> scan, int metric, double currentA,
                 double currentB);
    /// The cell (i along the first part, j along the second) under a widget position;
    /// {-1, -1} outside the grid.
    std::pair<int, int> cellAt(QPoint position) const;
    /// The centre of a cell, in widget coordinates.
    QPoint cellCentre(int i, int j) const;
    /// The colour a cell is painted (its metric on the palette's sequential scale).
    QColor cellColour(int i, int j) const;
    /// The key under the grid, one entry per mark: its sample's rectangle and its text, in
    /// rows that wrap at the widget's width (offsets from the key's top).
    struct KeyEntry
    {
        QRect sample, text;
        QString label;
    };
    std::vector<KeyEntry> keyEntries() const;
    /// The metric's range on the colour scale.
    std::pair<double, double> colourRange() const { return {m_lo, m_hi}; }

signals:
    void cellHovered(int i, int j);
    void cellClicked(int i, int j);

protected:
    void paintEvent(QPaintEvent *event) override;
    void mouseMoveEvent(QMouseEvent *event) override;
    void mousePressEvent(QMouseEvent *event) override;
    void leaveEvent(QEvent *event) override;

private:
    QRect gridRect() const;
    /// The key's height for the widget's width.
    int keyHeight() const;
    void drawKey(QPainter &p) const;
    const ScanRow *row(int i, int j) const;

    std::shared_ptr<const ScanResult> m_scan;
    int m_metric = 2;
    double m_currentA = 0, m_currentB = 0, m_lo = 0, m_hi = 1;
};

class MapPanel : public ScanRunPanel
{
    Q_OBJECT

public:
    explicit MapPanel(DesignDocument *document, QWidget *parent = nullptr);

    /// Chooses the two targets ("RF", "CF") with their default ranges and starts the map.
    void mapParts(const QString &first, const QString &second);
    /// Design > Map two parts…: maps the first two of `selected` (the Sketch's selected
    /// parts) that have a value to scan, one of them against the second part chosen, or with
    /// none the two chosen (the design's first two values unless changed).
    void mapSelected(const std::vector<std::string> &selected);
    void run() override;
    /// Applies cell (i, j) of the latest map (one undo step).
    bool applyCell(int i, int j);
    /// What hovering cell (i, j) shows.
    QString cellText(int i, int j) const;
    HeatMap *heatMap() const { return m_map; }

private:
    QString finishedText(const ScanResult &scan) const override;
    void refreshTargets() override;
    void redraw() override;
    /// The metric shown alone (a switch to another runs the map again): a 60 x 60 map within a
    /// second (issue 16).
    std::vector<ScanMetric> metricsToCompute() const override;

    QComboBox *m_first, *m_second;
    HeatMap *m_map;
};

} // namespace loopsketch::ui
