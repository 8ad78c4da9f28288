// Equity volatility and asset dynamics estimated from a history of equity values under the
// Merton (1974) model. Three estimators of asset volatility sV and drift mu, all on one input:
//
//   iterative  Vassalou and Xing (2004), Bharath and Shumway (2008): start from
//              sV = sE E/(E + DP); invert every day's equity value for V_t with the current sV;
//              re-estimate sV (and mu) from the log returns of V_t; repeat until
//              |sV_new - sV_old| < iteration_tolerance.
//   mle        Duan (1994): maximum likelihood on the equity series through the transformed-data
//              likelihood (the asset log-likelihood of V_t(sV) plus the Jacobian term
//              -sum ln N(d1_t) of the map E = C(V)), maximised over (sV, mu). Standard errors from
//              the observed information (negative Hessian at the optimum); the delta method
//              carries them to the distance to default, whose interval is mapped to PD.
//   naive      Bharath and Shumway (2008), naive distance to default:
//                sD = 0.05 + 0.25 sE,   sV = E/(E + F) sE + F/(E + F) sD,   V = E + F,
//                DD = [ln((E + F)/F) + (r_prev - sV^2/2) T] / (sV sqrt(T)),
//              with F the default point and r_prev the equity return over the window
//              (the previous year's return when the window is one year).
//
// Drift in the distance to default: one year of data determines mu poorly (its standard error is
// about sV / sqrt(years)), so DD does not use the estimate as it stands. Under the physical measure
// it uses the estimate shrunk towards the rate r and capped around it,
//   mu_used = r + clamp((1 - drift_shrinkage) (mu - r), -drift_cap, +drift_cap),
// (shrinking a noisy drift towards r and capping it are common practice; the two weights are
// settings, our defaults). Under the risk-neutral measure mu_used = r.
//
// Time: observations sit on a trading calendar; consecutive observations k trading days apart
// span h = k / trading_days_per_year years. With gaps (k > 1) the return estimators weight each
// return by its span: m = sum r / sum h, s^2 = sum (r - m h)^2 / h / (n - 1), which reduce to the
// sample mean and variance (times days per year) when every k = 1.
// Each day's equity is a call with the same horizon T on that day's default point
// (common practice: a rolling horizon, as in Vassalou and Xing 2004).
//
// Pure numerics: no I/O, nothing throws; results carry a status. The workspace is reused across
// obligors, so after the first obligor of a given length nothing allocates.
//
// **Example**:
//   firmcall::EquityHistoryView h{.equity_value = e, .default_point = dp, .trading_day = days,
//                                 .risk_free_rate_cc = 0.03, .horizon_years = 1};
//   firmcall::HistoryWorkspace ws;
//   firmcall::AssetDynamics a = firmcall::estimate_asset_dynamics(h, {.method = HistoryMethod::mle},
//                                                                 firmcall::HistorySettings{}, ws);
//   if (a.usable()) use(a.asset_vol_annual, a.asset_vol_se, a.distance_to_default, a.pd);
#pragma once

#include <cstdint>
#include <optional>
#include <span>
#include <string_view>
#include <vector>

#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Settings of the history estimators.
struct HistorySettings {
  int min_observations = 120;            ///< shortest usable equity history (common practice)
  double trading_days_per_year = 252.0;  ///< annualisation of daily returns
  double ewma_decay = 0.94;              ///< lambda of the exponentially weighted variance (common practice)
  double iteration_tolerance = 1e-8;     ///< stop when |sV_new - sV_old| falls below this
  int max_iterations = 200;              ///< iterative method budget
  double confidence_level = 0.95;        ///< two-sided level of reported intervals
  /// Physical measure: share of the estimated drift's excess over the rate removed before DD
  /// (0 keeps the estimate, 1 uses the rate); our default, see the file comment.
  double drift_shrinkage = 0.5;
  /// Physical measure: largest |mu_used - r| in DD, cc decimal per year (0: the rate); our default.
  double drift_cap = 0.10;

  /// The first broken constraint, in the order of the fields (those the settings reader enforces).
  OptionCheck validate() const {
    const auto in_open_unit = [](double v) { return v > 0.0 && v < 1.0; };
    if (!(min_observations > 0)) {
      return OptionProblem{"min_observations", std::to_string(min_observations), "must be positive"};
    }
    if (!(trading_days_per_year > 0.0)) {
      return OptionProblem{"trading_days_per_year", option_value_text(trading_days_per_year),
                           "must be positive"};
    }
    if (!in_open_unit(ewma_decay))
      return OptionProblem{"ewma_decay", option_value_text(ewma_decay), "must lie in (0, 1)"};
    if (!(iteration_tolerance > 0.0)) {
      return OptionProblem{"iteration_tolerance", option_value_text(iteration_tolerance), "must be positive"};
    }
    if (!(max_iterations > 0))
      return OptionProblem{"max_iterations", std::to_string(max_iterations), "must be positive"};
    if (!in_open_unit(confidence_level)) {
      return OptionProblem{"confidence_level", option_value_text(confidence_level), "must lie in (0, 1)"};
    }
    if (!(drift_shrinkage >= 0.0 && drift_shrinkage <= 1.0)) {
      return OptionProblem{"drift_shrinkage", option_value_text(drift_shrinkage), "must lie in [0, 1]"};
    }
    if (!(drift_cap >= 0.0 && drift_cap <= 10.0)) {
      return OptionProblem{"drift_cap", option_value_text(drift_cap),
                           "must lie in [0, 10] (a cc decimal per year: 0.1 means 10%)"};
    }
    return std::nullopt;
  }
};

