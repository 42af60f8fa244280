#pragma once

// What the Scan and Map panels share: the series and metric choices, run and cancel, the
// progress bar, the status and hover lines, the background run (ScanRunner) and its latest
// result, and the rule for what the review sheet may carry. Each panel adds its own target
// controls, its view and what a row or cell means.

#include "panels/scanrunner.h"
#include "sheet/reviewsheet.h"

#include <QWidget>

#include <memory>
#include <optional>
#include <string>

class QComboBox;
class QLabel;
class QProgressBar;
class QPushButton;

namespace loopsketch::ui {

class DesignDocument;
class FlowLayout;

class ScanRunPanel : public QWidget
{
    Q_OBJECT

public:
    /// Starts a run of the targets, range and series chosen in the controls.
    virtual void run() = 0;
    void cancel();
    bool isRunning() const;
    /// The latest finished run, nullptr before the first.
    const ScanResult *result() const { return m_scan.get(); }
    /// Shows metric `index` of scanMetricInfos().
    void setMetric(int index);
    QString statusText() const;
    /// The latest finished run with the metric shown, when it was made for the document's
    /// design as it is (complete, and no field changed since) and computed that metric: what
    /// the review sheet carries; nullopt otherwise.
    std::optional<SheetScan> sheetScan() const;

signals:
    /// A run finished (or was cancelled).
    void runFinished();

protected:
    ScanRunPanel(DesignDocument *document, QWidget *parent);

    /// Makes the shared controls (after the panel's own target controls, so the focus
    /// order follows the row): the series choice headed `allSeries` ("its series"), the
    /// metric choice (phase margin first), the run button `runLabel`, cancel, progress,
    /// status and hover lines; and connects them, the runner and the document.
    void makeRunControls(const QString &allSeries, const QString &runLabel);
    /// Lays the panel out: `targets` (each QLabel kept with the field after it), the series,
    /// `metricLabel` with the metric and the run button (or the button right after the
    /// targets: `runAfterTargets`, where those are short), flowing onto further lines where the
    /// dock is narrow; below, while a run goes on, its progress and cancel, and the status
    /// (wrapped); the view; the hover line, wrapped in `hoverLines` lines kept for it, so that
    /// the view does not jump as the text changes.
    void layOut(const QList<QWidget *> &targets, const QString &metricLabel, QWidget *view,
                int hoverLines, bool runAfterTargets);
    /// The metrics a run computes: every one (empty), or for a view that shows one metric
    /// at a time (the map) the one shown, each row then skipping the work of the others.
    virtual std::vector<ScanMetric> metricsToCompute() const { return {}; }
    /// The series chosen, nullopt for each part's own.
    std::optional<ESeries> chosenSeries() const;
    /// The metric shown, as an index of scanMetricInfos().
    int metricIndex() const;
    /// Starts the runner on `axes` of the design as it is, `status` in the status line.
    void startRun(std::vector<ScanAxis> axes, const QString &status);
    /// The design's present value of what `axis` scans (SI), NaN when the part is gone.
    double designValue(const ScanAxis &axis) const;
    /// Writes `values` of a row into the design (one undo step); a refusal goes to the
    /// status line.
    bool applyValues(const std::vector<double> &values);

    /// What the status line says when a run ends (cancelled or complete).
    virtual QString finishedText(const ScanResult &scan) const = 0;
    /// Fills the target choices from the design (its structure changed).
    virtual void refreshTargets() = 0;
    /// Draws the latest run with the metric shown.
    virtual void redraw() = 0;

    DesignDocument *m_document;
    ScanRunner *m_runner;
    QComboBox *m_series = nullptr, *m_metric = nullptr;
    QPushButton *m_run = nullptr, *m_cancel = nullptr;
    QProgressBar *m_progress = nullptr;
    QLabel *m_status = nullptr, *m_hover = nullptr;
    std::shared_ptr<const ScanResult> m_scan;

    /// The status line's text; the line takes no room while it is empty.
    void setStatus(const QString &text);
    bool eventFilter(QObject *watched, QEvent *event) override;
    void resizeEvent(QResizeEvent *event) override;

private:
    /// Runs the latest run's axes again when it lacks the metric shown (it computed only the
    /// one shown then, metricsToCompute()).
    void computeShownMetric();
    /// Progress and cancel shown while a run goes on (run again starts anew: the latest wins).
    void showRunning(bool running);
    /// The controls' height for the panel's width (the dock does not ask for a height for a
    /// width, as with the Readout's strip).
    void fitControlsHeight();

    QWidget *m_controls = nullptr;
    FlowLayout *m_flow = nullptr;

    std::string m_pendingText, m_scanText; ///< the design text of the run started, finished
};

} // namespace loopsketch::ui
