#pragma once

// The document/controller: owns the one Design (the single source of truth), the one
// QUndoStack and the latest Analysis. Every edit goes through an undoable command; every
// change schedules one recomputation, which runs on a worker thread on a copy of the design
// (ui/README.md §3): the latest request wins, a result for an older state of the design is
// dropped, and during a burst of edits on a slow design a coarse sweep shows first.

#include "sketch/sketchlayout.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/design.h"

#include <QObject>
#include <QString>
#include <QStringList>
#include <QTimer>
#include <QUndoStack>

#include <QElapsedTimer>

#include <atomic>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <thread>
#include <utility>

namespace loopsketch::ui {

/// The design with a candidate's values on the parts' primary fields (the rule of
/// `loopsketch analyze --candidate`); `problem` names a part the candidate cannot change.
Design designWithCandidate(const Design &design, const Candidate &candidate,
                           QString *problem = nullptr);

class DesignDocument : public QObject
{
    Q_OBJECT

public:
    explicit DesignDocument(QObject *parent = nullptr);
    /// Waits for a run in progress (its result is dropped).
    ~DesignDocument() override;

    /// Points per decade of the coarse sweep shown first during a burst of edits.
    static constexpr int kCoarsePointsPerDecade = 20;

    const Design &design() const { return m_design; }
    /// The full analysis of the design as it is now; nullptr while its recomputation is
    /// pending (the views then still show an older or a coarse result), or when it cannot be
    /// analysed. What saves, exports or compares numbers reads this one.
    const Analysis *analysis() const
    {
        return m_analysis && !isAnalysisPending() ? &*m_analysis : nullptr;
    }
    /// The analysis the views show: possibly coarse, or for an earlier state of the design
    /// while a recomputation is pending; nullptr when the latest one failed.
    const Analysis *shownAnalysis() const { return m_analysis ? &*m_analysis : nullptr; }
    /// True until the full result (or the diagnostics) for the design as it is now has been
    /// applied.
    bool isAnalysisPending() const
    {
        return m_shownGeneration != m_generation || m_shownCoarse || m_shownNoiseFollows;
    }
    /// True when the views show a result whose noise analysis follows (noiseChanged): the
    /// main curves came first because no view on screen drew the noise.
    bool isNoiseFollowing() const { return m_shownNoiseFollows; }
    /// Tells the document whether a view on screen draws the noise curves (the Noise panel);
    /// asked at every run. While it says no, on a design whose last full analysis took over
    /// 4 ms (as for the coarse sweep) and that has no noise spec (whose verdict the Readout
    /// shows with the rest), a run computes the main curves and metrics first and the noise
    /// after them, on the same worker (ui/README.md §3). Without a probe every run computes
    /// everything at once.
    void setNoiseOnScreenProbe(std::function<bool()> probe) { m_noiseOnScreen = std::move(probe); }
    /// Whether the result shown was made with the noise in one run (false: it followed, or
    /// the run had no noise to compute because it failed). For tests.
    bool lastRunDeferredNoise() const { return m_lastRunDeferredNoise; }
    /// How long the last full analysis took (ms, wall clock): the figure the coarse sweep and
    /// the deferred noise are decided on. For tests.
    double lastFullAnalysisMs() const { return m_lastFullMs; }
    /// True when the views show the coarse sweep of a burst (the full one follows).
    bool isShownCoarse() const { return m_shownCoarse; }
    /// Runs the event loop until the full result for the design as it is now has been
    /// applied (or its diagnostics); false when `timeoutMs` passed first.
    bool waitForAnalysis(int timeoutMs = 60000);
    /// Changes of the design so far; every result is tagged with the one it was made for.
    quint64 generation() const { return m_generation; }
    /// The generation whose result the views show.
    quint64 shownGeneration() const { return m_shownGeneration; }
    /// Results that arrived for an older state of the design and were dropped.
    int droppedResults() const { return m_droppedResults; }
    QUndoStack *undoStack() { return &m_undoStack; }

