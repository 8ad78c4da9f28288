// Solver-only benchmark: reads an obligor CSV once, then times solve_asset_batch() over every row,
// single-threaded and with N threads (each timed run repeats the file until it covers at least a
// million solves; threads take chunks of rows from a shared counter), and checks that both give
// identical results.
//
//   firmcall_solver_bench FILE.csv [THREADS] [REPEATS]
//
// Prints one line: rows, ns per obligor (1 thread), obligors per second (1 and N threads), mean
// Newton iterations, fallbacks, and whether the threaded results equal the single-threaded ones.
#include <algorithm>
#include <atomic>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <thread>
#include <vector>

#include "firmcall/io/obligor_io.hpp"
#include "firmcall/model/merton_solver.hpp"

namespace {

using Clock = std::chrono::steady_clock;

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  return v[v.size() / 2];
}

// Seconds per pass over every row. The work is (passes x chunks of kChunk rows), handed out to the
// threads one chunk at a time through a shared counter, as the streaming pipeline hands out chunks,
// so that a core slowed by other work on the machine takes fewer chunks; a small file is repeated
// `passes` times so that thread start-up does not count. Only the last pass writes `out` (earlier
// passes solve into a per-thread scratch), so no row is ever written by two threads at once.
constexpr std::size_t kChunk = 2048;

double run(const std::vector<firmcall::MertonInputs>& in, std::vector<firmcall::AssetSolution>& out,
           unsigned threads, int passes) {
  const std::size_t n = in.size();
  const std::size_t chunks = (n + kChunk - 1) / kChunk;
  const std::size_t total = chunks * static_cast<std::size_t>(passes);
  std::atomic<std::size_t> next{0};
  const auto work = [&] {
    std::vector<firmcall::AssetSolution> scratch(kChunk);
    for (std::size_t id = next.fetch_add(1); id < total; id = next.fetch_add(1)) {
      const std::size_t c = id % chunks;
      const std::size_t b = c * kChunk;
      const std::size_t e = std::min(n, b + kChunk);
      firmcall::AssetSolution* dst =
          id / chunks + 1 == static_cast<std::size_t>(passes) ? out.data() + b : scratch.data();
      firmcall::solve_asset_batch(in.data() + b, dst, e - b);
    }
  };
  const auto t0 = Clock::now();
  std::vector<std::thread> pool;
  for (unsigned w = 1; w < threads; ++w) pool.emplace_back(work);
  work();
  for (auto& t : pool) t.join();
  return std::chrono::duration<double>(Clock::now() - t0).count() / passes;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: %s FILE.csv [THREADS] [REPEATS]\n", argv[0]);
    return 2;
  }
  const unsigned threads = argc > 2 ? static_cast<unsigned>(std::atoi(argv[2]))
                                    : std::max(1U, std::thread::hardware_concurrency());
  const int repeats = argc > 3 ? std::atoi(argv[3]) : 5;
  try {
    const firmcall::Book book = firmcall::load_book(argv[1]);
    std::vector<firmcall::MertonInputs> inputs;
    inputs.reserve(book.obligors.size());
    firmcall::ResolvedObligor r;
    for (const auto& rec : book.obligors) {
      firmcall::resolve_obligor(rec, book.defaults, firmcall::ScoreSettings{}, r);
      if (r.ok()) inputs.push_back(r.inputs);
    }
    std::vector<firmcall::AssetSolution> one(inputs.size()), many(inputs.size());
    std::vector<double> t1, tn;
    // Every timed run covers at least a million solves.
    const int passes = static_cast<int>(
        std::max<std::size_t>(1, (1000000 + inputs.size() - 1) / std::max<std::size_t>(inputs.size(), 1)));
    for (int k = 0; k < repeats; ++k) {
      t1.push_back(run(inputs, one, 1, passes));
      tn.push_back(run(inputs, many, threads, passes));
    }
    bool identical = true;
    long iterations = 0, fallbacks = 0, unsolved = 0;
    for (std::size_t i = 0; i < inputs.size(); ++i) {
      identical = identical && one[i].asset_value == many[i].asset_value &&
                  one[i].asset_vol_annual == many[i].asset_vol_annual && one[i].status == many[i].status;
      iterations += one[i].iterations;
      fallbacks += one[i].method == firmcall::SolveMethod::bracketed;
      unsolved += !one[i].usable();
    }
    const double n = static_cast<double>(inputs.size());
    std::printf(
        "rows=%zu ns_per_obligor_1thread=%.1f rows_per_s_1thread=%.0f threads=%u rows_per_s=%.0f "
        "mean_iterations=%.3f fallbacks=%ld unsolved=%ld identical=%s\n",
        inputs.size(), 1e9 * median(t1) / n, n / median(t1), threads, n / median(tn),
        static_cast<double>(iterations) / n, fallbacks, unsolved, identical ? "yes" : "NO");
    return identical && unsolved == 0 ? 0 : 1;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "firmcall_solver_bench: %s\n", e.what());
    return 2;
  }
}
