// Stress runs: every obligor of a book is scored once as it stands (the base) and again under
// each scenario, whose shocks move the observed inputs (shock.hpp, scenario.hpp); the stressed
// inputs are re-solved for asset value and asset volatility. Output per obligor and scenario has
// base and stressed DD, PD and spread and their changes; per scenario a summary (mean and
// EAD-weighted PD, count above a PD threshold, expected loss PD x LGD x EAD). Reverse stress finds,
// per obligor, the equity fall and the equity-volatility multiplier that move PD to a level
// (reverse_stress.hpp).
//
// With a PD calibration (StressBookOptions::pd_calibration), every row also carries the calibrated
// one-year PD of the base and of the stressed DD, and every scenario summary the same figures on
// it (ScenarioPdFigures); the driving PD says which of the two PDs the table, the PD grid and the
// closing lines show (driving_pd.hpp).
//
// **Example**:
//   firmcall::Book book = firmcall::load_book("samples/demo_book.yaml");
//   firmcall::ScenarioSet set = firmcall::load_scenarios("samples/stress_scenarios.yaml");
//   firmcall::check_filters(set, book);
//   std::string out;
//   auto summary = firmcall::run_stress(book, set.scenarios, set.origin, {}, {}, {},
//                                       [&](std::string_view s) { out += s; });
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/estimate/calibration.hpp"
#include "firmcall/io/book_stream.hpp"
#include "firmcall/io/fx_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/scenario.hpp"
#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/reverse_stress.hpp"
#include "firmcall/model/sensitivity.hpp"
#include "firmcall/model/shock.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Outcome of one obligor under one scenario. ok: base and stressed measures computed.
/// invalid_input: the obligor's own data are unusable (as when scoring). not_converged: the base
/// or the stressed solve failed. invalid_stress: the shocks make an input invalid for this obligor
/// (e.g. a volatility addition that leaves a negative volatility).
enum class StressStatus : std::uint8_t { ok, invalid_input, not_converged, invalid_stress };
std::string_view to_string(StressStatus s) noexcept;

/// The first problem of shocked model inputs, as "stressed field 'x': reason, got v"; empty if none.
std::string stressed_input_problem(const MertonInputs& in);

/// One obligor under one scenario.
struct StressedObligor {
  StressStatus status = StressStatus::invalid_input;
  ShockEffect effect;                 ///< effect.shocks == 0: no shock hits this obligor (stressed = base)
  MertonInputs inputs;                ///< stressed inputs (valid when the base is ok)
  AssetSolution solution;             ///< stressed solution
  MertonMeasures measures;            ///< stressed measures (valid when status == ok)
  MertonSensitivities sensitivities;  ///< at the stressed inputs, when requested
  std::string message;                ///< why status is not ok; empty when ok
  bool shocked() const noexcept { return effect.shocks > 0; }
};

/// Stresses one obligor already scored as it stands. When no shock hits it (effect.shocks == 0)
/// the stressed result is the base result; otherwise the shocked inputs are re-solved as `hold`
/// says (shock.hpp). With StressHold::asset_vol, inputs.equity_vol_annual is the model-implied
/// stressed equity volatility (NaN when the row failed) and a shock that changes nothing keeps the
/// base solution. Callers that do not choose (the portfolio and report stress sections) get the
/// equity_vol re-solve. Never throws for bad values.
void stress_obligor(const ScoredObligor& base, const ShockEffect& effect, const ScoreSettings& settings,
                    bool sensitivities, StressedObligor& out, StressHold hold = StressHold::equity_vol);

/// stress_obligor for n obligors (base[i] under effects[i] into out[i]), their equity-vol solves
/// done together by solve_asset_batch: the same results, faster.
void stress_obligors(const ScoredObligor* base, const ShockEffect* effects, std::size_t n,
                     const ScoreSettings& settings, bool sensitivities, StressedObligor* out,
                     StressHold hold = StressHold::equity_vol);

