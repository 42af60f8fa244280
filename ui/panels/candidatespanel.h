#pragma once

// The Candidates panel: the pinned candidates side by side with the current design, one
// column each, rows of key numbers with the best value of each row marked. Each candidate's
// numbers come from core's analyze() and worstCase() on the design with the candidate's
// values applied; results are cached per applied design and computed on a worker thread
// once a burst of edits has settled.

#include "panels/plotpanel.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/design.h"
#include "loopsketch/report/candidatecomparison.h"

#include <QThreadPool>
#include <QTimer>
#include <QWidget>

#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

class QAction;
class QLabel;
class QTableWidget;
class QTableWidgetItem;

namespace loopsketch::ui {

class DesignDocument;

class CandidatesPanel : public QWidget
{
    Q_OBJECT

public:
    explicit CandidatesPanel(DesignDocument *document, QWidget *parent = nullptr);
    ~CandidatesPanel() override;

    /// Title of the first column.
    static inline const QString kCurrentColumn = QStringLiteral("current design");

    // Row titles (the table's vertical header) of core's comparison, for tests and the
    // review of a cell.
    static inline const QString kGainRow = QString::fromUtf8(comparisonrow::kGain);
    static inline const QString kGainErrorRow = QString::fromUtf8(comparisonrow::kGainError);
    static inline const QString kBandwidthRow = QString::fromUtf8(comparisonrow::kBandwidth);
    static inline const QString kPhaseMarginRow = QString::fromUtf8(comparisonrow::kPhaseMargin);
    static inline const QString kPeakingRow = QString::fromUtf8(comparisonrow::kPeaking);
    static inline const QString kDesensitivityRow
        = QString::fromUtf8(comparisonrow::kDesensitivity);
    static inline const QString kZInRow = QString::fromUtf8(comparisonrow::kZIn);
    static inline const QString kZOutRow = QString::fromUtf8(comparisonrow::kZOut);
    static inline const QString kOutputNoiseRow = QString::fromUtf8(comparisonrow::kOutputNoise);
    static inline const QString kInputNoiseRow = QString::fromUtf8(comparisonrow::kInputNoise);
    static inline const QString kWorstCaseRow = QString::fromUtf8(comparisonrow::kWorstCase);
    static inline const QString kSpecsMetRow = QString::fromUtf8(comparisonrow::kSpecsMet);

    /// The glyph in front of a row's best value.
    static inline const QString kBestMarker = QStringLiteral("★");

    QTableWidget *table() const { return m_table; }
    /// Column titles in order: kCurrentColumn, then the candidates.
    QStringList columnNames() const;
    QStringList rowNames() const;
    /// The cell's text without the best marker; empty when there is no such cell.
    QString cellText(const QString &row, const QString &column) const;
    QString cellToolTip(const QString &row, const QString &column) const;
    /// True when the cell is marked as its row's best.
    bool isBest(const QString &row, const QString &column) const;

    /// True when every column shows the design as it is now (nothing pending).
    bool isUpToDate() const;
    /// The candidates in column order with their latest analysis (for the overlays).
    std::vector<OverlaySource> overlaySources() const;
    /// Milliseconds of the last worker run (analyses and worst cases of the missing columns).
    double lastComputeMs() const { return m_lastComputeMs; }
    QString statusText() const;

    QAction *pinAction() const { return m_pin; }
    QAction *renameAction() const { return m_rename; }
    QAction *deleteAction() const { return m_delete; }
    QAction *makeCurrentAction() const { return m_makeCurrent; }

    /// Selects a candidate's column (the actions work on it); false when there is none.
    bool selectCandidate(const QString &name);
    /// The selected candidate, empty when none (or the current design) is selected.
    QString selectedCandidate() const;

    /// Asks for a name (default "Candidate N") and pins; asks again with the reason while
    /// the name is empty or taken.
    void pinWithDialog();
    void renameWithDialog();
    void deleteSelected();
    void makeSelectedCurrent();

signals:
    /// The candidates' analyses shown changed (the overlays follow).
    void resultsChanged();

protected:
    void showEvent(QShowEvent *event) override;

private:
    /// Asks for a candidate name (starting from `name`) until `accept` takes one, saying why
    /// the last was refused above `prompt`; the accepted candidate is then selected.
    void askForName(const QString &title, const QString &prompt, QString name,
                    const std::function<bool(const QString &, QString *)> &accept);

    struct Computed
    {
        Design key; ///< the applied design, without candidates, sketch, title or notes
        std::shared_ptr<const Analysis> analysis; ///< nullptr when the analysis failed
        QString problem; ///< why there is no analysis
        ComparisonWorstCase worst; ///< the applied design's worst-case gain
    };
    using ComputedPtr = std::shared_ptr<const Computed>;

    static Design keyOf(const Design &design);
    static ComputedPtr compute(Design key);
    ComputedPtr cached(const Design &key) const;
    /// Matches every column to a cached result; schedules the worker for the missing ones
    /// after `delayMs` (a burst restarts the wait).
    void refresh(int delayMs);
    void startWorker();
    void workerFinished(std::vector<ComputedPtr> results, double ms);
    void fillTable();
    /// The columns for core's comparison; `stale` per column: the numbers are from before
    /// the last edit.
    std::vector<ComparisonInput> comparisonInputs(std::vector<bool> *stale) const;
    void setRowHeader(int row, const ComparisonRow &data);
    void setColumnHeader(int column, const QString &name, const Candidate *candidate, bool stale);
    void setCell(int row, int column, const ComparisonRow &data, bool stale);
    /// Fills the table now when a refresh left it for later.
    void flush() const;
    void updateActions();
    void setStatus(const QString &text);

    DesignDocument *m_document;
    QTableWidget *m_table;
    QLabel *m_status;
    QAction *m_pin, *m_rename, *m_delete, *m_makeCurrent;
    QTimer m_refreshLater; ///< restarted by every recomputation of the document
    QTimer m_settle; ///< starts the worker
    QThreadPool m_pool;
    bool m_busy = false;
    bool m_again = false;
    std::vector<ComputedPtr> m_cache; ///< newest last, bounded
    std::map<std::string, ComputedPtr> m_shown; ///< candidate name -> result on screen
    ComputedPtr m_currentWorst; ///< the current design's worst case (its analysis is the
                                ///< document's)
    std::vector<Design> m_missing;
    std::vector<OverlaySource> m_emitted; ///< as last announced by resultsChanged()
    double m_lastComputeMs = 0;
    QString m_message;
    mutable bool m_tableDirty = true;
};

} // namespace loopsketch::ui
