// util/parallel: the slices of parallel_slices and the tasks of parallel_for. The slicing is the
// contract the engines rely on for results that do not depend on the thread count: contiguous
// slices [n w / t, n (w + 1) / t), with t = min(threads, max(n / min_per_slice, 1)).
#include <doctest/doctest.h>

#include <algorithm>
#include <cstddef>
#include <mutex>
#include <tuple>
#include <vector>

#include "firmcall/util/parallel.hpp"

using namespace firmcall;

namespace {

// (worker, begin, end) of every slice, sorted by worker.
std::vector<std::tuple<unsigned, std::size_t, std::size_t>> slices_of(std::size_t n, unsigned threads,
                                                                      std::size_t min_per_slice) {
  std::vector<std::tuple<unsigned, std::size_t, std::size_t>> out;
  std::mutex m;
  parallel_slices(
      n, threads,
      [&](unsigned w, std::size_t b, std::size_t e) {
        const std::lock_guard<std::mutex> lock(m);
        out.emplace_back(w, b, e);
      },
      min_per_slice);
  std::sort(out.begin(), out.end());
  return out;
}

}  // namespace

TEST_CASE("parallel_slices: contiguous slices n w / t, at least min_per_slice items each") {
  // 100 items, 16 per slice at least: 100 / 16 = 6 slices at most, so 4 threads give 4 slices.
  auto s = slices_of(100, 4, 16);
  REQUIRE(s.size() == 4);
  CHECK(s[0] == std::make_tuple(0U, std::size_t{0}, std::size_t{25}));
  CHECK(s[1] == std::make_tuple(1U, std::size_t{25}, std::size_t{50}));
  CHECK(s[2] == std::make_tuple(2U, std::size_t{50}, std::size_t{75}));
  CHECK(s[3] == std::make_tuple(3U, std::size_t{75}, std::size_t{100}));

  // 40 items at 16 per slice: two slices at most, [0, 20) and [20, 40), whatever the threads.
  s = slices_of(40, 8, 16);
  REQUIRE(s.size() == 2);
  CHECK(s[0] == std::make_tuple(0U, std::size_t{0}, std::size_t{20}));
  CHECK(s[1] == std::make_tuple(1U, std::size_t{20}, std::size_t{40}));

  // Fewer items than one slice, and zero threads: one slice on the calling thread.
  s = slices_of(10, 4, 16);
  REQUIRE(s.size() == 1);
  CHECK(s[0] == std::make_tuple(0U, std::size_t{0}, std::size_t{10}));
  s = slices_of(1000, 0, 16);
  REQUIRE(s.size() == 1);
  CHECK(s[0] == std::make_tuple(0U, std::size_t{0}, std::size_t{1000}));
}

TEST_CASE("parallel_for runs every task once with a worker below the thread count") {
  std::vector<int> runs(37, 0);
  std::vector<unsigned> worker_of(37, 99);
  parallel_for(runs.size(), 3, [&](std::size_t t, unsigned w) {
    ++runs[t];  // each task writes only its own entry
    worker_of[t] = w;
  });
  for (std::size_t t = 0; t < runs.size(); ++t) {
    CHECK(runs[t] == 1);
    CHECK(worker_of[t] < 3U);
  }
}