/// A scenario's figures on one PD, over the compared obligors of its ScenarioSummary. In
/// ScenarioSummary::calibrated (with a calibration) the PD is the calibrated one-year PD of base
/// and stressed DD; driving_figures() gives the model figures in the same shape.
struct ScenarioPdFigures {
  double mean_pd = 0.0;                      ///< simple mean of the PD of base DD
  double mean_pd_stressed = 0.0;             ///< of stressed DD
  double ead_weighted_pd = 0.0;              ///< sum(ead PD)/sum(ead); NaN when no obligor gives ead
  double ead_weighted_pd_stressed = 0.0;     ///< the same of stressed DD
  std::size_t above_threshold = 0;           ///< PD of base DD > threshold
  std::size_t above_threshold_stressed = 0;  ///< of stressed DD > threshold
  std::size_t newly_above_threshold = 0;     ///< base <= threshold < stressed
  /// Sum of PD_T x LGD x EAD over obligors with ead. Calibrated: PD_T = 1 - (1 - PD1)^T over the
  /// obligor's horizon T (pd_over_horizon), as the model's expected loss is over T.
  double expected_loss = 0.0;
  double expected_loss_stressed = 0.0;  ///< the same of stressed DD over the stressed horizon
};

/// Per-scenario figures over the obligors that are ok both as they stand and stressed.
struct ScenarioSummary {
  std::size_t obligors = 0;  ///< obligors in the book
  std::size_t compared = 0;  ///< ok both as they stand and stressed (the rest of this summary is over these)
  std::size_t shocked = 0;   ///< compared obligors hit by at least one shock
  std::size_t failed = 0;    ///< rows whose status is not ok
  double mean_pd = 0.0;      ///< simple mean of base PD
  double mean_pd_stressed = 0.0;  ///< simple mean of stressed PD
  std::size_t with_ead = 0;       ///< compared obligors that give ead
  double ead_total = 0.0;         ///< sum of their ead
  double ead_weighted_pd = 0.0;   ///< sum(ead PD)/sum(ead); NaN when ead_total is 0
  double ead_weighted_pd_stressed = 0.0;
  double pd_threshold = 0.0;                 ///< the threshold counted against
  std::size_t above_threshold = 0;           ///< base PD > threshold
  std::size_t above_threshold_stressed = 0;  ///< stressed PD > threshold
  std::size_t newly_above_threshold = 0;     ///< base PD <= threshold < stressed PD
  double expected_loss =
      0.0;  ///< sum of PD x LGD x EAD over obligors with ead (LGD: obligor, book or default)
  double expected_loss_stressed = 0.0;
  ScenarioPdFigures calibrated;  ///< on the calibrated PD; filled when StressSummary::calibrated
};

/// The figures of the driving PD: `s.calibrated`, or the model figures of `s` in the same shape.
ScenarioPdFigures driving_figures(const ScenarioSummary& s, DrivingPd driving);

/// PDs of the quick-grid scenarios per obligor, for the table's PD grid (filled for the table
/// format only), of the driving PD (the calibrated one-year PD when it drives).
/// pd[(i * rows + r) * columns + c]; NaN where the obligor could not be stressed.
struct PdGrid {
  std::vector<double> equity_changes;   ///< rows
  std::vector<double> vol_multipliers;  ///< columns
  std::vector<double> pd;
  std::vector<double> base_pd;          ///< PD as it stands per obligor; NaN where not scored
  std::vector<std::string> ids, names;  ///< per obligor, for the grid's heads
  bool empty() const noexcept { return equity_changes.empty() || vol_multipliers.empty(); }
};

