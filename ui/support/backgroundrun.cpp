#include "support/backgroundrun.h"

#include <QTimer>

#include <algorithm>

namespace loopsketch::ui {

BackgroundRun::BackgroundRun(QObject *parent) : QObject(parent), m_poll(new QTimer(this))
{
    m_poll->setInterval(50);
    connect(m_poll, &QTimer::timeout, this, [this] {
        if (m_state)
            emit progressed(m_state->done.load(), m_state->total.load());
    });
}

BackgroundRun::~BackgroundRun()
{
    stop();
}

void BackgroundRun::stop()
{
    if (m_state)
        m_state->cancel = true;
    if (m_thread.joinable())
        m_thread.join();
}

void BackgroundRun::cancel()
{
    if (m_state)
        m_state->cancel = true;
}

void BackgroundRun::drop()
{
    if (!m_running)
        return;
    cancel();
    ++m_generation;
    m_running = false;
    m_poll->stop();
}

std::shared_ptr<BackgroundRun::State> BackgroundRun::begin(std::size_t total)
{
    // The old worker stops within one chunk of its work once its flag is set.
    stop();
    m_state = std::make_shared<State>();
    m_state->total = total;
    ++m_generation;
    m_running = true;
    m_clock.start();
    m_poll->start();
    return m_state;
}

bool BackgroundRun::end(std::thread::id thread, int generation)
{
    if (m_thread.joinable() && m_thread.get_id() == thread)
        m_thread.join();
    if (generation != m_generation || !m_running)
        return false;
    m_lastRunMs = double(m_clock.nsecsElapsed()) / 1e6;
    m_running = false;
    m_poll->stop();
    return true;
}

} // namespace loopsketch::ui
