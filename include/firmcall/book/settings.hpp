// Run settings: the defaults shipped in config/firmcall.yaml, and the per-run overrides the
// command line adds. The built-in values below equal the shipped file (a test checks it).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/grades.hpp"
#include "firmcall/estimate/history.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/shock.hpp"
#include "firmcall/model/term_structure.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Which drift the distance to default uses: physical (the obligor's drift, default the rate)
/// or risk-neutral (drift = rate, so pd equals pd_risk_neutral).
enum class Measure { physical, risk_neutral };
std::string_view to_string(Measure m) noexcept;
std::optional<Measure> measure_from_string(std::string_view s) noexcept;

/// True for a currency code as firmcall takes it: three upper-case ASCII letters (the form of
/// ISO 4217 alphabetic codes, e.g. EUR). Whether the code is assigned is not checked.
bool is_currency_code(std::string_view code) noexcept;

/// A currency code held by value (trivially copyable): empty, or three upper-case letters.
class CurrencyCode {
 public:
  CurrencyCode() = default;
  /// Holds `code` and returns true when it is a currency code or empty; otherwise stays as it was
  /// and returns false.
  bool set(std::string_view code) noexcept;
  std::string_view view() const noexcept { return {letters_, size_}; }
  bool empty() const noexcept { return size_ == 0; }
  friend bool operator==(const CurrencyCode& a, const CurrencyCode& b) noexcept {
    return a.view() == b.view();
  }

 private:
  char letters_[3] = {0, 0, 0};
  std::uint8_t size_ = 0;
};

/// Settings for scoring one book.
struct ScoreSettings {
  double default_point_weight = 0.5;  ///< DP = short_term_debt + w * long_term_debt (common practice)
  double horizon_years = 1.0;         ///< used when neither obligor nor book gives a horizon
  Measure measure = Measure::physical;
  double default_lgd = 0.45;     ///< senior unsecured, common practice (Basel foundation IRB)
  double max_equity_vol = 10.0;  ///< larger inputs are taken as percentages typed by mistake
  /// An equity_vol above this (2.0 = 200% a year) is noted as a probable percentage (5 for 5%).
  double equity_vol_warn_above = 2.0;
  /// true: what the typo guards would only note (equity_vol above equity_vol_warn_above,
  /// market_cap disagreeing with share_price x shares_outstanding) makes the obligor invalid.
  bool strict_inputs = false;
  /// Model leverage DP / V above this gets the financial-firm caution, whatever the sector.
  double financial_leverage_above = 0.92;
  /// scoring.currency: the currency of an obligor whose book gives none; empty: such an
  /// obligor's amounts have no stated currency.
  CurrencyCode currency;
  MertonSolveOptions solver;
  // Command-line overrides: when set they win over every file value.
  std::optional<double> rate_override;
  std::optional<double> horizon_override;
  std::optional<double> weight_override;

  /// The first broken constraint among the file values, in the order of the fields (those the
  /// settings reader enforces). The overrides are the command line's to check.
  OptionCheck validate() const;
};

/// Settings of the stress command (see stress.hpp).
struct StressSettings {
  double pd_threshold = 0.05;               ///< obligors with stressed PD above this are counted per scenario
  StressHold hold = StressHold::asset_vol;  ///< stress.hold: which volatility a stress holds (shock.hpp)

  /// The first broken constraint, in the order of the fields (those the settings reader enforces).
  OptionCheck validate() const;
};

/// Watchlist alert rules (see movers.hpp): an obligor is flagged when any rule fires between two
/// runs. A rule is switched off by a bound it cannot pass (e.g. pd_ceiling: 1).
struct AlertRules {
  double dd_drop = 1.0;           ///< distance to default fell by more than this, standard deviations
  double pd_ratio = 2.0;          ///< PD grew by more than this factor ...
  double pd_ratio_min_pd = 1e-4;  ///< ... and the new PD is at least this (far-tail ratios are noise)
  int downgrade_notches = 2;      ///< grade worsened by at least this many notches
  double pd_ceiling = 0.05;       ///< PD above this, probability

  /// The first broken constraint, in the order of the fields (those the settings reader enforces).
  OptionCheck validate() const;
};

