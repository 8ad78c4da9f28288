// See include/firmcall/util/parallel.hpp.
#include "firmcall/util/parallel.hpp"

#include <algorithm>
#include <atomic>
#include <thread>
#include <vector>

namespace firmcall {

void parallel_slices(std::size_t n, unsigned threads,
                     const std::function<void(unsigned, std::size_t, std::size_t)>& fn,
                     std::size_t min_per_slice) {
  const std::size_t most = std::max<std::size_t>(n / std::max<std::size_t>(min_per_slice, 1), 1);
  const unsigned t = std::max(1U, static_cast<unsigned>(std::min<std::size_t>(threads, most)));
  if (t == 1) {
    fn(0, 0, n);
    return;
  }
  std::vector<std::thread> pool;
  pool.reserve(t - 1);
  const auto bound = [&](unsigned w) { return n * w / t; };
  for (unsigned w = 1; w < t; ++w) pool.emplace_back(fn, w, bound(w), bound(w + 1));
  fn(0, 0, bound(1));
  for (auto& th : pool) th.join();
}

void parallel_for(std::size_t tasks, unsigned threads,
                  const std::function<void(std::size_t, unsigned)>& task) noexcept {
  const unsigned workers =
      static_cast<unsigned>(std::max<std::size_t>(1, std::min<std::size_t>(threads, tasks)));
  std::atomic<std::size_t> next{0};
  const auto work = [&](unsigned worker) {
    for (std::size_t t = next.fetch_add(1); t < tasks; t = next.fetch_add(1)) task(t, worker);
  };
  std::vector<std::thread> pool;
  try {
    pool.reserve(workers - 1);
    for (unsigned w = 1; w < workers; ++w) pool.emplace_back(work, w);
  } catch (...) {
    // No more threads: the ones started and this thread share the remaining tasks.
  }
  work(0);
  for (auto& th : pool) th.join();
}

}  // namespace firmcall
