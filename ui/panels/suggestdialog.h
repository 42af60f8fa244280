#pragma once

// Suggest values: the user picks R/C/L parts, an E-series and a range in decades; core's
// suggestValues searches the combinations in a background thread against the design's specs
// and the best few are listed; one click applies a row as one undoable step.

#include "loopsketch/analysis/suggest.h"
#include "loopsketch/base/eseries.h"

#include <QDialog>
#include <QString>
#include <QStringList>

#include <memory>
#include <optional>
#include <string>
#include <vector>

class QComboBox;
class QDoubleSpinBox;
class QLabel;
class QListWidget;
class QProgressBar;
class QPushButton;
class QTableWidget;

namespace loopsketch::ui {

class BackgroundRun;
class DesignDocument;

class SuggestDialog : public QDialog
{
    Q_OBJECT

public:
    static constexpr int kBest = 8; ///< suggestions listed

    explicit SuggestDialog(DesignDocument *document, QWidget *parent = nullptr);
    /// Sets the cancel flag and waits for the worker.
    ~SuggestDialog() override;

    // The controls, for tests.
    /// The R/C/L parts offered, in design order.
    QStringList offeredParts() const;
    void setPartChecked(const QString &id, bool checked);
    QStringList checkedParts() const;
    /// nullopt: each part's own series (E24 for a part without one).
    void setSeries(std::optional<ESeries> series);
    std::optional<ESeries> series() const;
    void setDecades(double decades);

    /// Starts the search on a copy of the design (the chosen series on the chosen parts).
    void run();
    void cancel();
    bool isRunning() const;

    /// The last search's result; nullptr before one or after the design changed.
    const SuggestResult *result() const { return m_result ? &*m_result : nullptr; }
    /// Applies suggestion `row` (0 = best) as one undo step; false when there is none.
    bool applySuggestion(int row);

    QString targetsText() const;
    /// What the search would cover: the values, combinations and DC gains to compute.
    QString previewText() const;
    QString statusText() const;
    /// The text of a result-table cell.
    QString cellText(int row, int column) const;
    int resultRows() const;
    double lastRunMs() const;

signals:
    /// A search ended (complete, cancelled or failed) and what it found is shown.
    void searchFinished();

private:
    struct Delivery;

    void designChanged();
    void rebuildParts();
    void updateTargets();
    void updatePreview();
    /// The design (the chosen series on the chosen parts) and options a search runs on.
    std::pair<Design, SuggestOptions> searchRequest() const;
    void deliver(Delivery delivery);
    void showResult();
    void setBusy(bool busy);
    void setStatus(const QString &text, bool error);

    DesignDocument *m_document;
    QListWidget *m_parts;
    QComboBox *m_series;
    QDoubleSpinBox *m_decades;
    QLabel *m_targets;
    QLabel *m_preview;
    QPushButton *m_run;
    QPushButton *m_cancel;
    QProgressBar *m_progress;
    QLabel *m_status;
    QTableWidget *m_table;
    BackgroundRun *m_background;

    bool m_applying = false;
    std::optional<SuggestResult> m_result;
    std::optional<ESeries> m_resultSeries;
    std::string m_resultUnit;
};

} // namespace loopsketch::ui
