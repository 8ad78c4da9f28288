// Portfolio runs: from the Merton PD of each obligor of a book to the portfolio loss
// distribution, its risk measures and the Basel IRB capital, as the book stands and under stress
// scenarios.
//
// For each obligor: PD is the Merton PD at its horizon (score.hpp; under a scenario, the stressed
// PD of stress.hpp); the expected loss and the loss distributions use it as it is, over the
// obligor's horizon. The IRB capital formula (and the Basel correlation function) take a one-year
// PD: pd_one_year (model/pd_horizon.hpp) converts a PD over another horizon, then the PD floor of
// the settings (irb.pd_floor) applies; the model PD itself is never floored. With a PD calibration
// (PortfolioBookOptions::pd_calibration) the calibrated one-year PD of the DD replaces it in IRB, and with
// driving_pd calibrated also in EL and the loss models (driving_pd.hpp). EAD must be given, LGD is the
// obligor's, else the book's, else the configured default (0.45), and its loss on default is LGD x EAD. The
// asset correlation rho comes from, in this order: --asset-correlation, the obligor's asset_correlation, its
// sector in the correlation file, the configuration (portfolio.asset_correlation), else the Basel corporate
// function of PD (irb.hpp, with the PD floor). Obligors that cannot be used are listed with the reason and
// left out; the others still run.
//
// For the portfolio: expected loss by obligor, sector, country and in total; the exact one-factor
// loss distribution with VaR, ES and ES contributions (loss_distribution.hpp); the
// large-portfolio (Vasicek) limit (vasicek.hpp); optionally a Monte Carlo run of the
// multi-factor model with the sector correlations (loss_simulation.hpp); and the IRB capital and
// risk-weighted assets (irb.hpp).
//
// **Example**:
//   firmcall::Book book = firmcall::load_book("samples/demo_book.yaml");
//   firmcall::PortfolioResult run = firmcall::run_portfolio(book, {}, "", nullptr, firmcall::Config{}, {});
//   std::string out;
//   firmcall::write_portfolio(run, book, firmcall::OutputFormat::table, [&](std::string_view s) { out += s;
//   });
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/io/correlation_io.hpp"
#include "firmcall/io/fx_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/scenario.hpp"
#include "firmcall/portfolio/irb.hpp"
#include "firmcall/portfolio/loss_distribution.hpp"
#include "firmcall/portfolio/loss_simulation.hpp"
#include "firmcall/portfolio/vasicek.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Where an obligor's asset correlation came from.
enum class CorrelationSource : std::uint8_t { command_line, obligor, sector, setting, basel };
std::string_view to_string(CorrelationSource s) noexcept;

/// ok: in the portfolio. invalid_input: its own data, or a field the portfolio needs (ead, a sector
/// of the correlation file), are unusable. not_converged: the Merton solve failed. invalid_stress: a
/// scenario's shocks made an input invalid for it.
enum class PortfolioStatus : std::uint8_t { ok, invalid_input, not_converged, invalid_stress };
std::string_view to_string(PortfolioStatus s) noexcept;

