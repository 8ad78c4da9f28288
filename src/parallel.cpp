// See include/firmcall/parallel.hpp.
#include "firmcall/parallel.hpp"

#include <algorithm>
#include <atomic>
#include <thread>
#include <vector>

namespace firmcall {

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
