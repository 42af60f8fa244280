#pragma once

// The main window: Parts and Inspector docks, the Sketch in the middle, the Readout strip
// on top and the linked plot panels as docks whose arrangement persists.

#include <QMainWindow>
#include <QPointF>

#include <set>
#include <string>
#include <vector>

class QDockWidget;
class QLabel;
class QMenu;
class QTimer;

namespace loopsketch {
struct Analysis;
}

namespace loopsketch::ui {

class CandidatesPanel;
class DesignPropertiesPanel;
class DesignDocument;
class Inspector;
class PartsPalette;
class PlotPanel;
class Readout;
class SketchScene;
class SketchView;
class LoopGainPanel;
class NoisePanel;
class SpreadPanel;
class SuggestDialog;

class MainWindow : public QMainWindow
{
    Q_OBJECT

public:
    explicit MainWindow(QWidget *parent = nullptr);
    ~MainWindow() override;

    /// Opens the design text (the embedded demo) under a display name, without a file.
    bool openText(const std::string &text, const QString &name, QString *error = nullptr);
    /// Opens a design file; on failure `error` says why and the current design stays.
    bool openFile(const QString &path, QString *error = nullptr);
    bool saveTo(const QString &path, QString *error = nullptr);

    DesignDocument *document() const { return m_document; }
    SketchScene *sketchScene() const { return m_scene; }
    SketchView *sketchView() const { return m_view; }
    Readout *readout() const { return m_readout; }
    Inspector *inspector() const { return m_inspector; }
    PartsPalette *partsPalette() const { return m_palette; }
    DesignPropertiesPanel *designProperties() const { return m_properties; }
    /// File > New: a blank design (asks before discarding unsaved changes).
    void newDesign();
    /// Places a palette symbol (a PartType, or -1 for ground) at a scene point, one undo step.
    void placeSymbol(int symbol, QPointF scenePos);
    LoopGainPanel *loopGainPanel() const { return m_loopGain; }
    const std::vector<PlotPanel *> &panels() const { return m_panels; }
    CandidatesPanel *candidatesPanel() const { return m_candidates; }
    /// Brings the Candidates dock forward with room for its table (after a pin).
    void showCandidates();
    /// View > Reset layout: every dock back in the default arrangement for the window's
    /// size (compact below 1400 px wide or on a screen under 1000 px high: the plots in two tab
    /// groups beside the Sketch).
    void resetLayout();
    /// True when the plots share the tab groups beside the Sketch.
    bool isCompactLayout() const;
    /// True when the window or its screen is too small for the side-by-side arrangement.
    bool wantsCompactLayout() const;
    SpreadPanel *spreadPanel() const { return m_spread; }
    /// The Suggest values dialog, created on first use.
    SuggestDialog *suggestDialog();
    QString statusText() const;
    /// The Design menu (candidates, spread, suggestions).
    QMenu *designMenu() const { return m_designMenu; }
    /// Asks before discarding unsaved changes (false: the user cancelled). Tests turn the
    /// question off.
    bool maybeSave();
    void setAskBeforeDiscarding(bool ask) { m_ask = ask; }
    /// Where this process writes unsaved work every 30 s; removed when the window closes
    /// normally. One file per process, so two running copies never share or delete each
    /// other's work.
    static QString recoveryFile();
    /// The recovery file of process `pid`.
    static QString recoveryFileOf(qint64 pid);
    /// Offers to restore the work of a copy that did not close normally (a recovery file
    /// whose process is gone), newest first. True when one was restored (it counts as
    /// unsaved, and is written to this process's recovery file at once).
    bool offerRecovery();

protected:
    void closeEvent(QCloseEvent *event) override;
    void showEvent(QShowEvent *event) override;
    void dragEnterEvent(QDragEnterEvent *event) override;
    void dropEvent(QDropEvent *event) override;

private:
    void createDocks();
    /// The document's signals to the window's widgets.
    void connectDocument();
    /// The Sketch's and the Parts palette's requests to the document's edits.
    void connectSketch();
    /// Writes the recovery file at an interval while the design has unsaved changes.
    void startAutosave();
    /// Puts every dock in its default place (compact: the plots in two tab groups right of
    /// the Sketch); sizeDocks() then gives them their default sizes.
    void arrangeDocks(bool compact);
    void sizeDocks(bool compact);
    /// The window's geometry and dock arrangement as the last session left them, or the
    /// default arrangement where none (or an older one) was saved.
    void restoreLayout();
    void saveLayout();
    void createActions();
    void updateTitle();
    void rebuildSketch();
    void showAnalysis(const Analysis &analysis);
    void showUnavailable(const QString &reason, const QString &partId);
    /// The design changed and its result is on the way: the status line says so at once,
    /// the Readout greys if it takes long.
    void showPending();
    /// Brings a panel that missed results while out of sight up to the shown analysis.
    void catchUpPanel(PlotPanel *panel);
    /// The noise that followed the result shown: the Readout's noise cell and the Noise panel.
    void showNoise(const Analysis &analysis);
    void selectionChanged();
    void addRecentFile(const QString &path);
    void updateRecentMenu();
    void newFromExample(const QString &resource);
    void openDialog();
    bool save();
    bool saveAs();
    void about();
    void createEditActions(QMenu *edit);
    /// The parts an Edit action works on: the selection of the "In this design" list while
    /// it has the focus, else the Sketch's.
    std::vector<std::string> partsToEdit() const;
    void copySelection();
    void cutSelection();
    void pasteParts();
    void duplicateSelection();
    /// Removes the selected parts, ground symbols and wires as one undo step.
    void deleteSelection();
    /// Writes unsaved work to recoveryFile(); false when there was nothing to write or the
    /// write failed.
    bool writeRecovery();
    /// offerRecovery() for one file.
    bool offerRecoveryFrom(const QString &path);

    DesignDocument *m_document;
    SketchScene *m_scene;
    SketchView *m_view;
    Readout *m_readout;
    Inspector *m_inspector;
    PartsPalette *m_palette;
    DesignPropertiesPanel *m_properties = nullptr;
    LoopGainPanel *m_loopGain = nullptr;
    NoisePanel *m_noise = nullptr;
    CandidatesPanel *m_candidates = nullptr;
    QDockWidget *m_candidatesDock = nullptr;
    SpreadPanel *m_spread = nullptr;
    SuggestDialog *m_suggest = nullptr;
    std::vector<PlotPanel *> m_panels;
    std::vector<QDockWidget *> m_docks;
    QLabel *m_timing;
    QLabel *m_diagnostics;
    QMenu *m_recentMenu = nullptr;
    QMenu *m_viewMenu = nullptr;
    QMenu *m_designMenu = nullptr;
    QString m_displayName;
    bool m_ask = true;
    bool m_sizedDocks = false;
    QTimer *m_settleTimer = nullptr; ///< antialiasing back on once a burst of edits settles
    qint64 m_lastAnalysisAt = 0;
    QTimer *m_pendingTimer = nullptr; ///< greys the Readout while a slow result is on the way
    std::set<PlotPanel *> m_panelsBehind; ///< out of sight when the last result came
};

} // namespace loopsketch::ui
