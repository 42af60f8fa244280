#pragma once

// The Candidates panel: the pinned candidates side by side with the current design, one
// column each, rows of key numbers with the best value of each row marked. Each candidate's
// numbers come from core's analyze() and worstCase() on the design with the candidate's
// values applied; results are cached per applied design and computed on a worker thread
// once a burst of edits has settled.

#include "panels/plotpanel.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/design.h"

#include <QThreadPool>
#include <QTimer>
#include <QWidget>

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

    // Row titles (the table's vertical header), for tests and the review of a cell.
    static inline const QString kGainRow = QStringLiteral("closed-loop gain");
    static inline const QString kGainErrorRow = QStringLiteral("gain error vs spec");
    static inline const QString kBandwidthRow = QStringLiteral("bandwidth −3 dB");
    static inline const QString kPhaseMarginRow = QStringLiteral("phase margin");
    static inline const QString kPeakingRow = QStringLiteral("peaking");
    static inline const QString kDesensitivityRow = QStringLiteral("desensitivity at DC");
    static inline const QString kZInRow = QStringLiteral("z_in at DC");
    static inline const QString kZOutRow = QStringLiteral("z_out at DC");
    static inline const QString kWorstCaseRow = QStringLiteral("worst-case gain");
    static inline const QString kSpecsMetRow = QStringLiteral("specs met");

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
    struct Computed
    {
        Design key; ///< the applied design, without candidates, sketch, title or notes
        std::shared_ptr<const Analysis> analysis; ///< nullptr when the analysis failed
        QString problem; ///< why there is no analysis
        bool hasTolerances = false;
        OptionalNumber worstMin, worstMax;
        bool worstExhaustive = true;
        std::size_t corners = 0;
        QString worstProblem;
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