/// One obligor's history as the estimators see it; views on data the caller owns, oldest first.
struct EquityHistoryView {
  std::span<const double> equity_value;       ///< E_t, currency units (> 0, finite)
  std::span<const double> default_point;      ///< DP_t in force on each day, currency units (> 0)
  std::span<const std::int32_t> trading_day;  ///< position in the trading calendar, strictly increasing
  double risk_free_rate_cc = 0.0;             ///< r, continuously compounded decimal, in [-1, 1]
  double horizon_years = 1.0;                 ///< T, years (> 0)
};

/// Estimator of asset volatility and drift.
enum class HistoryMethod : std::uint8_t { iterative, mle, naive };
/// Estimator of equity volatility from daily log returns.
enum class VolEstimator : std::uint8_t { simple, ewma };

std::string_view to_string(HistoryMethod m) noexcept;
std::optional<HistoryMethod> history_method_from_string(std::string_view s) noexcept;
std::string_view to_string(VolEstimator v) noexcept;
std::optional<VolEstimator> vol_estimator_from_string(std::string_view s) noexcept;

/// converged: estimates usable. max_iterations: iterative budget spent, not usable.
/// boundary: the likelihood maximum lies on the edge of the search interval, not usable.
/// singular_information: the observed information is not positive definite, not usable.
/// inversion_failed: some day's equity value could not be inverted for V_t, not usable.
/// degenerate: the implied asset values do not vary, so sV cannot be estimated, not usable.
/// too_short: fewer observations than min_observations. invalid_input: validation failed.
enum class EstimateStatus : std::uint8_t {
  converged,
  max_iterations,
  boundary,
  singular_information,
  inversion_failed,
  degenerate,
  too_short,
  invalid_input
};
std::string_view to_string(EstimateStatus s) noexcept;

/// Equity volatility of a history (annualised decimals).
struct EquityVolEstimate {
  /// s from the file comment, on log returns of E_t: sample standard deviation, annualised.
  double simple_annual = 0.0;
  /// sqrt(days_per_year * sum_i w_i r_i^2 / k_i), w_i = lambda^(n-i) normalised to sum to one;
  /// zero mean (RiskMetrics Technical Document 1996; lambda 0.94 is common practice).
  double ewma_annual = 0.0;
  double mean_log_return_annual = 0.0;  ///< m = sum r / sum h, continuously compounded
  double years = 0.0;                   ///< sum h, the span of the window in years
  int returns = 0;                      ///< number of returns (observations - 1)
};

/// Marks "no particular observation" in HistoryCheck::index and AssetDynamics::bad_index.
inline constexpr std::size_t kNoIndex = static_cast<std::size_t>(-1);

/// Validation result: the first broken constraint with its position (static message).
struct HistoryCheck {
  EstimateStatus status = EstimateStatus::converged;  ///< converged means valid
  const char* message = "";
  std::size_t index = kNoIndex;  ///< offending observation (0-based), or kNoIndex
  bool ok() const noexcept { return status == EstimateStatus::converged; }
};

/// Checks lengths, positivity, increasing trading days, r, T, the settings, and the
/// minimum length (status too_short when fewer than settings.min_observations, or than 3).
HistoryCheck validate(const EquityHistoryView& h, const HistorySettings& settings) noexcept;

/// Simple and EWMA equity volatility. Requires validate() to pass (else returns zeros).
EquityVolEstimate estimate_equity_vol(const EquityHistoryView& h, const HistorySettings& settings) noexcept;

/// Which drift DD and PD used: the estimate as it stands, the estimate shrunk towards the rate,
/// the cap around the rate (it bound), or the rate itself (risk-neutral measure).
enum class DriftSource : std::uint8_t { estimate, shrunk, capped, rate };
std::string_view to_string(DriftSource s) noexcept;

/// The drift that enters DD, and d(drift)/d(estimate) (for the delta method).
struct DriftInDistance {
  double drift = 0.0;  ///< mu_used, decimal per year
  DriftSource source = DriftSource::rate;
  double slope = 0.0;  ///< 1 - drift_shrinkage when neither capped nor risk-neutral, else 0
};
/// mu_used from the estimated drift (see the file comment); `risk_neutral`: the rate.
DriftInDistance drift_in_distance(double estimated_drift, double rate_cc, bool risk_neutral,
                                  const HistorySettings& settings) noexcept;

