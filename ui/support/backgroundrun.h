#pragma once

// One piece of core work at a time on a background thread, for the Spread panel, the Suggest
// values dialog and the Scan and Map panels: the cancel flag and progress counters core's
// options take, the progress polled on the GUI thread, the result handed back to the GUI
// thread, and the rule that a run a newer one or a design change superseded is dropped.
// The work itself runs in core (which spreads it over cores with detail/parallel); this is
// only the hand-over between the window and that work.

#include <QElapsedTimer>
#include <QMetaObject>
#include <QObject>

#include <atomic>
#include <cstddef>
#include <memory>
#include <thread>
#include <utility>

class QTimer;

namespace loopsketch::ui {

class BackgroundRun : public QObject
{
    Q_OBJECT

public:
    /// What the work reads and writes while it runs: core's cancel flag and progress.
    struct State
    {
        std::atomic<bool> cancel{false};
        std::atomic<std::size_t> done{0}, total{0};
    };

    explicit BackgroundRun(QObject *parent = nullptr);
    /// Sets the cancel flag and waits for the worker, so nothing is handed over afterwards.
    ~BackgroundRun() override;

    /// Stops (and waits for) the run in progress, then runs `work(State &)` on a new thread.
    /// What it returns is given to `handOver(result)` on the GUI thread, or, when the run was
    /// superseded by a newer one or dropped (drop()), to `dropped(result)`. `total`: the
    /// progress total when it is known before the work starts (else the work sets it).
    template<class Work, class HandOver, class Dropped>
    void start(Work work, HandOver handOver, Dropped dropped, std::size_t total = 0);
    /// start() for a run whose superseded results need no notice.
    template<class Work, class HandOver>
    void start(Work work, HandOver handOver, std::size_t total = 0)
    {
        start(
            std::move(work), std::move(handOver), [](auto &&) {}, total);
    }

    /// Sets the cancel flag: the work ends early and its (partial) result is handed over.
    void cancel();
    /// Drops the run in progress without waiting: cancelled, and its result is not handed
    /// over (the design it was for has changed).
    void drop();
    /// Sets the cancel flag and waits for the worker.
    void stop();
    bool isRunning() const { return m_running; }
    /// Progress of the run in progress (the work's own count), 0 when none.
    std::size_t done() const { return m_state ? m_state->done.load() : 0; }
    /// Wall-clock time of the last run handed over, ms.
    double lastRunMs() const { return m_lastRunMs; }

signals:
    /// The work's progress, polled every 50 ms while a run is in progress.
    void progressed(std::size_t done, std::size_t total);

private:
    /// Stops the old run and sets up a new one; the new run's state.
    std::shared_ptr<State> begin(std::size_t total);
    /// On the GUI thread when a worker ends: joins it; true when its run is the current one
    /// (which then ends), false when it was superseded or dropped.
    bool end(std::thread::id thread, int generation);

    std::thread m_thread;
    std::shared_ptr<State> m_state;
    QTimer *m_poll;
    QElapsedTimer m_clock;
    int m_generation = 0;
    bool m_running = false;
    double m_lastRunMs = 0;
};

template<class Work, class HandOver, class Dropped>
void BackgroundRun::start(Work work, HandOver handOver, Dropped dropped, std::size_t total)
{
    std::shared_ptr<State> state = begin(total);
    const int generation = m_generation;
    m_thread = std::thread([this, state, generation, work = std::move(work),
                            handOver = std::move(handOver), dropped = std::move(dropped)] {
        auto result = std::make_shared<decltype(work(*state))>(work(*state));
        QMetaObject::invokeMethod(
            this,
            [this, thread = std::this_thread::get_id(), generation, result, handOver, dropped] {
                if (end(thread, generation))
                    handOver(std::move(*result));
                else
                    dropped(std::move(*result));
            },
            Qt::QueuedConnection);
    });
}

} // namespace loopsketch::ui
