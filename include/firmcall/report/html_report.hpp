// The book at a glance: one self-contained HTML page (inline CSS and SVG charts from svg.hpp, no
// scripts, fonts or links to anywhere) for `firmcall report BOOK --html FILE`. Sections, each
// present when its data exists:
//   summary     counts, exposure-weighted PD, expected loss, PD distribution by grade
//   dd-leverage distance to default against leverage DP/V, distressed names labelled
//   names       the weakest and the strongest names
//   stress      PD by scenario and per-obligor PD change (--scenarios; engine/stress_book.hpp)
//   term        cumulative PD term structures of chosen names (--names; engine/term_book.hpp)
//   portfolio   exact one-factor loss distribution: EL, VaR, ES (--portfolio; engine/portfolio_book.hpp)
//   monitoring  movers and alerts between two recorded runs (--db; monitor/movers.hpp)
//   validation  AUC, ROC and CAP curves, observed against predicted default rate per grade with
//               Jeffreys intervals, the traffic lights, and the grade migration matrix against an
//               earlier sample (--validate, --validate-against; engine/validate_book.hpp)
// With a PD calibration (--pd-calibration) the name tables show each obligor's calibrated one-year
// PD beside the model PD, and the driving PD (engine/driving_pd.hpp) sets the grades, expected
// loss and the portfolio section; the header says which PD drives and the horizon of each PD.
// The figures come from the same library calls as the score, stress, portfolio and movers commands,
// and the tables use the table output's rounding, so they can be checked against their CSV output.
// The page is XHTML-compatible (every element closed, attributes quoted, text escaped) and prints
// one section a page.
//
// **Example**:
//   firmcall::ReportOptions opt;
//   opt.book_path = "samples/demo_book.yaml";
//   opt.scenarios_path = "samples/stress_scenarios.yaml";
//   firmcall::ReportData data = firmcall::gather_report(opt, firmcall::Config{});
//   std::string html = firmcall::html_report(data);
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/engine/portfolio_book.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/engine/validate_book.hpp"
#include "firmcall/io/calibration_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/scenario.hpp"
#include "firmcall/monitor/movers.hpp"
#include "firmcall/monitor/run_store.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// What the report is built from (the command line's choices).
struct ReportOptions {
  std::string book_path;                      ///< the book (YAML or CSV)
  std::string scenarios_path;                 ///< stress scenario file; empty: no stress section
  std::vector<std::string> term_ids;          ///< obligors whose PD term structure is drawn
  std::vector<std::string> sheet_ids;         ///< obligors with a tear sheet each (a page per obligor)
  std::string horizons = "0.5,1,2,3,5,7,10";  ///< horizons of the term structures, years
  bool portfolio = false;                     ///< the loss distribution section
  std::string correlation_path;               ///< sector correlation file for the portfolio
  std::string fx_path;                        ///< FX rates (fx_io.hpp) for stress and portfolio; empty: none
  std::string reporting_currency;             ///< their amounts' currency, with fx_path
  std::string store_path;                     ///< history store; empty: no monitoring section
  std::string store_run;                      ///< run of the store to show ("" the latest)
  std::string against;                        ///< run to compare with ("" the one before)
  std::string validation_path;                ///< outcomes file; empty: no validation section
  std::string validation_against_path;        ///< earlier outcomes file: migration and stability
  /// Defaults file (id, default_date): the validation section from the history store instead of
  /// an outcomes file, every recorded run's PD against the defaults of the year after its as-of
  /// date (validate --db STORE --defaults FILE); the calibrated PD when it drives.
  std::string validation_defaults_path;
  std::string pd_calibration_path;          ///< calibration file; empty: model PDs only
  DrivingPd driving_pd = DrivingPd::model;  ///< calibrated needs pd_calibration_path
  std::size_t top = 10;                     ///< rows of the name tables
  unsigned threads = 1;                     ///< worker threads of the portfolio run
  std::string title;                        ///< page title; empty: from the book's label
  std::string tool_version;                 ///< shown in the page's header and footer
  std::string generated_at;                 ///< when the page was made, UTC ISO 8601 (header and footer)
  /// A book; no id twice in term_ids or sheet_ids (gather_report refuses it); correlation_path only with
  /// portfolio, store_run and against only with store_path, validation_against_path only with
  /// validation_path, validation_defaults_path only with store_path and without validation_path,
  /// driving_pd calibrated only with pd_calibration_path (`firmcall report`
  /// refuses them otherwise). threads 0 is read as 1; horizons are checked when the term section is gathered.
  OptionCheck validate() const;
};