    /// Replaces the design (open, new): clears the undo history and recomputes at once.
    void reset(Design design, const QString &filePath);
    /// A design with no parts: one ground symbol on the Sketch, default sweep, no specs.
    static Design blankDesign();
    QString filePath() const { return m_filePath; }
    bool isModified() const { return !m_undoStack.isClean(); }
    /// Atomic save through core; on failure `error` says why and nothing changes. A design
    /// whose text the loader would refuse is never written (the reason names part and field).
    bool save(const QString &path, QString *error);

    /// The sketch positions in use: the stored layout, or the automatic one.
    const SketchLayout &layout() const { return m_layout; }

    // Edits, each one undoable command.
    /// Steps the primary value of `partId` through its E-series (E24 when it has none);
    /// `decade` steps by a whole decade. Consecutive steps of one part merge into one undo
    /// step while they come in a burst. Returns false when the part has no primary value.
    bool stepPart(const std::string &partId, int steps, bool decade);
    /// Sets a numeric field from text; on a parse error `error` holds the message and the
    /// design keeps its last valid value.
    bool setFieldText(const std::string &partId, const std::string &field, const QString &text,
                      QString *error);
    void setSeries(const std::string &partId, std::optional<ESeries> series);
    /// Sets the gain block's "poles_hz" or "zeros_hz" from text such as "10, 40M"; on a
    /// parse error `error` names the entry and nothing changes.
    bool setFrequencyListText(const std::string &partId, const std::string &list,
                              const QString &text, QString *error);
    /// Generic gain-block presets with neutral names (no real device is modelled).
    static QStringList gainBlockPresets();
    /// The preset whose values the gain block has now (index into gainBlockPresets()), -1
    /// when its values are its own ("custom").
    int gainBlockPresetInEffect(const std::string &partId) const;
    /// Applies preset `index` of gainBlockPresets() as one undo step.
    void applyGainBlockPreset(const std::string &partId, int index);
    bool setToleranceText(const std::string &partId, const QString &text, QString *error);
    /// Sets the primary values (SI) of several parts, and their series when `series` is
    /// given, as one undo step named `text` (a suggestion applied).
    void applyValues(const std::vector<std::pair<std::string, double>> &values,
                     std::optional<ESeries> series, const QString &text);
    /// Moves parts to new sketch positions (scene units), one undo step for all of them.
    void moveParts(const std::map<std::string, std::pair<double, double>> &positions);
    /// Turns a part's symbol by 90 degrees clockwise.
    void rotatePart(const std::string &partId);
    /// Mirrors a part's symbol left to right (or back), kept in the sketch section.
    void mirrorPart(const std::string &partId);

