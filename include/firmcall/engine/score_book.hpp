// Scoring a book: resolve each obligor's inputs, solve the Merton model, derive the measures, and
// write them in one of the output formats. Streaming for CSV input (memory stays flat as the
// file grows), threaded with a deterministic output order.
#pragma once

#include <cstdint>
#include <cstdio>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/grades.hpp"
#include "firmcall/book/obligor.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/estimate/calibration.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Outcome of one obligor.
enum class RowStatus : std::uint8_t { ok, invalid_input, not_converged };
std::string_view to_string(RowStatus s) noexcept;

/// Everything known about one scored obligor.
struct ScoredObligor {
  RowStatus status = RowStatus::invalid_input;
  ResolvedObligor resolved;
  AssetSolution solution;
  MertonMeasures measures;
  std::string message;  ///< why status is not ok ("line 7: field 'equity_vol': ..."); empty when ok
};

/// Resolves, solves and measures one obligor. Never throws for bad values: they become
/// status invalid_input with a message naming the field.
void score_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                   ScoredObligor& out);

/// The message without its leading "line N: " (problem lists put the location in front).
std::string message_without_line(const std::string& message);

/// One entry of a problem list: "origin:line: obligor 'id': why" ('?' when the id is empty).
std::string obligor_problem(const std::string& origin, const ObligorRecord& rec, const std::string& message);

/// Counts for the closing summary.
struct ScoreSummary {
  std::size_t total = 0;
  std::size_t scored = 0;
  std::size_t invalid = 0;
  std::size_t not_converged = 0;
  std::size_t newton_iterations = 0;  ///< summed over scored obligors (mean = this / scored)
  std::vector<std::string> problems;  ///< "file:line: obligor 'id': message", the first few
  std::size_t problems_not_listed = 0;
  std::vector<std::string> notes;  ///< e.g. unused columns
  std::size_t failed() const noexcept { return invalid + not_converged; }
};

struct ScoreBookOptions {
  OutputFormat format = OutputFormat::csv;
  unsigned threads = 1;  ///< worker threads (>= 1); output order is the input order
  std::size_t max_listed_problems = 20;
  std::size_t chunk_bytes = 1 << 18;   ///< CSV streaming: bytes read per step
  bool sensitivities = false;          ///< add the sensitivity columns (output.hpp, sensitivity.hpp)
  const GradeScale* grades = nullptr;  ///< when set, the output shows each obligor's grade
  /// When set (and ok), the output ends with the one-year calibrated PD of each obligor's DD.
  const PdCalibration* pd_calibration = nullptr;
  /// With a calibration: calibrated puts the grades on the calibrated one-year PD.
  DrivingPd driving_pd = DrivingPd::model;
  std::string pd_calibration_origin;  ///< the calibration file, named in the output
  /// threads >= 1, chunk_bytes > 0.
  OptionCheck validate() const;
};

/// Scores a book already in memory (YAML, or a small CSV).
ScoreSummary score_book(const Book& book, const ScoreSettings& settings, const ScoreBookOptions& run,
                        const TextSink& sink);

/// Scores a CSV file streaming from `in`; `origin` names it in messages.
ScoreSummary score_csv_stream(std::FILE* in, const std::string& origin, const ScoreSettings& settings,
                              const ScoreBookOptions& run, const TextSink& sink);

}  // namespace firmcall
