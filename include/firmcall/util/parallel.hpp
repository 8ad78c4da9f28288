// Splitting work over threads so that the results of a run never depend on the number of threads,
// only its speed does: contiguous slices (parallel_slices), or tasks handed out one at a time that
// each write only their own results (parallel_for, for the numerical core: never throws).
#pragma once

#include <cstddef>
#include <functional>

namespace firmcall {

/// Runs fn(worker, begin, end) over [0, n) split into at most `threads` contiguous slices (fewer
/// when a slice would hold under `min_per_slice` items). Worker 0 runs on the calling thread;
/// returns when every slice is done.
void parallel_slices(std::size_t n, unsigned threads,
                     const std::function<void(unsigned, std::size_t, std::size_t)>& fn,
                     std::size_t min_per_slice = 64);

/// Runs task(t, worker) for every t in [0, tasks) on up to `threads` threads (worker in
/// [0, threads)); returns when all are done. `task` must not throw. If no thread can be started,
/// the calling thread runs every task.
void parallel_for(std::size_t tasks, unsigned threads,
                  const std::function<void(std::size_t task, unsigned worker)>& task) noexcept;

}  // namespace firmcall