    // Structural edits (parts and connections), each one undoable step.
    /// Adds a part of `type` with fresh, unconnected nodes at a free place near (x, y);
    /// returns its id.
    std::string addPart(PartType type, double x, double y);
    /// Removes parts; a removed signal source leaves the design invalid until a new one is
    /// chosen, which the diagnostics say.
    void removeParts(const std::vector<std::string> &partIds);
    /// Joins the nodes on two pins: the ground node wins, else the node with more pins
    /// keeps its name. False when they already share a node.
    bool connectPins(const std::string &partA, const std::string &terminalA,
                     const std::string &partB, const std::string &terminalB);
    /// Puts one pin on the ground node.
    bool groundPin(const std::string &partId, const std::string &terminal);
    /// Takes one pin off its node onto a fresh node of its own. False when it shares its
    /// node with no other pin and is not on ground.
    bool disconnectPin(const std::string &partId, const std::string &terminal);
    /// Removes wires, each given by the two pins it joins (an edge of the Sketch's wiring,
    /// routeWires()): the pins on either side of a removed wire end up on separate nodes,
    /// the larger side keeping the node's name. One undo step; false when none was a wire.
    bool removeWires(const std::vector<std::pair<PinRef, PinRef>> &wires);
    /// Moves the `leave` end of the wire between `keep` and `leave` to `target` (a part's
    /// pin, or ground when target.part is empty), as one undo step.
    bool reattachWire(const PinRef &keep, const PinRef &leave, const PinRef &target);
    /// Takes a pin off its node and joins it to `target`'s (ground when target.part is
    /// empty), as one undo step.
    bool movePin(const PinRef &pin, const PinRef &target);
    /// Adds copies of `fragment`'s parts (copyParts()) with fresh ids (the next free R3,
    /// C2 ...) and fresh nodes (connections among them kept, ground kept), moved down and
    /// right from their copied places by two grid steps or as many more as it takes to keep
    /// clear of every part (80 x 60 scene units). One undo step
    /// named `text`; returns the new ids.
    std::vector<std::string> pasteParts(const Design &fragment, const QString &text);
    /// Places a free-standing ground symbol at (x, y) (scene units, snapped to the grid).
    void addGround(double x, double y);
    /// Moves ground symbol `index` of the layout; false when there is no such symbol.
    bool moveGround(int index, double x, double y);
    /// Removes ground symbols by index (the pins on ground stay on ground).
    void removeGrounds(const std::vector<int> &indices);
    /// Renames a part and everything that names it (candidates, the input, the layout), as
    /// one undo step. False with `error` set when the new id is invalid or taken.
    bool renamePart(const std::string &from, const std::string &to, QString *error);
    /// Replaces the design-wide properties (title, notes, input, output, sweep, specs,
    /// temperature, noise band, spot frequency, full-scale signal) of `after`, one undo step
    /// named `text`; the parts are not touched.
    void setProperties(const Design &after, const QString &text);

    // Candidates (design file key `candidates`), each edit one undo step.
    /// "Candidate N" with the smallest N >= 1 that no candidate uses yet.
    QString nextCandidateName() const;
    /// Why `name` cannot name a candidate (empty, already used); empty when it can.
    /// `ignore` is a name that may be reused (the one being renamed).
    QString candidateNameProblem(const QString &name, const QString &ignore = {}) const;
    /// Stores the value of every resistor, capacitor and inductor under `name` (trimmed).
    /// The load is left out: it is the circuit's surroundings, not a design choice, so
    /// making a candidate current later does not undo a change of the load. False with
    /// `error` set when the name is empty or taken, or there is no such part.
    bool pinCandidate(const QString &name, QString *error);
    bool renameCandidate(const QString &from, const QString &to, QString *error);
    bool deleteCandidate(const QString &name);
    /// Applies the candidate's values to the parts, one undo step. False with `error` set
    /// when there is no such candidate or the design already has its values.
    bool makeCandidateCurrent(const QString &name, QString *error);

    /// Why the design cannot be analysed now; empty when the analysis is current.
    QString unavailableReason() const { return m_analysis ? QString() : m_diagnostics; }
    /// Milliseconds of the core analyze() call whose result is shown (on the worker).
    double lastAnalysisMs() const { return m_lastAnalysisMs; }
    /// Core's time for the last noise pass that followed a main result, ms.
    double lastNoiseMs() const { return m_lastNoiseMs; }
    QString lastDiagnostics() const { return m_diagnostics; }

