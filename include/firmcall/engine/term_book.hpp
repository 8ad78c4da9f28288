// PD term structures for a whole book (`firmcall score --horizons ...` and `--model ...`): each
// obligor is resolved as when scoring, then term_structure() (term_structure.hpp) gives its
// cumulative, annualised and forward PD and its model spread at every horizon, under each model
// asked for. Output is long: one row per obligor x model x horizon (CSV and JSON); the table shows
// a compact curve per obligor. A separate path beside score.hpp, which it reuses for resolving.
//
// **Example**:
//   firmcall::Book book = firmcall::load_book("samples/demo_book.yaml");
//   firmcall::TermBookOptions run;
//   run.horizons = firmcall::parse_horizons("0.5,1,2,3,5,7,10");
//   run.models = {firmcall::TermModel::merton, firmcall::TermModel::first_passage};
//   std::string out;
//   auto summary = firmcall::score_term_structure(book, {}, run, [&](std::string_view s) { out += s; });
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/io/book_stream.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/model/term_structure.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Longest horizons list accepted.
inline constexpr std::size_t kMaxHorizons = 30;

/// Parses a list of horizons in years such as "0.5,1,2,5": plain decimals, each in (0, 100],
/// strictly increasing, at most kMaxHorizons. OptionError naming `field` and the bad item otherwise.
std::vector<double> parse_horizons(std::string_view text, std::string_view field = "horizons");

/// What a term-structure run computes.
struct TermBookOptions {
  OutputFormat format = OutputFormat::csv;
  unsigned threads = 1;                              ///< worker threads (>= 1); output order is input order
  std::vector<double> horizons;                      ///< years, increasing; empty: each obligor's own horizon
  std::vector<TermModel> models{TermModel::merton};  ///< in output order
  Calibration calibration = Calibration::once;
  Barrier barrier;  ///< first-passage barrier
  std::size_t max_listed_problems = 20;
  /// Obligors read from the book at a time (score_term_structure over a BookStream).
  std::size_t piece_obligors = 8192;
  /// threads >= 1; piece_obligors >= 1; horizons as parse_horizons accepts them; at least one model; the
  /// barrier ratio positive and its growth in [-1, 1].
  OptionCheck validate() const;
};

/// Term-structure choices as text (empty or unset: not given), e.g. as typed on the command line.
struct TermOptionText {
  std::optional<std::string> horizons;  ///< e.g. "0.5,1,2,5"
  std::string model;                    ///< merton, first-passage or both
  std::string calibration;              ///< once or per-horizon
  std::optional<double> barrier_ratio;
  std::optional<double> barrier_growth;
};

/// True when the choices ask for a term-structure run: horizons, or a model other than merton.
bool wants_term_structure(const TermOptionText& choices);

/// Checks the choices and builds the run options; what is not given comes from `term`. OptionError
/// naming the field on a bad horizon list or value, or a choice given where it does not apply.
TermBookOptions term_book_options(const TermSettings& term, const TermOptionText& choices);

/// One obligor's curves.
struct TermScoredObligor {
  RowStatus status = RowStatus::invalid_input;  ///< ok only when every point of every model is ok
  ResolvedObligor resolved;
  std::vector<double> horizons;       ///< the horizons used (the run's, or the obligor's own horizon)
  std::vector<TermPoint> points;      ///< models.size() x horizons.size(), model-major
  std::vector<std::string> messages;  ///< per point: why it is not ok ("line 7: ..."); empty when ok
  std::string first_problem() const;  ///< the first non-empty message, or ""
};

/// Resolves one obligor and computes its curves for every model of `run`. Never throws for bad
/// values: they become status invalid_input with a message naming the field.
void score_term_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                        const TermBookOptions& run, TermScoredObligor& out);

/// Why a point computed for inputs `in` is not ok, as "line N: reason"; empty when it is ok.
std::string term_point_problem(std::size_t line, const MertonInputs& in, TermModel model,
                               const Barrier& barrier, const TermPoint& point);

/// Column names of the machine-readable rows, in order.
const std::vector<std::string_view>& term_columns();

/// Computes and writes the curves of every obligor in `run.format`. The summary counts obligors:
/// scored when all of its rows are ok.
ScoreSummary score_term_structure(const Book& book, const ScoreSettings& settings, const TermBookOptions& run,
                                  const TextSink& sink);
/// The same over a book read a piece at a time (`run.piece_obligors`): memory does not grow with
/// the book.
ScoreSummary score_term_structure(BookStream& book, const ScoreSettings& settings, const TermBookOptions& run,
                                  const TextSink& sink);

}  // namespace firmcall