struct AssetDynamicsOptions {
  HistoryMethod method = HistoryMethod::iterative;
  /// Equity volatility used by the naive method and by the iterative start value.
  VolEstimator equity_vol = VolEstimator::simple;
  /// DD and PD under the risk-neutral measure (drift = rate); else the physical drift rule.
  bool risk_neutral = false;
  /// method and equity_vol must be one of their enumerators.
  OptionCheck validate() const;
};

/// Estimates and diagnostics for one obligor. Values that a method does not produce are NaN.
struct AssetDynamics {
  HistoryMethod method = HistoryMethod::iterative;
  EstimateStatus status = EstimateStatus::invalid_input;
  const char* message = "estimate_asset_dynamics() was not called";  ///< static text
  std::size_t bad_index = kNoIndex;  ///< observation behind invalid_input / inversion_failed, or kNoIndex

  EquityVolEstimate equity_vol;  ///< both equity volatility estimates of the window
  double equity_vol_used = 0.0;  ///< sE the method used (naive; iterative start)
  int iterations = 0;            ///< iterative: passes; mle: profile-likelihood evaluations
  double last_change = -1.0;     ///< iterative: |sV_k - sV_(k-1)| at the stop; -1 otherwise

  double asset_vol_annual = 0.0;                  ///< sV, annualised decimal
  double drift_annual = 0.0;                      ///< mu (naive: r_prev, a simple annual return), decimal
  double asset_vol_se = 0.0;                      ///< mle: standard error of sV; NaN otherwise
  double drift_se = 0.0;                          ///< mle: standard error of mu; NaN otherwise
  double asset_vol_lo = 0.0, asset_vol_hi = 0.0;  ///< mle: Wald interval at confidence_level
  double drift_lo = 0.0, drift_hi = 0.0;          ///< mle: Wald interval
  double drift_used = 0.0;                        ///< mu_used in DD and PD (drift_in_distance)
  DriftSource drift_source = DriftSource::rate;   ///< where drift_used came from
  double log_likelihood = 0.0;                    ///< mle: Duan's log-likelihood at the optimum

  // The last observation.
  double asset_value = 0.0;          ///< V_n, currency units
  double default_point = 0.0;        ///< DP_n, currency units
  double distance_to_default = 0.0;  ///< [ln(V/DP) + (mu_used - sV^2/2) T] / (sV sqrt T) (naive: B&S)
  double pd = 0.0;                   ///< N(-DD)
  double dd_se = 0.0;  ///< mle: delta-method standard error of DD (through mu_used); NaN otherwise
  double dd_lo = 0.0, dd_hi = 0.0;  ///< mle: DD -+ z dd_se
  double pd_lo = 0.0, pd_hi = 0.0;  ///< mle: N(-dd_hi), N(-dd_lo)

  bool usable() const noexcept { return status == EstimateStatus::converged; }
};

/// Buffers reused across obligors. After a usable estimate, asset_value, distance_to_default and
/// pd hold the daily series (same length as the history) at the final estimates.
struct HistoryWorkspace {
  std::vector<double> asset_value;
  std::vector<double> distance_to_default;
  std::vector<double> pd;
  std::vector<double> strike;           ///< DP_t exp(-r T)
  std::vector<double> span_years;       ///< h_t of the return ending at t (index 0 unused)
  std::vector<double> vol_sensitivity;  ///< dV_t/dsV at the last solution (starting values)
  std::vector<double> returns;          ///< scratch: log returns
  double solved_asset_vol = 0.0;        ///< sV of the V_t held in asset_value; 0: none
};

/// Runs the chosen method. Never throws; allocates only when the workspace must grow.
AssetDynamics estimate_asset_dynamics(const EquityHistoryView& h, const AssetDynamicsOptions& options,
                                      const HistorySettings& settings, HistoryWorkspace& ws) noexcept;

/// Asset value V with C(V; sV) = E for one day (Merton 1974, equity as a call): safeguarded
/// Newton from `guess` on [E, E + K], K = DP exp(-rT). Returns NaN when inputs are invalid.
double asset_value_from_equity(double equity_value, double default_point, double risk_free_rate_cc,
                               double horizon_years, double asset_vol_annual, double guess) noexcept;

/// Bharath and Shumway (2008) naive distance to default (see the file comment).
struct NaiveDistance {
  double asset_value = 0.0;       ///< E + F
  double debt_vol_annual = 0.0;   ///< 0.05 + 0.25 sE
  double asset_vol_annual = 0.0;  ///< E/(E+F) sE + F/(E+F) sD
  double distance_to_default = 0.0;
  double pd = 0.0;  ///< N(-DD)
};
NaiveDistance naive_distance_to_default(double equity_value, double face_value_debt, double equity_vol_annual,
                                        double prev_equity_return, double horizon_years) noexcept;

/// Two-sided standard normal quantile z with P(|Z| <= z) = level, for level in (0, 1).
double two_sided_normal_quantile(double level) noexcept;

}  // namespace firmcall
