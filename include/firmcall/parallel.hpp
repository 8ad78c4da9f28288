// Splitting work over threads with a deterministic partition: the results of a run never depend
// on the number of threads, only its speed does.
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

}  // namespace firmcall
