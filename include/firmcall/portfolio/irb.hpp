// Basel II internal ratings-based (IRB) capital requirement for corporate exposures.
//
// Source: Basel Committee on Banking Supervision, International Convergence of Capital
// Measurement and Capital Standards - A Revised Framework, Comprehensive Version (June 2006),
// paragraphs 272 (formula), 285 (PD floor 0.03%), 318-320 (maturity). The formula is the
// asymptotic single risk factor (ASRF) model of Gordy (2003) at the 99.9% level, less expected
// loss, with a maturity adjustment:
//
//   R = 0.12 (1 - e^(-50 PD)) / (1 - e^(-50)) + 0.24 [1 - (1 - e^(-50 PD)) / (1 - e^(-50))]
//   b = (0.11852 - 0.05478 ln PD)^2
//   K = [LGD N((1 - R)^(-1/2) G(PD) + (R / (1 - R))^(1/2) G(0.999)) - PD LGD]
//       x (1 - 1.5 b)^(-1) x (1 + (M - 2.5) b)
//   RWA = K x 12.5 x EAD
//
// G is the inverse standard normal distribution function. PD is floored at 0.03% (para 285);
// the effective maturity M is held to [1, 5] years (paras 318-320; 2.5 years under the foundation
// approach). The SME firm-size adjustment (para 273) and the 1.06 scaling factor of para 44 are not
// applied. Pure arithmetic: no I/O, nothing throws.
//
// **Example**:
//   firmcall::IrbResult r = firmcall::irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 100.0});
//   // r.risk_weight ~ 0.9232 (92.32%), r.rwa ~ 92.32, r.capital ~ 7.39
#pragma once

#include <cstdint>
#include <string_view>

#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// One exposure as the IRB formula sees it.
struct IrbInputs {
  double pd = 0.0;              ///< one-year probability of default, decimal in [0, 1]
  double lgd = 0.45;            ///< loss given default, decimal in [0, 1]
  double ead = 0.0;             ///< exposure at default, currency units (>= 0)
  double maturity_years = 2.5;  ///< effective maturity M, years (> 0); held to [1, 5]
};

/// Settings of the formula (defaults: the 2006 framework).
struct IrbOptions {
  double pd_floor = 0.0003;         ///< para 285: PD is at least 0.03%
  double min_maturity_years = 1.0;  ///< para 320: M is at least one year
  double max_maturity_years = 5.0;  ///< para 320: M is at most five years
  /// pd_floor in [0, 1), min_maturity_years positive, max_maturity_years at least the minimum
  /// (irb_corporate refuses other values).
  OptionCheck validate() const;
};

/// ok: computed. invalid_input: a value is outside its range (message names it).
enum class IrbStatus : std::uint8_t { ok, invalid_input };
std::string_view to_string(IrbStatus s) noexcept;

struct IrbResult {
  IrbStatus status = IrbStatus::invalid_input;
  const char* message = "";     ///< why invalid_input (static text naming the field); empty when ok
  double pd = 0.0;              ///< PD after the floor
  double maturity_years = 0.0;  ///< M after the [1, 5] bounds
  double correlation = 0.0;     ///< R, asset correlation of the formula
  double maturity_slope = 0.0;  ///< b, maturity adjustment slope
  double capital_ratio = 0.0;   ///< K, capital per unit of EAD (decimal)
  double risk_weight = 0.0;     ///< 12.5 K (decimal: 0.9232 means 92.32%)
  double capital = 0.0;         ///< K x EAD, currency units
  double rwa = 0.0;             ///< risk-weighted assets 12.5 K EAD, currency units
  bool ok() const noexcept { return status == IrbStatus::ok; }
};

/// R(PD): the corporate asset correlation function (para 272), between 0.12 (high PD) and 0.24.
double irb_corporate_correlation(double pd) noexcept;

/// b(PD) = (0.11852 - 0.05478 ln PD)^2, the maturity adjustment slope (para 272).
double irb_maturity_slope(double pd) noexcept;

/// The capital requirement of one corporate exposure (para 272), with the PD floor and maturity
/// bounds of `options`.
IrbResult irb_corporate(const IrbInputs& in, const IrbOptions& options = {}) noexcept;

}  // namespace firmcall