    // Used by the commands only.
    /// nullopt removes the field (its default applies).
    void applyField(const std::string &partId, const std::string &field,
                    const std::optional<Value> &value);
    void applySeries(const std::string &partId, std::optional<ESeries> series);
    void applyTolerance(const std::string &partId, std::optional<Value> tolerance);
    void applySketch(const std::optional<SketchLayout> &sketch);
    /// Replaces the whole design (structural edits and their undo).
    void applyDesign(const Design &design);
    void applyFrequencyList(const std::string &partId, const std::string &list,
                            const std::vector<Value> &values);
    void applyCandidates(const std::vector<Candidate> &candidates);

signals:
    /// The design was replaced (open, new): views rebuild.
    void designReset();
    /// One part's fields changed (values, series, tolerance).
    void partChanged(const QString &partId);
    /// Sketch positions changed.
    void layoutChanged();
    /// Parts were added, removed or reconnected: the Sketch rebuilds (the history stays).
    void structureChanged();
    /// A result for the design as it is now, to every view at once; isShownCoarse() tells a
    /// burst's coarse sweep from the full one.
    void analysisChanged(const loopsketch::Analysis &analysis);
    /// The noise analysis of the result shown, which followed analysisChanged: `analysis` is
    /// that result with its noise (and the spec verdicts recomputed with it).
    void noiseChanged(const loopsketch::Analysis &analysis);
    /// The design changed: what the views show is for an earlier state until the next
    /// analysisChanged or analysisUnavailable.
    void analysisPending();
    /// A run for design generation `generation` has started on the worker (`coarse`: the
    /// burst's coarse sweep).
    void analysisStarted(quint64 generation, bool coarse);
    /// The design cannot be analysed: every view drops its numbers and shows `reason`.
    /// `partId` names the offending part when the reason names one.
    void analysisUnavailable(const QString &reason, const QString &partId);
    /// Something changed as a consequence of an edit (a candidate emptied by a deletion and
    /// removed, the input chosen): one line for the status bar.
    void noticeIssued(const QString &text);
    /// Analysis failed or succeeded; empty text when there is nothing to report.
    void diagnosticsChanged(const QString &text);
    void filePathChanged(const QString &path);
    /// The candidate list changed (pin, rename, delete and their undo); the analysis of the
    /// design itself does not depend on it, so no recomputation follows.
    void candidatesChanged();

private:
    /// One analysis run's outcome, made on the worker for design generation `generation`.
    struct Run;
    void scheduleRecompute();
    /// Starts a run for the design as it is now unless one is in flight or nothing is needed.
    void dispatch();
    /// On the UI thread: the main result of a run whose noise follows, applied when it is
    /// for the current design, else dropped.
    void showMainResult(const std::shared_ptr<Run> &run);
    /// On the UI thread: applies `run` when it is for the current design, else drops it.
    void finishRun(const std::shared_ptr<Run> &run);
    void applyRun(Run &run);
    /// On the UI thread: the noise pass that followed `run`'s main result.
    void applyNoise(Run &run);
    void rebuildLayout();
    void pushDesign(Design after, const QString &text);
    /// Keeps what names parts consistent with the parts (candidates, input) after a
    /// structural edit; returns notices for the user.
    QStringList tidy(Design &design) const;
    /// The first free id for a new part of `type` in `design` ("R3", "C2" ...).
    static std::string nextFreeId(PartType type, const Design &design);

    Design m_design;
    std::optional<Analysis> m_analysis;
    SketchLayout m_layout;
    QUndoStack m_undoStack;
    QTimer m_recomputeTimer; ///< 0 ms: the changes of one event-loop turn cost one run
    QTimer m_settleTimer; ///< a burst's full run once the edits pause
    QElapsedTimer m_sinceChange;
    QString m_filePath;
    QString m_diagnostics;
    double m_lastAnalysisMs = 0.0;
    double m_lastFullMs = 0.0;
    double m_lastNoiseMs = 0.0;
    quint64 m_generation = 0;
    quint64 m_shownGeneration = 0;
    bool m_shownCoarse = false;
    bool m_wantCoarse = false;
    bool m_shownNoiseFollows = false;
    bool m_lastRunDeferredNoise = false;
    bool m_running = false;
    std::function<bool()> m_noiseOnScreen;
    /// m_generation for the worker, which skips a noise pass already superseded.
    std::atomic<quint64> m_latestGeneration{0};
    int m_droppedResults = 0;
    std::thread m_worker;
};

} // namespace loopsketch::ui