/// One obligor of the book in one run (as the book stands, or under one scenario).
struct PortfolioObligor {
  PortfolioStatus status = PortfolioStatus::invalid_input;
  std::string message;             ///< why it is left out ("line 7: field 'ead': ..."); empty when ok
  double pd = 0.0;                 ///< Merton PD at its horizon
  double lgd = 0.0;                ///< decimal
  std::string currency;            ///< the obligor's own currency (obligor_currency); may be empty
  double fx_rate = 1.0;            ///< units of the reporting currency per unit of `currency`
  double ead = 0.0;                ///< in the reporting currency: the obligor's ead x fx_rate
  double horizon_years = 0.0;      ///< T of the PD
  double pd_one_year = 0.0;        ///< pd converted to one year (pd itself at T = 1), before the floor
  double expected_loss = 0.0;      ///< PD x LGD x EAD
  double asset_correlation = 0.0;  ///< rho used by the portfolio models
  CorrelationSource correlation_source = CorrelationSource::basel;
  std::uint32_t factor = 0;     ///< sector factor (0 without a correlation file)
  double maturity_years = 0.0;  ///< IRB M as given (the formula holds it to [1, 5])
  IrbResult irb;                ///< on pd_one_year (or pd_calibrated), floored (irb.pd: the PD used)
  /// With a calibration: the calibrated one-year PD of the obligor's (stressed) DD; else NaN.
  double pd_calibrated = 0.0;
  /// The PD over the horizon behind expected loss and the loss distribution: pd, or with the
  /// calibrated PD driving, 1 - (1 - pd_calibrated)^T.
  double pd_driving = 0.0;
  bool irb_on_calibrated = false;  ///< the IRB PD is pd_calibrated (the calibrated PD drives)
  bool ok() const noexcept { return status == PortfolioStatus::ok; }
  /// The IRB PD's basis: "model" (a one-year model PD, used as it is), "model_converted" (a PD
  /// over another horizon converted with pd_one_year) or "calibrated" (the calibrated one-year
  /// PD); "" when not in the portfolio.
  std::string_view irb_pd_basis() const noexcept;
};

/// Sums over a group of obligors (the whole portfolio, a sector or a country).
struct GroupTotals {
  std::string name;
  std::size_t obligors = 0;  ///< in the portfolio (status ok)
  double ead = 0.0;
  double expected_loss = 0.0;
  double irb_capital = 0.0;
  double rwa = 0.0;
  std::vector<double> es_exact;  ///< per level: sum of exact ES contributions
  std::vector<double> es_limit;  ///< per level: sum of large-portfolio ES shares
  std::vector<double> es_mc;     ///< per level: sum of simulated ES contributions (empty without simulation)
};

/// Everything computed for the book as it stands or under one scenario.
struct PortfolioScenarioResult {
  std::string name;  ///< "base" for the book as it stands
  std::string description;
  std::vector<PortfolioObligor> obligors;  ///< one per obligor of the book, in book order
  std::size_t included = 0;                ///< obligors in the portfolio
  GroupTotals total;
  std::vector<GroupTotals> sectors;    ///< by sector label, sorted ("(none)" for no label)
  std::vector<GroupTotals> countries;  ///< by country label, sorted
  LossDistribution exact;              ///< contributions indexed like `obligors` (0 when left out)
  LargePortfolioResult limit;          ///< shares indexed like `obligors`
  bool simulated = false;
  SimulationResult mc;                   ///< contributions indexed like `obligors`
  std::vector<double> limit_exceedance;  ///< P(limit loss > x) at the exact grid points (distribution export)
};

/// How to run (the command line's choices).
struct PortfolioBookOptions {
  unsigned threads = 1;                     ///< worker threads; results do not depend on it
  std::optional<double> asset_correlation;  ///< overrides every other source of rho
  bool basel_correlation = false;           ///< the Basel function of PD for every obligor
  std::uint64_t monte_carlo_scenarios = 0;  ///< 0: no simulation
  bool importance_sampling = false;
  bool contributions = true;  ///< ES contributions (exact and simulated)
  bool distribution = false;  ///< also the large-portfolio and simulated exceedance curves
  std::size_t max_listed_problems = 20;
  /// When set (and ok): every obligor's calibrated one-year PD drives IRB capital (and the Basel
  /// correlation function); with driving_pd calibrated also expected loss and the loss models.
  const PdCalibration* pd_calibration = nullptr;
  std::string pd_calibration_origin;        ///< the calibration file, for the output
  DrivingPd driving_pd = DrivingPd::model;  ///< calibrated needs pd_calibration
  /// When set: each obligor's EAD, and so every loss, capital and contribution, is converted to
  /// reporting_currency at the table's rate of the obligor's currency (the reporting currency
  /// itself at 1). Without: the book's obligors must share one currency, which is reported in.
  const FxTable* fx = nullptr;
  std::string reporting_currency;  ///< with fx: three upper-case letters; without: empty
  /// Called between simulation batches: (scenario name, scenarios done, scenarios in all).
  std::function<void(const std::string&, std::uint64_t, std::uint64_t)> progress;
  /// Shares the Monte Carlo runs between processes (loss_simulation.hpp); nullptr: this one alone.
  ScenarioExchange* exchange = nullptr;
  /// threads >= 1; asset_correlation, when given, in [0, 1); driving_pd calibrated only with a
  /// calibration; fx and reporting_currency (a currency code) together.
  OptionCheck validate() const;
};

