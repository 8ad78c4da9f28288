// Writers of PD term structures (table for people, CSV and JSON for programs). Internal to
// firmcall_io: the public entry points are in firmcall/term_run.hpp.
#pragma once

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

/// Row status of a point in the score vocabulary: ok, invalid_input or not_converged.
std::string_view row_status_of(TermStatus status) noexcept;

/// Cell values of one point in term_columns() order from "calibration_horizon" to "residual"
/// (NaN where a value does not exist; iterations as a double).
std::vector<double> term_numbers(const TermScoredObligor& s, const TermBookOptions& run, std::size_t model,
                                 std::size_t horizon);

/// The request that computes model `model` of the run for an obligor with loss given default `lgd`.
TermRequest term_request(const TermBookOptions& run, std::size_t model, double lgd,
                         const ScoreSettings& settings);

/// Layout of the term-structure tables: horizons per line, label and cell widths.
inline constexpr std::size_t kTermPerLine = 8;
inline constexpr std::size_t kTermLabelWidth = 35;
inline constexpr std::size_t kTermCellWidth = 10;

/// Appends the "  horizon (years)" line over each block of a curve wider than one table line.
void append_horizon_block_head(std::string& out, const std::vector<double>& horizons, std::size_t c0,
                               std::size_t c1);
/// The model name indented and padded as the first cell of a curve's first line.
std::string term_model_label(TermModel model);
/// True when one of the run's models is first passage.
bool has_first_passage(const TermBookOptions& run);
/// Appends the caution under a term table (it names Black-Cox when first passage is among the models).
void append_term_caution(std::string& out, const TermBookOptions& run);
/// The rule of a term table: the label and one line of horizon cells.
std::string term_rule(const TermBookOptions& run);

/// Appends the JSON run fields that describe a term-structure run, from ", \"models\"" to the
/// barrier growth, after fields the caller has written.
void append_term_run_fields(std::string& out, const TermBookOptions& run);

}  // namespace firmcall::detail
