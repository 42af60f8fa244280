// One E-series wheel step on the feedback resistor, through the real event path, to every
// panel and the Readout repainted: ui/README.md §3 asks for under one 60 Hz frame (16 ms),
// issue 15 for a median of 8 ms on the demo. And on the 50-part RC ladder (a full analysis of
// tens of ms, run on the document's worker thread) the longest the UI thread goes without
// turning its event loop during a burst of 20 wheel steps: issue 15 asks for no stall over
// 16 ms.
//
// Measured 2026-12-03 on this 2-core machine shared with other sessions (load average 8-15
// throughout, so wall-clock figures are stretched several times; CPU figures are the UI
// thread's own). The figures of the earlier rounds (straight-run thinning, Nyquist rings
// kept; panel updates sliced across event-loop turns, not merged because issue 15 asks for a
// result applied to every panel at once) are in this file's history.
//
// Latest round: main 19387b8 (before) against the branch that clears the UI thread's dirty
// AVX upper state (support/vectorstate.h) and thins the Nyquist curve in the plane (after),
// the two binaries run back to back, 2 s per benchmark.
// - Demo wheel step, UI thread CPU (median_ui_cpu_ms), load 10.1-10.4: default docks
//   16.1 / 19.8 ms before, 13.0 / 9.9 after; Noise dock raised 14.8 / 20.6 before, 10.7 / 8.4
//   after. Step to repainted (median_step_ms, wall): 40.8 / 51.5 -> 35.4 / 25.1 ms, Noise
//   raised 21.0 / 40.9 -> 14.3 / 11.4 ms (target 8 ms: missed; under this load the wall
//   clock is not the UI thread's alone, see idle_stall_ms below).
// - One panel's update (BM_UpdateOnePanel, CPU ms, load 11-12, before -> after): Loop gain
//   5.33 -> 1.16, Impedance 2.05 -> 0.44, Desensitivity 0.40 -> 0.07, Step 0.12 -> 0.08,
//   Poles 1.49 -> 0.68, Noise 2.73 -> 0.72, Nyquist 12.6 -> 0.31 (its axes no longer move
//   with every change of |T|, so its rings are not laid out again, and its 901-point curve
//   and mirror are drawn at a quarter pixel).
// - Ladder burst: the most UI-thread CPU between two 1 ms ticks (longest_stall_cpu_ms)
//   17.9 / 21.5 / 21.5 / 22.0 ms before, 15.4 / 10.5 / 13.0 / 9.2 after (load 9.5-10.4);
//   wall-clock longest stall 49 / 99 / 70 / 75 ms before, 44 / 47 / 50 / 29 ms after, where
//   the idle 1 ms timer alone shows gaps of 9-59 ms at this load.
// What remains on the UI thread per step: painting (BM_RepaintOneWidget, CPU ms after: Loop
// gain 1.1, Impedance 0.9, Desensitivity 0.5, Step 0.5, Poles 0.3, Noise 1.3, Nyquist 1.1,
// Sketch 0.9, Readout 0.3), the Readout's label and layout updates, and text shaping.

#include "panels/noisepanel.h"
#include "panels/plotpanel.h"
#include "panels/readout.h"
#include "sketch/partitem.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "chaindesigns.h"

#include <QAbstractScrollArea>
#include <QApplication>
#include <QDockWidget>
#include <QElapsedTimer>
#include <QEventLoop>
#include <QStandardPaths>
#include <QTimer>
#include <QWheelEvent>
#include <QtCore/qtestsupport_core.h>

#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <ctime>
#include <vector>

using namespace loopsketch::ui;