/// A whole portfolio run: the book as it stands first, then each stress scenario.
struct PortfolioResult {
  std::string book_origin;
  std::string correlation_origin;  ///< empty without a correlation file
  std::string scenario_origin;     ///< empty without scenarios
  /// The currency of every portfolio amount (EAD, losses, capital, contributions): the
  /// reporting currency with FX rates, else the book's one currency ("" when no obligor states one).
  std::string reporting_currency;
  std::string fx_origin;        ///< the FX file; empty without one
  std::string fx_as_of;         ///< its as-of date, YYYY-MM-DD
  std::vector<FxRate> fx_used;  ///< the rate of each currency of the book, by currency (line 0: implied 1)
  StressHold stress_hold = StressHold::asset_vol;  ///< which volatility the scenarios hold (stress.hold)
  bool multi_factor = false;                       ///< the simulation uses a factor correlation matrix
  std::size_t factors = 1;
  std::vector<double> confidence_levels;
  ScoreSettings settings;
  PortfolioSettings portfolio;
  IrbSettings irb;
  PortfolioBookOptions options;
  std::vector<PortfolioScenarioResult> scenarios;
  std::vector<std::string> problems;  ///< "file:line: obligor 'id': message", the first few
  std::size_t problems_not_listed = 0;
  std::vector<std::string> notes;
  std::size_t failed_rows = 0;   ///< obligor rows (over all scenarios) not in the portfolio
  std::size_t pd_converted = 0;  ///< obligors of the book as it stands whose IRB PD was converted to one year
  std::size_t pd_floored =
      0;  ///< obligors of the book as it stands whose one-year PD was raised to the floor
};

/// The distinct currencies of the book's obligors (obligor_currency; codes that are not valid are
/// left out, those obligors being invalid), sorted.
std::vector<std::string> book_currencies(const Book& book, const ScoreSettings& settings);

/// Scores the book, builds the portfolio and runs every model, as the book stands and under each
/// scenario. `correlation` may be null. Throws InputError for run-wide problems (a scenario named
/// "base"; without FX rates, obligors in more than one currency, or some without a currency among
/// others with one; with FX rates, a currency of the book that the table lacks, or an obligor
/// without a currency; an empty portfolio is not one: it reports zero losses).
PortfolioResult run_portfolio(const Book& book, const std::vector<Scenario>& scenarios,
                              const std::string& scenario_origin, const CorrelationFile* correlation,
                              const Config& config, const PortfolioBookOptions& options);

/// Column names of the machine-readable obligor rows for these confidence levels (contribution
/// columns are named by level: es_contribution_99p9 for 99.9%), with or without simulation columns.
/// With `calibrated` (--pd-calibration), pd_calibrated and pd_driving follow pd_one_year.
std::vector<std::string> portfolio_columns(const std::vector<double>& confidence_levels, bool simulated,
                                           bool calibrated = false);

/// Writes the run: a table for people, or obligor rows as CSV or JSON (JSON adds the groups and
/// portfolio measures).
void write_portfolio(const PortfolioResult& run, const Book& book, OutputFormat format, const TextSink& sink);

/// Portfolio and group measures as CSV, long format:
/// scenario,group_by,group,method,measure,confidence_level,value,standard_error,currency.
std::string portfolio_summary_csv(const PortfolioResult& run);

/// The loss distributions as CSV for plotting: scenario,loss,currency,probability,cumulative,exceedance,
/// large_portfolio_exceedance[,monte_carlo_exceedance,monte_carlo_exceedance_se].
std::string portfolio_distribution_csv(const PortfolioResult& run);

/// "99p9" for 0.999, "99" for 0.99: a level as it appears in column names.
std::string level_label(double confidence_level);

}  // namespace firmcall