/// The stress section's figures.
struct ReportStress {
  std::string origin;                              ///< scenario file
  std::vector<Scenario> scenarios;                 ///< in file order
  StressSummary summary;                           ///< per-scenario summaries (run_stress)
  std::vector<std::vector<StressedObligor>> rows;  ///< [scenario][obligor], book order
};

/// The monitoring section's figures. Comparison points into `before` and `now`.
struct ReportMonitoring {
  std::string store_path;
  RunPair runs;
  std::vector<StoredObligor> before;
  std::vector<StoredObligor> now;
  Comparison comparison;
  std::size_t runs_in_store = 0;
  /// Grade migration of the two runs, each graded on its own driving one-year PD (as validate
  /// --migration BEFORE,NOW).
  RunMigration migration;
};

/// One tear sheet: an obligor's inputs and results, its term structure (at the term section's
/// horizons, as score --horizons), its sensitivities (as score --sensitivities), its rows of the
/// stress section, and its DD and PD in every recorded run of the store (as track).
struct ReportSheet {
  std::size_t index = 0;                       ///< book position
  TermScoredObligor term;                      ///< the term structure at ReportData::term_run's horizons
  MertonSensitivities sensitivities;           ///< at its inputs; status invalid_input when not scored
  std::vector<RunStore::SeriesPoint> history;  ///< with a store: every run holding it, oldest first
};

/// Everything a report shows.
struct ReportData {
  ReportOptions options;
  Config config;
  Book book;
  std::vector<ScoredObligor> scored;  ///< book order
  std::unique_ptr<ReportStress> stress;
  TermBookOptions term_run;
  std::vector<std::size_t> term_index;   ///< book positions of the chosen names
  std::vector<TermScoredObligor> terms;  ///< one per chosen name
  std::unique_ptr<PortfolioResult> portfolio;
  std::unique_ptr<ReportMonitoring> monitoring;
  std::vector<ReportSheet> sheets;            ///< one per ReportOptions::sheet_ids, in their order
  std::unique_ptr<ValidationRun> validation;  ///< with the ROC and CAP curve (discrimination.curve)
  std::vector<CurvePoint> roc;  ///< the ROC and CAP curve of the validation, thinned for the charts
  std::unique_ptr<CalibrationRecord> calibration;  ///< the PD calibration (--pd-calibration)
  std::vector<CalibratedPd> calibrated;            ///< with a calibration: per obligor (NaN when not scored)
};

/// Level of the Jeffreys intervals of the observed default rates in the validation section.
inline constexpr double kGradeIntervalLevel = 0.95;

/// The PD that drives obligor i's expected loss, over its own horizon: the model PD, or with the
/// calibrated PD driving 1 - (1 - PD1)^T (pd_over_horizon); NaN when it was not scored.
double driving_pd_of(const ReportData& data, std::size_t i);
/// Obligor i's grade index on the driving one-year PD; -1 when it has none.
int driving_grade_of(const ReportData& data, std::size_t i);

/// Reads the inputs and computes every section asked for. InputError (exit code 2) naming the file,
/// option or obligor for an unreadable or malformed file, an id of --names not in the book, a bad
/// horizon list, a calibration file that is not a valid calibration, or a store that cannot be
/// read or has fewer than two runs to compare; OptionError (field sheet_ids) naming an id of the
/// tear sheets that is not in the book or is named twice.
ReportData gather_report(const ReportOptions& options, const Config& config);

/// The whole HTML page.
std::string html_report(const ReportData& data);

/// Ids of the page's sections, in page order (the tear sheets follow as sheet-1, sheet-2, ...).
const std::vector<std::string>& report_section_ids();

/// People's number formats used by the report (the table output's rounding):
/// PD in percent as the score table ("0.2048%", "9.27e-05%"), spread in basis points ("1.37",
/// "3.17e-04"), amounts with thousands separators ("1,307.50").
std::string report_pd(double pd);
std::string report_spread_bp(double spread_bp);
/// Amounts below 1 in magnitude keep three significant digits ("0.0123", "2.18e-04"), never
/// "0.00".
std::string report_amount(double v, int decimals = 2);

/// The count of the summary's lead sentence: "9 of 10 obligors scored; 1 failed: BAD-02
/// (invalid_input)" (the first five failures by id and status, then how many more), or
/// "10 of 10 obligors scored; none failed".
std::string report_lead_counts(const ReportData& data);

}  // namespace firmcall
