#pragma once

// The Map panel: a heat map of one metric (phase margin unless chosen otherwise) over the
// E-series grid of two parts, from core's runScan(); the cells meeting every spec outlined,
// unstable cells crossed, the current design ringed; hover reads a cell, a click applies
// both values as one undo step.

#include "panels/scanrunpanel.h"

#include <memory>

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

    QComboBox *m_first, *m_second;
    HeatMap *m_map;
};

} // namespace loopsketch::ui
