#pragma once

// The Scan panel: one metric of the design against the E-series values of one part (its
// value or another numeric field), computed by core's runScan() in the background, with
// the spec as a band, the current value marked, pass and fail coloured, hover values and a
// click that applies a value as one undo step.

#include "panels/plotpanel.h"
#include "panels/scanrunner.h"
#include "sheet/reviewsheet.h"

#include <QWidget>

#include <memory>

class QComboBox;
class QLabel;
class QLineEdit;
class QProgressBar;
class QPushButton;
class QScatterSeries;
class QLineSeries;
class QAreaSeries;

namespace loopsketch::ui {

class DesignDocument;

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

private:
    QCategoryAxis *m_x;
    QValueAxis *m_y;
    QLineSeries *m_line, *m_current, *m_bandLo, *m_bandHi;
    QAreaSeries *m_band;
    QScatterSeries *m_pass, *m_fail, *m_unstable;
};

class ScanPanel : public QWidget
{
    Q_OBJECT

public:
    explicit ScanPanel(DesignDocument *document, QWidget *parent = nullptr);

    /// Chooses the target ("CF", "RL.c") with its default range and starts the scan.
    void scanPart(const QString &target);
    /// Starts a scan of the target, range and series chosen in the controls.
    void run();
    void cancel();
    bool isRunning() const;
    /// The latest finished scan, nullptr before the first.
    const ScanResult *result() const { return m_scan.get(); }
    /// Shows metric `index` of scanMetricInfos().
    void setMetric(int index);
    /// Applies row `index` of the latest scan to the design (one undo step).
    bool applyRow(int index);
    /// What hovering row `index` shows.
    QString rowText(int index) const;
    /// The row whose value is nearest to x = log10 |value|.
    int rowNear(double x) const;
    ScanChart *chart() const { return m_chart; }
    QString statusText() const;
    /// The latest finished run with the metric shown, when it was made for the document's
    /// design as it is (complete, and no field changed since): what the review sheet
    /// carries; nullopt otherwise.
    std::optional<SheetScan> sheetScan() const;

signals:
    /// A scan finished (or was cancelled).
    void scanFinished();

private:
    void refreshTargets();
    void redraw();

    DesignDocument *m_document;
    ScanRunner *m_runner;
    QComboBox *m_target, *m_series, *m_metric;
    QLineEdit *m_from, *m_to;
    QPushButton *m_run, *m_cancel;
    QProgressBar *m_progress;
    QLabel *m_status, *m_hover;
    ScanChart *m_chart;
    std::shared_ptr<const ScanResult> m_scan;
    std::string m_pendingText, m_scanText; ///< the design text of the run started, finished
};

} // namespace loopsketch::ui
