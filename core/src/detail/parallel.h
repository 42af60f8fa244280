#pragma once

// The one background-work helper of core: a job run over an index range on a few
// std::threads, with progress and cancel. Spread and suggest run their trials on it.

#include <atomic>
#include <cstddef>
#include <functional>

namespace loopsketch::detail {

/// Called from worker threads with the jobs done so far and the total.
using ParallelProgress = std::function<void(std::size_t done, std::size_t total)>;

/// Runs job(index, worker) for index 0 .. count-1 on `threads` std::threads (0: all hardware
/// threads). Stops early when `cancel` becomes true; returns the number of jobs run.
/// `progress` (optional) is called under a lock about every 1 % and at the end.
std::size_t runParallel(std::size_t count, int threads,
                        const std::function<void(std::size_t index, int worker)> &job,
                        const ParallelProgress &progress, const std::atomic<bool> *cancel);

/// The worker count runParallel uses for `threads` and `count`: at least 1, at most `count`.
int workerCount(int threads, std::size_t count);

} // namespace loopsketch::detail
