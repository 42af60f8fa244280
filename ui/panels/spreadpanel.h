#pragma once

// The Spread panel: worst case and Monte Carlo of the current design over its tolerances and
// the gain block's spread, run by core in a background thread. Shows histograms of the
// closed-loop gain, -3 dB bandwidth and phase margin, their statistics, the worst-case
// ranges and the yield against the specs. A new run or a design change cancels a running one.

#include "sheet/reviewsheet.h"

#include "loopsketch/analysis/spread.h"

#include <QString>
#include <QWidget>

#include <cstddef>
#include <memory>
#include <optional>
#include <string>

class QChart;
class QChartView;
class QComboBox;
class QDoubleSpinBox;
class QGridLayout;
class QLabel;
class QLineSeries;
class QProgressBar;
class QPushButton;
class QSpinBox;
class QTableWidget;
class QValueAxis;

namespace loopsketch::ui {

class BackgroundRun;
class DesignDocument;

class SpreadPanel : public QWidget
{
    Q_OBJECT

public:
    /// The three metrics, in table and plot order.
    enum class Metric { Gain, Bandwidth, PhaseMargin };
    /// The table's columns.
    enum class Column { Nominal, WorstMin, WorstMax, Min, Mean, Max, Std };

    static constexpr int kDefaultTrials = kDefaultMonteCarloTrials;
    static constexpr std::uint64_t kDefaultSeed = 1;

    explicit SpreadPanel(DesignDocument *document, QWidget *parent = nullptr);
    /// Sets the cancel flag and waits for the worker, so no result arrives afterwards.
    ~SpreadPanel() override;

    // The controls, for the menu and tests.
    void setTrials(int trials);
    void setSeed(std::uint64_t seed);
    void setDistribution(SpreadDistribution distribution);
    /// Spreads of the gain block's gain and gbw in percent; 0 leaves them out.
    void setGainSpreadPct(double pct);
    void setGbwSpreadPct(double pct);
    /// The options the controls give (without progress and cancel).
    SpreadOptions options() const;

    /// Starts a run on a copy of the current design; cancels a run in progress first.
    void run();
    /// Cancels the run in progress; its partial result is shown, marked as cancelled.
    void cancel();
    bool isRunning() const;
    /// Corners and trials done so far in the running run (worst-case corners first).
    std::size_t progressDone() const;
    /// The progress bar as shown: its text, value and maximum.
    QString progressText() const;
    int progressValue() const;
    int progressMaximum() const;

    /// The last result shown (possibly cancelled part way); nullptr before the first.
    const SheetSpread *lastResult() const { return m_result ? &*m_result : nullptr; }
    /// The last run that completed every trial for the design as it is now, for the review
    /// sheet; nullptr when there is none or the design changed since.
    const SheetSpread *completedResult() const;
    /// Wall-clock time of the last delivered run, ms.
    double lastRunMs() const;

    /// The text of one table cell as shown.
    QString cellText(Metric metric, Column column) const;
    /// The message line (diagnostics, what will be spread, run state).
    QString messageText() const;
    /// The worst-case method line ("all 4 corners evaluated" / sensitivity corners).
    QString methodText() const;
    QString yieldText() const;
    /// The output noise line: the noise rms (and SNR) nominal, over the worst-case corners and
    /// over the trials, when the run computed the noise (a design with a noise spec); empty
    /// and hidden otherwise.
    QString noiseText() const;
    /// The histogram's chart of a metric (tests, screenshots).
    QChart *histogramChart(Metric metric) const;

    /// How the panel formats a metric value (engineering with 4 digits; degrees with two
    /// decimals); "—" for a missing or non-finite value.
    static QString formatMetric(Metric metric, double value, const std::string &gainUnit);

signals:
    /// A run ended and its result (complete or cancelled by the user) is shown.
    void runFinished();
    /// A run was cancelled because the design changed or a new run started; nothing shown.
    void runDiscarded(qulonglong completedTrials);

private:
    // Parts of the constructor.
    void setUpInputs();
    QGridLayout *controlsLayout();
    void setUpTable();
    /// The histogram chart of metric `i` (its view, for the layout).
    QChartView *makeHistogram(int i);
    struct Delivery;

    void designChanged();
    void optionsChanged();
    void updatePreview();
    void deliver(Delivery delivery);
    void showResult();
    void showNoise();
    void showHistogram(Metric metric);
    void setBusy(bool busy);
    void setMessage(const QString &text, bool error);

    DesignDocument *m_document;
    QSpinBox *m_trials;
    QSpinBox *m_seed;
    QComboBox *m_distribution;
    QDoubleSpinBox *m_gainSpread;
    QDoubleSpinBox *m_gbwSpread;
    QPushButton *m_run;
    QPushButton *m_cancel;
    QProgressBar *m_progress;
    QLabel *m_message;
    QLabel *m_method;
    QLabel *m_yield;
    QLabel *m_noise;
    QTableWidget *m_table;
    struct Histogram
    {
        QChartView *view = nullptr;
        QLineSeries *outline = nullptr;
        QLineSeries *specLow = nullptr, *specHigh = nullptr, *nominal = nullptr;
        QValueAxis *x = nullptr, *y = nullptr;
    };
    Histogram m_histograms[3];
    BackgroundRun *m_background;
    bool m_userCancelled = false; ///< the run in progress was cancelled with Cancel

    std::optional<SheetSpread> m_result;
    std::string m_resultUnit;
    Specs m_resultSpecs;
    bool m_resultCurrent = false; ///< the design has not changed since the result's run
};

} // namespace loopsketch::ui
