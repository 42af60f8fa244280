// The document's analysis: runs core's analyze() on a worker thread on a copy of the design,
// applies only a result made for the design as it is now, and shows a coarse sweep first during
// a burst of edits on a slow design; when no view on screen draws the noise, the noise follows
// the main result from the same worker (ui/README.md §3).

#include "window/designdocument.h"

#include "support/qtadapter.h"

#include <QEventLoop>

#include <algorithm>
#include <chrono>

namespace loopsketch::ui {

namespace {
/// Changes closer together than this are a burst (wheel notches, arrow keys, a drag).
constexpr int kBurstGapMs = 250;
/// A burst's full analysis runs once the edits have paused this long.
constexpr int kSettleMs = 200;
/// Designs whose full analysis takes longer than this show a coarse sweep during a burst; a
/// faster one (the demo: about 1 ms) keeps up at full resolution.
constexpr double kCoarseAboveMs = 4.0;
} // namespace

struct DesignDocument::Run
{
    quint64 generation = 0;
    bool coarse = false;
    /// The main result is made without noise, and a noise pass follows it (noisePass).
    bool noiseFollows = false;
    /// This run is the noise pass: `result` is the main result with its noise added, or
    /// empty when the pass was skipped because the design changed meanwhile.
    bool noisePass = false;
    std::optional<Result<Analysis>> result;
    double ms = 0.0;
};

DesignDocument::DesignDocument(QObject *parent) : QObject(parent)
{
    m_recomputeTimer.setSingleShot(true);
    m_recomputeTimer.setInterval(0);
    connect(&m_recomputeTimer, &QTimer::timeout, this, &DesignDocument::dispatch);
    m_settleTimer.setSingleShot(true);
    m_settleTimer.setInterval(kSettleMs);
    connect(&m_settleTimer, &QTimer::timeout, this, [this] {
        m_wantCoarse = false;
        dispatch();
    });
}

DesignDocument::~DesignDocument()
{
    // The worker posts its result to this object; joining here means nothing is posted to a
    // destroyed document (what it already posted goes with it).
    if (m_worker.joinable())
        m_worker.join();
}

void DesignDocument::scheduleRecompute()
{
    ++m_generation;
    m_latestGeneration.store(m_generation);
    emit analysisPending();
    // Several changes in one event-loop turn (a macro, a structural edit) are one request.
    if (m_recomputeTimer.isActive())
        return;
    // A burst on a design whose full analysis is slow: coarse sweeps until it settles.
    const bool burst = m_sinceChange.isValid() && m_sinceChange.elapsed() < kBurstGapMs;
    m_sinceChange.start();
    if (burst && m_lastFullMs > kCoarseAboveMs) {
        m_wantCoarse = true;
        m_settleTimer.start();
    }
    m_recomputeTimer.start();
}

bool DesignDocument::waitForAnalysis(int timeoutMs)
{
    if (!isAnalysisPending())
        return true;
    // A nested event loop that sleeps until the result (or the timeout) arrives; a loop of
    // processEvents() calls would spin and take the CPU from the worker.
    QEventLoop loop;
    QTimer timeout;
    timeout.setSingleShot(true);
    connect(&timeout, &QTimer::timeout, &loop, &QEventLoop::quit);
    const auto quitWhenCurrent = [this, &loop] {
        if (!isAnalysisPending())
            loop.quit();
    };
    connect(this, &DesignDocument::analysisChanged, &loop, quitWhenCurrent);
    connect(this, &DesignDocument::analysisUnavailable, &loop, quitWhenCurrent);
    connect(this, &DesignDocument::noiseChanged, &loop, quitWhenCurrent);
    timeout.start(timeoutMs);
    loop.exec();
    return !isAnalysisPending();
}

void DesignDocument::dispatch()
{
    if (m_running || !isAnalysisPending())
        return;
    // A coarse result for this design is shown: the full one waits for the burst to settle.
    if (m_shownGeneration == m_generation && m_shownCoarse && m_wantCoarse)
        return;
    m_running = true;
    if (m_worker.joinable())
        m_worker.join();
    auto run = std::make_shared<Run>();
    run->generation = m_generation;
    run->coarse = m_wantCoarse;
    // On a slow design the noise waits for the main curves when no view on screen draws it
    // and no spec verdict (shown with the rest in the Readout) reads it. On a fast one (the
    // demo: about 1 ms, the noise a sixth of it) a second hand-over and Readout update would
    // cost the UI thread more than the wait it saves.
    run->noiseFollows = m_lastFullMs > kCoarseAboveMs && m_noiseOnScreen && !m_noiseOnScreen()
        && !m_design.specs.outputNoiseMax && !m_design.specs.snrMinDb;
    Design design = m_design;
    if (run->coarse)
        design.sweep.pointsPerDecade
            = std::min(design.sweep.pointsPerDecade, kCoarsePointsPerDecade);
    m_worker = std::thread([this, run, design = std::move(design), file = toStdString(m_filePath)] {
        const auto since = [](std::chrono::steady_clock::time_point start) {
            return std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now()
                                                             - start)
                .count();
        };
        const auto start = std::chrono::steady_clock::now();
        AnalysisOptions options;
        options.noise = !run->noiseFollows;
        run->result.emplace(analyze(design, file, options));
        run->ms = since(start);
        if (!run->noiseFollows || !*run->result) {
            QMetaObject::invokeMethod(
                this, [this, run] { finishRun(run); }, Qt::QueuedConnection);
            return;
        }
        // The main result goes to the views now; the noise is added to a copy of it.
        auto noise = std::make_shared<Run>();
        noise->generation = run->generation;
        noise->coarse = run->coarse;
        noise->noisePass = true;
        Analysis withNoise = **run->result;
        QMetaObject::invokeMethod(
            this, [this, run] { showMainResult(run); }, Qt::QueuedConnection);
        // Skipped when the design changed meanwhile: the next run makes its own.
        if (m_latestGeneration.load() == noise->generation) {
            const auto noiseStart = std::chrono::steady_clock::now();
            options.noise = true;
            addNoiseAnalysis(design, withNoise, options);
            noise->result.emplace(std::move(withNoise));
            noise->ms = since(noiseStart);
        }
        QMetaObject::invokeMethod(
            this, [this, noise] { finishRun(noise); }, Qt::QueuedConnection);
    });
    emit analysisStarted(run->generation, run->coarse);
}