namespace {

void wheelOver(MainWindow &window, const std::string &id, int notches)
{
    PartItem *item = window.sketchScene()->partItem(id);
    SketchView *view = window.sketchView();
    const QPoint pos = view->mapFromScene(item->mapToScene(QPointF(0, 0)));
    QWheelEvent event(QPointF(pos), QPointF(view->viewport()->mapToGlobal(pos)), QPoint(),
                      QPoint(0, 120 * notches), Qt::NoButton, Qt::NoModifier, Qt::NoScrollPhase,
                      false);
    QApplication::sendEvent(view->viewport(), &event);
}

/// CPU time of the calling thread in ms: the UI thread's own work, which the machine's load
/// does not stretch the way it stretches wall-clock time.
double threadCpuMs()
{
    timespec t{};
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
    return double(t.tv_sec) * 1e3 + double(t.tv_nsec) / 1e6;
}

double median(std::vector<double> v)
{
    std::nth_element(v.begin(), v.begin() + std::ptrdiff_t(v.size() / 2), v.end());
    return v[v.size() / 2];
}

/// A dock behind another tab stays "visible" to Qt, moved out of the window.
bool onScreen(QWidget *widget)
{
    QWidget *w = widget;
    if (auto *view = qobject_cast<QAbstractScrollArea *>(widget))
        w = view->viewport();
    return w->isVisible() && !w->visibleRegion().isEmpty();
}

/// Brings the dock holding `widget` to the front of its tabs (Noise and Nyquist share their
/// place with Impedance), so that it is on screen and drawn.
void raiseDockOf(QWidget *widget)
{
    for (QWidget *w = widget->parentWidget(); w; w = w->parentWidget()) {
        if (auto *dock = qobject_cast<QDockWidget *>(w)) {
            dock->raise();
            break;
        }
    }
    // The tab changes once the dock area has laid itself out again.
    (void)QTest::qWaitFor([widget] { return onScreen(widget); }, 2000);
}

/// Shows `window` at the screenshots' size with the demo open; `raiseNoise` brings the Noise
/// dock to the front of its tabs. False (the benchmark skipped) when the demo does not open.
bool openDemo(MainWindow &window, benchmark::State &state, bool raiseNoise)
{
    window.setAskBeforeDiscarding(false);
    window.resize(1500, 940);
    window.show();
    if (!window.openFile(QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch"))) {
        state.SkipWithError("demo design did not open");
        return false;
    }
    // The first show arranges the docks on the next turns of the event loop (Impedance in
    // front): a dock raised before that would go back behind it.
    QTest::qWait(200);
    if (raiseNoise) {
        if (auto *noise = window.findChild<NoisePanel *>())
            raiseDockOf(noise);
    }
    return true;
}

/// Argument 0: the default arrangement (the Noise dock behind Impedance); 1: the Noise dock
/// raised, so the Noise panel is repainted instead of the Impedance panel.
void BM_WheelStepToAllPanelsRepainted(benchmark::State &state)
{
    MainWindow window;
    if (!openDemo(window, state, state.range(0) == 1))
        return;
    if (!window.document()->waitForAnalysis()) {
        state.SkipWithError("the demo's analysis did not arrive");
        return;
    }
    QApplication::processEvents();
    window.repaint();
    int direction = 1;
    double analysisMs = 0, updateMs = 0, noiseFollowed = 0;
    std::vector<double> stepMs, uiCpuMs;
    for (auto _ : state) {
        const double cpuStart = threadCpuMs();
        const auto start = std::chrono::steady_clock::now();
        wheelOver(window, "RF", direction);
        direction = -direction;
        // The analysis runs on the document's worker; the event loop turns until its result
        // has reached every panel, then the whole window (Readout, Sketch and every panel) is
        // painted synchronously.
        if (!window.document()->waitForAnalysis()) {
            state.SkipWithError("no result within the time allowed");
            return;
        }
        const auto updated = std::chrono::steady_clock::now();
        updateMs += std::chrono::duration<double, std::milli>(updated - start).count();
        window.repaint();
        stepMs.push_back(
            std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start)
                .count());
        uiCpuMs.push_back(threadCpuMs() - cpuStart);
        QApplication::processEvents();
        analysisMs += window.document()->lastAnalysisMs();
        noiseFollowed += window.document()->lastRunDeferredNoise() ? 1 : 0;
    }
    // analysis: core analyze() on the worker; update: wheel event to every panel's series
    // replaced (includes the analysis and the hand-over); step: to the window repainted;
    // ui_cpu: the UI thread's CPU time in that step (event handling, panels, painting).
    state.counters["analysis_ms"]
        = benchmark::Counter(analysisMs, benchmark::Counter::kAvgIterations);
    state.counters["update_ms"] = benchmark::Counter(updateMs, benchmark::Counter::kAvgIterations);
    state.counters["median_step_ms"] = median(stepMs);
    state.counters["median_ui_cpu_ms"] = median(uiCpuMs);
    // The share of steps whose noise followed the main result (the Noise panel off screen).
    state.counters["noise_followed"]
        = benchmark::Counter(noiseFollowed, benchmark::Counter::kAvgIterations);
}
BENCHMARK(BM_WheelStepToAllPanelsRepainted)
    ->Arg(0)
    ->Arg(1)
    ->Unit(benchmark::kMillisecond)
    ->UseRealTime();

/// Where the frame goes: one synchronous repaint of a single widget of the window
/// (0-6: the panels in window order: Loop gain, Impedance, Desensitivity, Step, Poles, Noise,
/// Nyquist, each raised when tabbed; 7: the Sketch; 8: the Readout).
void BM_RepaintOneWidget(benchmark::State &state)
{
    MainWindow window;
    const auto index = std::size_t(state.range(0));
    const std::size_t panels = window.panels().size(); // made by the constructor
    if (!openDemo(window, state, false))
        return;
    if (index < panels)
        raiseDockOf(window.panels()[index]);
    if (!window.document()->waitForAnalysis()) {
        state.SkipWithError("the demo's analysis did not arrive");
        return;
    }
    QApplication::processEvents();
    QWidget *widget = index < panels ? static_cast<QWidget *>(window.panels()[index]->viewport())
        : index == panels            ? static_cast<QWidget *>(window.sketchView()->viewport())
                                     : static_cast<QWidget *>(window.readout());
    for (auto _ : state)
        widget->repaint();
}
BENCHMARK(BM_RepaintOneWidget)->DenseRange(0, 8)->Unit(benchmark::kMillisecond)->UseRealTime();

/// One panel's showAnalysis() alone (series replaced, axes set; no painting), alternating
/// between the demo and the demo with RF one E24 step up so the data changes every time
/// (0-6: the panels in window order, as above, each raised when tabbed: the Noise panel draws
/// only on screen).
void BM_UpdateOnePanel(benchmark::State &state)
{
    MainWindow window;
    if (!openDemo(window, state, false))
        return;
    raiseDockOf(window.panels().at(std::size_t(state.range(0))));
    if (!window.document()->waitForAnalysis()) {
        state.SkipWithError("the demo's analysis did not arrive");
        return;
    }
    QApplication::processEvents();
    const loopsketch::Analysis first = *window.document()->analysis();
    wheelOver(window, "RF", 1);
    if (!window.document()->waitForAnalysis()) {
        state.SkipWithError("no result within the time allowed");
        return;
    }
    const loopsketch::Analysis second = *window.document()->analysis();
    PlotPanel *panel = window.panels().at(std::size_t(state.range(0)));
    bool flip = false;
    for (auto _ : state) {
        panel->showAnalysis(flip ? first : second);
        flip = !flip;
    }
}
BENCHMARK(BM_UpdateOnePanel)->DenseRange(0, 6)->Unit(benchmark::kMillisecond)->UseRealTime();

/// Runs the event loop for `ms` milliseconds, sleeping while there is nothing to do.
void pumpFor(int ms)
{
    QEventLoop loop;
    QTimer::singleShot(ms, Qt::PreciseTimer, &loop, &QEventLoop::quit);
    loop.exec();
}

/// The 50-part RC ladder (tests/support/chaindesigns.h) in a shown window with every dock;
/// per iteration a burst of 20 wheel steps on RS5, one every 16 ms (a fast scroll), and then
/// the wait for the final full result. A 1 ms timer on the UI thread records the longest gap
/// between its ticks: the longest stall of the event loop (longest_stall_ms), and the most
/// CPU time the UI thread spent between two ticks (longest_stall_cpu_ms: its own work, which
/// the machine's load does not stretch). For scale, the
/// same 1 ms timer over 320 ms without any edit (idle_stall_ms: what the machine's load alone
/// does to it), the longest wheel event's handling (wheel_max_ms), the time from the last step
/// to the final result on screen, and how many results were shown and dropped.
void BM_LadderBurstLongestStall(benchmark::State &state)
{
    MainWindow window;
    window.setAskBeforeDiscarding(false);
    window.resize(1500, 940);
    window.show();
    QString error;
    if (!window.openText(loopsketch::test::rcLadderText(), QStringLiteral("ladder"), &error)
        || !window.document()->waitForAnalysis()) {
        state.SkipWithError("the ladder did not open and analyse");
        return;
    }
    QApplication::processEvents();
    QElapsedTimer clock;
    qint64 lastTick = 0, longestGap = 0;
    // The same gap in the UI thread's own CPU time: its work alone, without the time the
    // machine's load takes from it.
    double lastTickCpu = 0, longestCpuGap = 0;
    QTimer ticker;
    ticker.setTimerType(Qt::PreciseTimer);
    ticker.setInterval(1);
    QObject::connect(&ticker, &QTimer::timeout, [&] {
        const qint64 now = clock.nsecsElapsed();
        longestGap = std::max(longestGap, now - lastTick);
        lastTick = now;
        const double cpu = threadCpuMs();
        longestCpuGap = std::max(longestCpuGap, cpu - lastTickCpu);
        lastTickCpu = cpu;
    });
    const auto startTicking = [&] {
        clock.start();
        lastTick = 0;
        longestGap = 0;
        lastTickCpu = threadCpuMs();
        longestCpuGap = 0;
        ticker.start();
    };
    int shown = 0, steps = 0;
    QObject::connect(window.document(), &DesignDocument::analysisChanged, [&] { ++shown; });
    QObject::connect(window.document(), &DesignDocument::partChanged,
                     [&](const QString &id) { steps += id == QStringLiteral("RS5"); });
    double worstMs = 0, worstCpuMs = 0, idleMs = 0, wheelMs = 0, settleMs = 0;
    const int droppedBefore = window.document()->droppedResults();
    int direction = 1;
    for (auto _ : state) {
        startTicking();
        pumpFor(320);
        idleMs = std::max(idleMs, double(longestGap) / 1e6);
        startTicking();
        for (int step = 0; step < 20; ++step) {
            QElapsedTimer wheel;
            wheel.start();
            wheelOver(window, "RS5", direction);
            wheelMs = std::max(wheelMs, double(wheel.nsecsElapsed()) / 1e6);
            pumpFor(16);
        }
        QElapsedTimer settle;
        settle.start();
        if (!window.document()->waitForAnalysis()) {
            state.SkipWithError("no result within the time allowed");
            return;
        }
        window.repaint();
        settleMs += double(settle.nsecsElapsed()) / 1e6;
        ticker.stop();
        worstMs = std::max(worstMs, double(longestGap) / 1e6);
        worstCpuMs = std::max(worstCpuMs, longestCpuGap);
        direction = -direction;
    }
    if (steps < 20 * int(state.iterations())) {
        state.SkipWithError("the wheel steps did not reach RS5");
        return;
    }
    state.counters["longest_stall_ms"] = worstMs;
    state.counters["longest_stall_cpu_ms"] = worstCpuMs;
    state.counters["idle_stall_ms"] = idleMs;
    state.counters["wheel_max_ms"] = wheelMs;
    state.counters["settle_ms"] = benchmark::Counter(settleMs, benchmark::Counter::kAvgIterations);
    state.counters["shown"] = benchmark::Counter(double(shown), benchmark::Counter::kAvgIterations);
    state.counters["dropped"]
        = benchmark::Counter(double(window.document()->droppedResults() - droppedBefore),
                             benchmark::Counter::kAvgIterations);
}
BENCHMARK(BM_LadderBurstLongestStall)->Iterations(3)->Unit(benchmark::kMillisecond)->UseRealTime();

} // namespace

int main(int argc, char **argv)
{
    if (qEnvironmentVariableIsEmpty("QT_QPA_PLATFORM") && qEnvironmentVariableIsEmpty("DISPLAY"))
        qputenv("QT_QPA_PLATFORM", "offscreen");
    // Settings (recent files, the dock arrangement) in Qt's test locations, as the UI tests:
    // the user's own are neither read nor written.
    QStandardPaths::setTestModeEnabled(true);
    QApplication app(argc, argv);
    benchmark::Initialize(&argc, argv);
    benchmark::RunSpecifiedBenchmarks();
    benchmark::Shutdown();
    return 0;
}