/// Settings of the monitoring commands (history store, alerts).
struct MonitorSettings {
  /// History store (SQLite file); empty: $XDG_DATA_HOME/firmcall/history.sqlite, else
  /// ~/.local/share/firmcall/history.sqlite. The command-line option --db wins.
  std::string store;
  double busy_timeout_seconds = 10.0;  ///< how long to wait for another process writing the store
  AlertRules alerts;

  /// The first broken constraint, busy_timeout_seconds then the alert rules ("alerts.dd_drop").
  OptionCheck validate() const;
};

/// Settings of PD term structures and the first-passage model (term_structure.hpp).
struct TermSettings {
  Calibration calibration = Calibration::once;  ///< once: solve at each obligor's horizon, then project
  double barrier_ratio = 1.0;                   ///< first-passage barrier H0 = ratio x default point
  double barrier_growth = 0.0;                  ///< barrier growth g, cc decimal per year: H(t) = H0 e^(g t)

  /// The first broken constraint, in the order of the fields (those the settings reader enforces).
  OptionCheck validate() const;
};

/// Most confidence levels a portfolio run reports.
inline constexpr std::size_t kMaxConfidenceLevels = 8;

/// Settings of the portfolio command (portfolio.hpp).
struct PortfolioSettings {
  std::vector<double> confidence_levels = {0.99, 0.995, 0.999};  ///< VaR and ES levels, ascending, in (0, 1)
  /// Asset correlation when neither the obligor nor the correlation file gives one; empty: the
  /// Basel corporate correlation function of PD (irb.hpp), 0.12 to 0.24.
  std::optional<double> asset_correlation;
  int loss_grid_points = 2048;         ///< points of the exact one-factor loss grid
  double quadrature_tolerance = 1e-3;  ///< relative error allowed on exceedance probabilities
  std::uint64_t seed = 1;              ///< Monte Carlo seed (results depend only on it and the inputs)

  /// The first broken constraint, in the order of the fields (those the settings reader enforces).
  OptionCheck validate() const;
};

/// Where the IRB PD floor comes from. basel2: 0.03% (BCBS 2006, "International Convergence of
/// Capital Measurement and Capital Standards", para 285). basel3: 0.05% for corporates (BCBS,
/// "Basel III: Finalising post-crisis reforms", Dec 2017, IRB section; CRE32.4 of the consolidated
/// framework). value: a number given in the settings file.
enum class PdFloorRule : std::uint8_t { basel2, basel3, value };
std::string_view to_string(PdFloorRule r) noexcept;
/// "basel2" or "basel3" (a number is read as PdFloorRule::value by the settings reader).
std::optional<PdFloorRule> pd_floor_rule_from_string(std::string_view s) noexcept;
/// The floor of a named rule: 0.0003 (basel2), 0.0005 (basel3); NaN for PdFloorRule::value.
double pd_floor_of(PdFloorRule r) noexcept;
/// Where the floor comes from, for outputs: "Basel II, BCBS 2006 para 285", ...
std::string_view pd_floor_source(PdFloorRule r) noexcept;

/// Settings of the Basel IRB capital formula (irb.hpp). The floor applies to the one-year PD that
/// enters the capital formula (and the Basel correlation function), never to the model PD.
struct IrbSettings {
  PdFloorRule pd_floor_rule = PdFloorRule::basel2;  ///< settings key irb.pd_floor: basel2, basel3 or a number
  double pd_floor = 0.0003;                         ///< the floor in use (BCBS 2006 para 285 by default)
  double maturity_years = 2.5;  ///< effective maturity M when the obligor gives none (para 318)

  /// The first broken constraint, in the order of the fields (those the settings reader enforces).
  OptionCheck validate() const;
};

/// Everything in a configuration file.
struct Config {
  ScoreSettings score;
  StressSettings stress;
  HistorySettings history;
  GradeScale grades = default_grade_scale();  ///< master scale, best grade first
  MonitorSettings monitor;
  TermSettings term;
  PortfolioSettings portfolio;
  IrbSettings irb;

  /// The first broken constraint of any section, the field named with its section
  /// ("history.ewma_decay", "grades.bands").
  OptionCheck validate() const;
};

}  // namespace firmcall
