#pragma once

// The Scan panel: one metric of the design against the E-series values of one part (its
// value or another numeric field), computed by core's runScan() in the background, with
// the spec as a band, the current value marked, pass and fail coloured, hover values and a
// click that applies a value as one undo step.

#include "panels/plotpanel.h"
#include "panels/scanrunpanel.h"

class QComboBox;
class QLineEdit;
class QScatterSeries;
class QLineSeries;
class QAreaSeries;

namespace loopsketch::ui {

/// The chart of the Scan panel: x = log10 of the scanned value.
class ScanChart : public PlotPanel
{
    Q_OBJECT

public:
    explicit ScanChart(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &) override { }
    /// Draws `metric` of `scan` with the current value `current` (SI) and the spec band
    /// [bandLo, bandHi] (NaN: none).
    void showScan(const ScanResult &scan, const ScanMetricInfo &metric, double current,
                  double bandLo, double bandHi, const QString &gainUnit);

    QScatterSeries *passSeries() const { return m_pass; }
    QScatterSeries *failSeries() const { return m_fail; }
    /// Where point `p` of `series` is drawn, in the view's coordinates.
    QPoint positionOf(QScatterSeries *series, QPointF p) const;

signals:
    /// A click on (or within a few pixels of) a pass or fail point: that point.
    void pointClicked(QPointF point);

protected:
    void plotClicked(QPoint position) override;

private:
    QCategoryAxis *m_x;
    QValueAxis *m_y;
    QLineSeries *m_line, *m_current, *m_bandLo, *m_bandHi;
    QAreaSeries *m_band;
    QScatterSeries *m_pass, *m_fail, *m_unstable;
};

class ScanPanel : public ScanRunPanel
{
    Q_OBJECT

public:
    explicit ScanPanel(DesignDocument *document, QWidget *parent = nullptr);

    /// Chooses the target ("CF", "RL.c") with its default range and starts the scan.
    void scanPart(const QString &target);
    /// Design > Scan a part…: scans the first of `selected` (the Sketch's selected parts)
    /// that has a value to scan; with none, opens the part list, where a choice scans.
    void scanSelectedOrAsk(const std::vector<std::string> &selected);
    /// Starts a scan of the target, range and series chosen in the controls.
    void run() override;
    /// Applies row `index` of the latest scan to the design (one undo step).
    bool applyRow(int index);
    /// Every metric of row `index`: the tooltip beside a point.
    QString rowText(int index) const;
    /// The line under the chart for row `index`: value, the metric shown, the verdicts.
    QString rowSummary(int index) const;
    /// The row whose value is nearest to x = log10 |value|.
    int rowNear(double x) const;
    ScanChart *chart() const { return m_chart; }

private:
    QString finishedText(const ScanResult &scan) const override;
    void refreshTargets() override;
    void redraw() override;

    QComboBox *m_target;
    QLineEdit *m_from, *m_to;
    ScanChart *m_chart;
};

} // namespace loopsketch::ui