void DesignDocument::showMainResult(const std::shared_ptr<Run> &run)
{
    // The worker goes on with the noise pass: the run is not over (m_running stays).
    if (run->generation == m_generation)
        applyRun(*run);
    else
        ++m_droppedResults; // made for a design that has changed since: never shown
}

void DesignDocument::finishRun(const std::shared_ptr<Run> &run)
{
    m_running = false;
    if (m_worker.joinable())
        m_worker.join();
    if (run->noisePass) {
        // Only onto the main result it follows, still shown and still current.
        if (run->result && run->generation == m_generation && m_shownGeneration == m_generation
            && m_shownNoiseFollows && m_shownCoarse == run->coarse && m_analysis)
            applyNoise(*run);
    } else if (run->generation == m_generation) {
        applyRun(*run);
    } else {
        ++m_droppedResults; // made for a design that has changed since: never shown
    }
    dispatch();
}

void DesignDocument::applyNoise(Run &run)
{
    m_shownNoiseFollows = false;
    m_lastNoiseMs = run.ms;
    m_analysis = std::move(*run.result).value();
    // Every recomputation ends with diagnosticsChanged, the analysis complete by then.
    emit diagnosticsChanged(m_diagnostics);
    emit noiseChanged(*m_analysis);
}

void DesignDocument::applyRun(Run &run)
{
    m_shownGeneration = run.generation;
    m_shownCoarse = run.coarse;
    m_shownNoiseFollows = false;
    m_lastRunDeferredNoise = run.noiseFollows;
    m_lastAnalysisMs = run.ms;
    if (!run.coarse)
        m_lastFullMs = run.ms;
    Result<Analysis> &result = *run.result;
    if (!result) {
        // Never leave the last good numbers standing as if they were current.
        m_analysis.reset();
        m_diagnostics = toQString(result.errorText());
        QString partId, reason = m_diagnostics;
        if (!result.diagnostics().empty()) {
            // Over the plots, the first problem without the file's path.
            Diagnostic first = result.diagnostics().front();
            partId = toQString(first.part);
            first.file.clear();
            reason = toQString(first.toString());
        }
        emit diagnosticsChanged(m_diagnostics);
        emit analysisUnavailable(reason, partId);
        return;
    }
    m_analysis = std::move(result).value();
    // Where the numbers cannot be trusted to full accuracy, the status line says so.
    QStringList warnings;
    for (const Diagnostic &w : m_analysis->warnings)
        warnings << tr("Warning: %1").arg(toQString(w.toString()));
    m_diagnostics = warnings.join(QLatin1Char('\n'));
    m_shownNoiseFollows = run.noiseFollows;
    if (!run.noiseFollows) // else once the noise has followed (applyNoise)
        emit diagnosticsChanged(m_diagnostics);
    emit analysisChanged(*m_analysis);
}

} // namespace loopsketch::ui
