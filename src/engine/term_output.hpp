// Writers of PD term structures (table for people, CSV and JSON for programs). Internal to
// firmcall_io: the public entry points are in firmcall/term_run.hpp.
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "firmcall/engine/term_book.hpp"

namespace firmcall::detail {

/// What every term-structure writer needs to know about the run.
struct TermRunInfo {
  std::string origin;
  ScoreSettings settings;
  TermBookOptions run;
  std::size_t obligors = 0;
};

/// Writes one term-structure run. Rows are appended to a caller's buffer so that workers can
/// format in parallel; `first` is true for the first obligor of the run.
class TermWriter {
 public:
  virtual ~TermWriter() = default;
  virtual void begin(std::string& out) const = 0;
  virtual void obligor(const ObligorRecord& rec, const TermScoredObligor& s, bool first,
                       std::string& out) const = 0;
  virtual void end(const ScoreSummary& summary, std::string& out) const = 0;
};

std::unique_ptr<TermWriter> make_term_writer(OutputFormat format, const TermRunInfo& info);

/// Runs fn(worker, begin, end) over [0, n) split into at most `threads` contiguous slices.
void parallel_slices(std::size_t n, unsigned threads,
                     const std::function<void(unsigned, std::size_t, std::size_t)>& fn);

/// Row status of a point in the score vocabulary: ok, invalid_input or not_converged.
std::string_view row_status_of(TermStatus status) noexcept;

/// Cell values of one point in term_columns() order from "calibration_horizon" to "residual"
/// (NaN where a value does not exist; iterations as a double).
std::vector<double> term_numbers(const TermScoredObligor& s, const TermBookOptions& run, std::size_t model,
                                 std::size_t horizon);

/// Fixed-width text of a probability in percent or a spread in basis points for the tables:
/// `decimals` fixed decimals while readable, else scientific; "-" for NaN.
std::string table_number(double v, int decimals);

/// Appends the JSON run fields that describe a term-structure run, from ", \"models\"" to the
/// barrier growth, after fields the caller has written.
void append_term_run_fields(std::string& out, const TermBookOptions& run);

}  // namespace firmcall::detail
