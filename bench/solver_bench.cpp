// Solver-only benchmark: reads an obligor CSV once, then times solve_asset_batch() over every row,
// single-threaded and with N threads (each timed run repeats the file until it covers at least a
// million solves), and checks that both give identical results.
//
//   firmcall_solver_bench FILE.csv [THREADS] [REPEATS]
//
// Prints one line: rows, ns per obligor (1 thread), obligors per second (1 and N threads), mean
// Newton iterations, fallbacks, and whether the threaded results equal the single-threaded ones.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <thread>
#include <vector>

#include "firmcall/merton_solver.hpp"
#include "firmcall/obligor_io.hpp"

namespace {

using Clock = std::chrono::steady_clock;

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  return v[v.size() / 2];
}

void solve_range(const std::vector<firmcall::MertonInputs>& in, std::vector<firmcall::AssetSolution>& out,
                 std::size_t b, std::size_t e, int passes) {
  for (int p = 0; p < passes; ++p) firmcall::solve_asset_batch(in.data() + b, out.data() + b, e - b);
}

// Seconds per pass over every row: each thread solves its slice `passes` times, so that a small
// file is timed over enough work for thread start-up not to count.
double run(const std::vector<firmcall::MertonInputs>& in, std::vector<firmcall::AssetSolution>& out,
           unsigned threads, int passes) {
  const auto t0 = Clock::now();
  std::vector<std::thread> pool;
  const std::size_t n = in.size();
  for (unsigned w = 1; w < threads; ++w) {
    pool.emplace_back(solve_range, std::cref(in), std::ref(out), n * w / threads, n * (w + 1) / threads,
                      passes);
  }
  solve_range(in, out, 0, n / threads, passes);
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
