// Running the history estimators over a book: each book obligor is joined with its equity
// history and, when given, its dated balance sheets; the chosen method (history.hpp) runs on
// the joined series; results are written as a table, CSV or JSON, and optionally as a daily
// series. Threaded over obligors with a deterministic output order (the book's order).
//
// What comes from where: rate, horizon and the default-point weight from the book (command-line
// overrides first, then the obligor, then the book's defaults, then the configuration); equity
// values from the history; the default point on each day from the latest balance sheet dated on
// or before it, else from the book's debt (days before the first sheet, or no sheet file).
//
// **Example**:
//   const Book book = load_book("book.yaml", BookUse::history);
//   const EquityHistory prices = load_equity_history("prices.csv");
//   HistoryBookOptions run;
//   run.estimator.method = HistoryMethod::mle;
//   HistorySummary s = run_history({&book, &prices, nullptr}, ScoreSettings{}, HistorySettings{}, run,
//                                  [](std::string_view text) { fputs(std::string(text).c_str(), stdout); });
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/estimate/history.hpp"
#include "firmcall/io/history_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// The three inputs of a history run; `sheets` may be null.
struct HistorySources {
  const Book* book = nullptr;
  const EquityHistory* history = nullptr;
  const BalanceSheets* sheets = nullptr;
};

/// One book obligor joined with its history: the arrays behind an EquityHistoryView.
struct JoinedHistory {
  std::vector<double> equity_value;
  std::vector<double> default_point;
  std::vector<std::int32_t> trading_day;
  std::vector<std::int32_t> date;   ///< days since 1970-01-01
  std::vector<std::uint32_t> line;  ///< line of each observation in the history file
  double rate = 0.0;
  double horizon = 1.0;
  bool last_default_point_from_sheet = false;  ///< the last day's DP came from a balance sheet
  std::size_t missing_days = 0;
  std::string error_file;      ///< where the problem is
  std::size_t error_line = 0;  ///< 0: no particular line
  std::string error;           ///< "field 'x': reason, got 'v'" when the obligor cannot run; else empty
  std::vector<LocatedProblem> notes;  ///< notes on the history file (sorted rows, missing days)
  bool ok() const noexcept { return error.empty(); }
  /// "file:line: obligor 'id': error" (without the obligor part when id is empty).
  std::string message(std::string_view id) const;
  EquityHistoryView view() const { return {equity_value, default_point, trading_day, rate, horizon}; }
};

/// Joins one book obligor (see the file comment). Never throws for bad data: `out.error` says
/// what is wrong, naming file, line and field.
void join_history(const ObligorRecord& rec, const HistorySources& src, const ScoreSettings& settings,
                  JoinedHistory& out);

struct HistoryBookOptions {
  AssetDynamicsOptions estimator;
  OutputFormat format = OutputFormat::csv;
  unsigned threads = 1;  ///< worker threads; 0 is read as 1; output order is the book's order
  std::size_t max_listed_problems = 20;
  std::size_t batch_obligors = 256;  ///< obligors estimated between two writes; 0 is read as 1
  /// Called on the calling thread after each batch with (obligors done, total); may be empty.
  std::function<void(std::size_t, std::size_t)> progress;
  /// The estimator's method and equity volatility estimator, and the format, each one of their
  /// enumerators (the writers and the estimators know no others).
  OptionCheck validate() const;
};

/// Counts for the closing summary.
struct HistorySummary {
  std::size_t total = 0;
  std::size_t estimated = 0;
  std::size_t invalid = 0;
  std::size_t not_converged = 0;
  std::size_t iterations = 0;         ///< summed over estimated obligors
  std::vector<std::string> problems;  ///< "file:line: obligor 'id': message", the first few
  std::size_t problems_not_listed = 0;
  std::vector<std::string> notes;  ///< file notes, then per-obligor notes (the first few)
  std::size_t failed() const noexcept { return invalid + not_converged; }
};

/// Machine-readable column names of the history output, in order.
const std::vector<std::string_view>& history_columns();

/// Estimates every book obligor and writes the results to `sink`; with `series` set, also
/// writes the daily series (date,id,equity_value,default_point,asset_value,distance_to_default,pd).
HistorySummary run_history(const HistorySources& src, const ScoreSettings& score_settings,
                           const HistorySettings& settings, const HistoryBookOptions& run,
                           const TextSink& sink, const TextSink* series = nullptr);

/// Scores the book as `firmcall score` does, with each obligor's equity value and default point
/// taken from the history's last day and its equity volatility estimated from the history.
ScoreSummary score_with_history(const HistorySources& src, const ScoreSettings& score_settings,
                                const HistorySettings& settings, VolEstimator estimator,
                                const ScoreBookOptions& run, const TextSink& sink);

}  // namespace firmcall