struct StressSummary {
  std::size_t obligors = 0;                ///< obligors in the book
  std::size_t base_ok = 0;                 ///< scored as they stand
  std::size_t base_invalid = 0;            ///< invalid input
  std::size_t base_not_converged = 0;      ///< base solve failed
  std::size_t rows = 0;                    ///< obligor x scenario rows written
  std::size_t failed_rows = 0;             ///< rows whose status is not ok
  std::vector<ScenarioSummary> scenarios;  ///< in scenario order
  PdGrid grid;
  std::vector<std::string> problems;  ///< "file:line: obligor 'id': message", the first few
  std::size_t problems_not_listed = 0;
  std::vector<std::string> notes;
  /// The currency of the summaries' EAD totals and expected losses: the reporting currency with
  /// FX rates, else the book's one currency; "" when the book states none or several.
  std::string currency;
  bool calibrated = false;  ///< a calibration was given: ScenarioSummary::calibrated is filled
  DrivingPd driving_pd = DrivingPd::model;  ///< the PD of the table, the PD grid and the closing lines
  std::size_t failed() const noexcept { return failed_rows; }
};

/// Obligors a run reads from its book at a time, unless told otherwise.
inline constexpr std::size_t kBookPieceObligors = 32768;

struct StressBookOptions {
  OutputFormat format = OutputFormat::csv;
  unsigned threads = 1;        ///< worker threads (>= 1); output order is the input order
  bool sensitivities = false;  ///< add sensitivity columns at the stressed inputs
  std::size_t max_listed_problems = 20;
  std::size_t chunk_obligors = 8192;  ///< obligors formatted per parallel step (0 counts as 1)
  /// Obligors read from the book at a time: memory grows with this, not with the book.
  std::size_t piece_obligors = kBookPieceObligors;
  /// When set (and ok): each row ends with the calibrated one-year PD of base and stressed DD
  /// (stress_pd_calibration_columns()) and each summary with the figures on it.
  const PdCalibration* pd_calibration = nullptr;
  std::string pd_calibration_origin;        ///< the calibration file, for the output
  DrivingPd driving_pd = DrivingPd::model;  ///< calibrated needs pd_calibration
  /// When set: the summaries convert each EAD (and expected loss) to reporting_currency at the
  /// table's rate of the obligor's currency; the rows stay in each obligor's currency.
  const FxTable* fx = nullptr;
  std::string reporting_currency;  ///< with fx: a currency code
  /// threads >= 1; piece_obligors >= 1; driving_pd calibrated only with a calibration; fx and
  /// reporting_currency together.
  OptionCheck validate() const;
};

/// Opens the book for one pass over it, from its first obligor. A stress run reads the book more
/// than once (once to count and score it, then once per scenario), so that it never holds more
/// than a piece of it.
using BookPasses = std::function<std::unique_ptr<BookStream>()>;
/// Passes over a book file (BookStream::open).
BookPasses book_file_passes(const std::string& path);
/// Passes over a book in memory, which must outlive them: each pass hands out copies of its
/// obligors.
BookPasses book_passes(const Book& book);

/// What a first pass over a book finds, before any output is written.
struct BookScan {
  std::string origin;
  std::size_t obligors = 0;
  std::vector<std::string> notes;       ///< the book's notes
  std::vector<std::string> currencies;  ///< the distinct `currency` texts of the obligors, sorted
  bool currency_missing = false;        ///< some obligor gives no `currency`
  /// Obligors that carry between them every sector, country and currency of the book (and every
  /// id, when the scan was asked for them), for check_filters(); nothing else is set.
  Book filter_book;
};

/// Reads the book once: counts its obligors, keeps its notes and the names scenario filters are
/// checked against, and passes each piece to `each` with the index of its first obligor. Every
/// id is kept only with `keep_ids` (a scenario filters by ids): memory then grows with the book.
BookScan scan_book(const BookPasses& passes, std::size_t piece_obligors, bool keep_ids,
                   const std::function<void(const std::vector<ObligorRecord>& piece,
                                            const BookDefaults& defaults, std::size_t first)>& each);

/// The first pass of a stress run: the book scored as it stands.
struct StressBookScan {
  BookScan book;
  std::size_t base_ok = 0;
  std::size_t base_invalid = 0;
  std::size_t base_not_converged = 0;
  std::vector<std::string> problems;  ///< of the base, the first few
  std::size_t problems_not_listed = 0;
  std::size_t with_ead = 0;                                 ///< scored obligors with ead
  double ead_total = 0.0;                                   ///< their EAD, summed in book order
  double loss_total = 0.0;                                  ///< their LGD x EAD
  std::vector<std::pair<double, std::string>> largest_ead;  ///< (ead, id), the five largest
};

