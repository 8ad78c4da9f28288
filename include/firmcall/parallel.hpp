// A small parallel loop for the numerical core: tasks are handed out one at a time to up to N
// threads. Each task writes only its own results, so the outcome never depends on the number of
// threads or the order in which tasks finish. Never throws: if no thread can be started, the
// calling thread runs every task.
#pragma once

#include <cstddef>
#include <functional>

namespace firmcall {

/// Runs task(t, worker) for every t in [0, tasks) on up to `threads` threads (worker in
/// [0, threads)); returns when all are done. `task` must not throw.
void parallel_for(std::size_t tasks, unsigned threads,
                  const std::function<void(std::size_t task, unsigned worker)>& task) noexcept;

}  // namespace firmcall
