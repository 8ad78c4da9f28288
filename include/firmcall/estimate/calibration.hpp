// Calibrating distance to default to observed defaults: the Merton PD N(-DD) ranks obligors, a
// default history sets the level. Each observation is one obligor-year: the DD at the start of the
// year and whether the obligor defaulted within one year after it, so every calibrated PD is a
// one-year PD. Three methods (formulas and sources in docs/calibration.md):
//
//   logistic  PD(DD) = 1 / (1 + exp(-(a + b DD))) by weighted maximum likelihood (Newton's method,
//             which for this model is iteratively reweighted least squares); standard errors from
//             the observed information (the inverse of the negative Hessian at the optimum). A
//             calibration must fall with DD: a slope b >= 0 is reported as slope_not_negative.
//   isotonic  pool-adjacent-violators (Robertson, Wright and Dykstra 1988): the weighted
//             least-squares fit of the default indicators that is non-increasing in DD. Observations
//             with equal DD are pooled first. A block without defaults gets the Jeffreys estimate
//             (defaults + 0.5) / (observations + 1) (capped by its left neighbour so the map stays
//             non-increasing).
//   binned    DD bands of about equal counts (quantile bands; equal DD values stay in one band) with
//             their observed default rates; a diagnostic, not forced to be monotone.
//
// Evaluation: logistic PD at the fitted line with a two-sided interval from the delta method on
// the linear predictor (a + b DD +- z se, mapped through the logistic function). Isotonic and
// binned: constant within a block at its PD with the Jeffreys interval of the block (quantiles of
// Beta(d + 0.5, n - d + 0.5), Brown, Cai and DasGupta 2001); between two blocks the PD and both
// bounds are interpolated linearly from the right edge of one block to the left edge of the next.
// Outside the sample's [dd_min, dd_max] the value is that of the nearest edge (logistic: the line)
// and flagged `extrapolated`.
//
// Pure numerics: no I/O, nothing throws; the result carries a status and a message.
//
// **Example**:
//   firmcall::PdCalibration c = firmcall::calibrate_pd({.distance_to_default = dd, .defaulted = y},
//                                                      {.method = firmcall::CalibrationMethod::logistic});
//   if (c.ok()) { firmcall::CalibratedPd p = c.evaluate(2.5); use(p.pd, p.lower, p.upper); }
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/util/option_check.hpp"

namespace firmcall {

enum class CalibrationMethod : std::uint8_t { logistic, isotonic, binned };
std::string_view to_string(CalibrationMethod m) noexcept;
/// Parses "logistic", "isotonic" or "binned"; false for anything else.
bool parse_calibration_method(std::string_view text, CalibrationMethod& out) noexcept;

enum class CalibrationStatus : std::uint8_t {
  ok,
  bad_input,           ///< sizes differ, a DD or weight not finite, a weight negative, an outcome not 0/1
  no_defaults,         ///< every observation survived
  no_survivors,        ///< every observation defaulted
  not_converged,       ///< Newton's method did not converge (e.g. the classes are separated by DD)
  slope_not_negative,  ///< the fitted logistic slope is >= 0: PD would not fall with DD
};
std::string_view to_string(CalibrationStatus s) noexcept;

/// Obligor-years: DD at the start of the year and the outcome (1 defaulted within the year, else 0).
struct CalibrationSample {
  std::span<const double> distance_to_default;
  std::span<const double> defaulted;  ///< 0 or 1
  std::span<const double> weight;     ///< empty: every weight 1; else one non-negative weight each
};

struct CalibrationOptions {
  CalibrationMethod method = CalibrationMethod::logistic;
  std::size_t bins = 10;           ///< binned: number of DD bands
  double confidence_level = 0.95;  ///< two-sided level of the intervals
  int max_iterations = 100;        ///< logistic: Newton steps
  /// bins >= 1, confidence_level in (0, 1), max_iterations >= 1.
  OptionCheck validate() const;
};

/// A block (isotonic) or band (binned) of consecutive DD values.
struct CalibrationBlock {
  double dd_lower = 0.0;      ///< smallest DD in the block
  double dd_upper = 0.0;      ///< largest DD in the block
  double observations = 0.0;  ///< weighted count
  double defaults = 0.0;      ///< weighted count of defaults
  double pd_raw = 0.0;        ///< defaults / observations (the pool-adjacent-violators value)
  double pd = 0.0;            ///< pd_raw, or the Jeffreys estimate for a block without defaults
  double pd_lower = 0.0;      ///< Jeffreys interval at the confidence level
  double pd_upper = 0.0;
};

struct LogisticFit {
  double intercept = 0.0;
  double slope = 0.0;
  double intercept_se = 0.0;
  double slope_se = 0.0;
  double covariance = 0.0;  ///< covariance of intercept and slope
  double log_likelihood = 0.0;
  int iterations = 0;
};

/// A one-year calibrated PD at one DD.
struct CalibratedPd {
  double pd = 0.0;
  double lower = 0.0;
  double upper = 0.0;
  bool extrapolated = false;  ///< DD outside the calibration sample's range
};

/// A fitted map from DD to one-year PD.
struct PdCalibration {
  CalibrationMethod method = CalibrationMethod::logistic;
  CalibrationStatus status = CalibrationStatus::bad_input;
  std::string message;  ///< why status is not ok
  double confidence_level = 0.95;
  std::size_t observations = 0;  ///< rows
  std::size_t defaults = 0;      ///< rows that defaulted
  double dd_min = 0.0;
  double dd_max = 0.0;
  LogisticFit logistic;                  ///< method logistic
  std::vector<CalibrationBlock> blocks;  ///< isotonic and binned, in increasing DD
  double z = 1.959963984540054;          ///< two-sided normal quantile of confidence_level

  bool ok() const noexcept { return status == CalibrationStatus::ok; }
  /// The calibrated PD at `dd` (NaN everywhere when not ok or dd is not finite).
  CalibratedPd evaluate(double dd) const noexcept;
  /// Recomputes z and, for blocks, each block's Jeffreys interval from confidence_level.
  void prepare_intervals() noexcept;
};

/// Fits the calibration. Bad values never throw: the status says what went wrong.
PdCalibration calibrate_pd(const CalibrationSample& sample, const CalibrationOptions& options);

/// Jeffreys interval of a binomial proportion: quantiles (1 -+ level)/2 of
/// Beta(defaults + 0.5, n - defaults + 0.5); the lower bound is 0 when defaults == 0 and the upper
/// 1 when defaults == n (Brown, Cai and DasGupta 2001).
void jeffreys_interval(double defaults, double n, double level, double& lower, double& upper) noexcept;

}  // namespace firmcall