/// Scores the book as it stands, a piece at a time (`run.threads`, `run.piece_obligors`).
StressBookScan scan_stress_book(const BookPasses& passes, const ScoreSettings& settings,
                                const StressBookOptions& run, bool keep_ids = false);

/// Column names of the machine-readable stress rows, in order (sensitivity columns follow when
/// requested).
const std::vector<std::string_view>& stress_columns();
/// Column names of the per-scenario summary CSV, in order.
const std::vector<std::string_view>& stress_summary_columns();
/// Column names appended to the stress rows with a calibration (after the sensitivity columns):
/// pd_calibration_columns() of base DD, the same four of stressed DD, then pd_calibrated_change.
const std::vector<std::string_view>& stress_pd_calibration_columns();
/// Column names appended to the summary CSV with a calibration (ScenarioPdFigures).
const std::vector<std::string_view>& stress_summary_calibration_columns();

/// Runs every scenario over the book and writes rows and summaries in `run.format`, one pass
/// over the book per scenario after the first pass `scan` (scan_stress_book). InputError before
/// any output when the totals of the scan are too large for a double, and when the book changes
/// between passes. `scenario_origin` names the scenario source in the output (a file name or
/// "grid"). The table's PD grid holds its cells for every obligor.
StressSummary run_stress(const BookPasses& passes, const StressBookScan& scan,
                         const std::vector<Scenario>& scenarios, const std::string& scenario_origin,
                         const ScoreSettings& settings, const StressSettings& stress,
                         const StressBookOptions& run, const TextSink& sink);
/// run_stress over a book in memory.
StressSummary run_stress(const Book& book, const std::vector<Scenario>& scenarios,
                         const std::string& scenario_origin, const ScoreSettings& settings,
                         const StressSettings& stress, const StressBookOptions& run, const TextSink& sink);

/// The per-scenario summaries as CSV (header and one row per scenario), full precision.
std::string scenario_summary_csv(const StressSummary& summary, const std::vector<Scenario>& scenarios);

/// One obligor's reverse stress.
struct ReverseStressRow {
  RowStatus status = RowStatus::invalid_input;  ///< of the base solve
  double pd = 0.0;                              ///< base PD
  ReverseResult equity_fall;
  ReverseResult vol_multiplier;
  std::string message;
};

struct ReverseStressSummary {
  std::size_t obligors = 0;
  std::size_t base_ok = 0;
  std::size_t base_invalid = 0;
  std::size_t base_not_converged = 0;
  std::size_t search_failed = 0;  ///< searches that ended not_converged
  std::vector<std::string> problems;
  std::size_t problems_not_listed = 0;
  std::vector<std::string> notes;
  std::size_t failed() const noexcept { return base_invalid + base_not_converged + search_failed; }
};

/// Reverse-stresses one obligor scored as it stands.
void reverse_stress_obligor(const ScoredObligor& base, double target_pd, const ReverseStressOptions& options,
                            ReverseStressRow& out);

/// Column names of the machine-readable reverse-stress rows, in order.
const std::vector<std::string_view>& reverse_stress_columns();

/// For each obligor, the equity fall and equity-volatility multiplier at which PD reaches
/// `target_pd`; written in `run.format`, in one pass over the book.
ReverseStressSummary run_reverse_stress(const BookPasses& passes, double target_pd,
                                        const ScoreSettings& settings, const StressBookOptions& run,
                                        const TextSink& sink, const ReverseStressOptions& options = {});
/// run_reverse_stress over a book in memory.
ReverseStressSummary run_reverse_stress(const Book& book, double target_pd, const ScoreSettings& settings,
                                        const StressBookOptions& run, const TextSink& sink,
                                        const ReverseStressOptions& options = {});

}  // namespace firmcall
