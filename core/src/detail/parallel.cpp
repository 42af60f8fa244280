#include "detail/parallel.h"

#include <algorithm>
#include <mutex>
#include <thread>
#include <vector>

namespace loopsketch::detail {

int workerCount(int threads, std::size_t count)
{
    int n = threads > 0 ? threads : static_cast<int>(std::thread::hardware_concurrency());
    n = std::max(1, n);
    if (count < static_cast<std::size_t>(n))
        n = static_cast<int>(std::max<std::size_t>(1, count));
    return n;
}

std::size_t runParallel(std::size_t count, int threads,
                        const std::function<void(std::size_t, int)> &job,
                        const ParallelProgress &progress, const std::atomic<bool> *cancel)
{
    const int workers = workerCount(threads, count);
    std::atomic<std::size_t> next{0}, done{0};
    std::mutex progressMutex;
    // Small chunks keep the workers balanced while keeping the shared counter cold.
    const std::size_t chunk = std::clamp<std::size_t>(count / (64 * workers), 1, 64);
    const std::size_t reportEvery = std::max<std::size_t>(1, count / 100);
    const auto work = [&](int worker) {
        for (;;) {
            if (cancel && cancel->load(std::memory_order_relaxed))
                return;
            const std::size_t begin = next.fetch_add(chunk);
            if (begin >= count)
                return;
            const std::size_t end = std::min(count, begin + chunk);
            for (std::size_t i = begin; i < end; ++i)
                job(i, worker);
            const std::size_t before = done.fetch_add(end - begin);
            const std::size_t after = before + (end - begin);
            if (progress && (after / reportEvery != before / reportEvery || after == count)) {
                std::lock_guard lock(progressMutex);
                progress(after, count);
            }
        }
    };
    if (workers == 1) {
        work(0);
    } else {
        std::vector<std::thread> pool;
        pool.reserve(static_cast<std::size_t>(workers));
        for (int w = 0; w < workers; ++w)
            pool.emplace_back(work, w);
        for (auto &t : pool)
            t.join();
    }
    return done.load();
}

} // namespace loopsketch::detail
