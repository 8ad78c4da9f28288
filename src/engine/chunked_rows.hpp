// Writing rows of a book in parallel while the output keeps book order: the book is taken in
// chunks, each chunk split over the workers in contiguous slices, and after each chunk every
// worker's text goes to the sink in worker order. Internal to firmcall_engine.
#pragma once

#include <algorithm>
#include <cstddef>
#include <string>
#include <vector>

#include "firmcall/format/cells.hpp"
#include "firmcall/util/parallel.hpp"

namespace firmcall::detail {

/// Runs fn(worker, begin, end) over [0, n) in chunks of `chunk` items (at least one), each split
/// into one slice a worker (slices of at least `min_per_slice` items); after each chunk passes
/// every worker's `out` to `sink` in worker order and clears it. One worker a thread.
template <class Worker, class Fn>
void write_in_chunks(std::size_t n, std::size_t chunk, std::vector<Worker>& workers,
                     std::size_t min_per_slice, const TextSink& sink, const Fn& fn) {
  const std::size_t step = std::max<std::size_t>(chunk, 1);
  const auto threads = static_cast<unsigned>(workers.size());
  for (std::size_t c0 = 0; c0 < n; c0 += step) {
    const std::size_t c1 = std::min(n, c0 + step);
    parallel_slices(
        c1 - c0, threads,
        [&](unsigned w, std::size_t b, std::size_t e) {
          Worker& wk = workers[w];
          wk.out.clear();
          fn(wk, c0 + b, c0 + e);
        },
        min_per_slice);
    for (Worker& wk : workers) {
      sink(wk.out);
      wk.out.clear();
    }
  }
}

/// Passes to `sink` the text write(text) appends to an empty string.
template <class Write>
void sink_text(const TextSink& sink, const Write& write) {
  std::string s;
  write(s);
  sink(s);
}

}  // namespace firmcall::detail
