// Stress shocks on the observed Merton inputs, and how several of them combine.
//
// A shock moves the inputs that the model starts from (equity value, equity volatility, rate,
// default point, horizon); the shocked inputs then go through the inversion again, so asset value
// and asset volatility are re-solved, not shocked directly.
//
// One shock, applied to base inputs (E, sE, r, mu, DP, T):
//   E'  = E  (1 + equity_change)                          equity_change > -1
//   sE' = sE equity_vol_multiplier + equity_vol_add_points / 100
//   r'  = r  + rate_shift_bp / 10^4        (mu' = mu + the same shift when mu follows r)
//   DP' = DP (1 + default_point_change)                   default_point_change > -1
//   T'  = horizon_years when given (> 0)
// Several shocks hitting the same obligor combine without regard to their order:
//   relative changes and volatility multipliers multiply, volatility additions and rate shifts
//   add, and of several horizons the last one given wins:
//   sE' = sE (m1 m2 ...) + (a1 + a2 + ...)/100,  E' = E (1 + c1)(1 + c2) ...
//
// Pure arithmetic: no I/O, nothing throws.
//
// **Example**:
//   firmcall::ShockEffect effect;
//   effect.add({.equity_change = -0.3, .equity_vol_multiplier = 1.5});
//   firmcall::MertonInputs stressed = firmcall::apply_shock(base, effect, /*drift_follows_rate=*/true);
//   auto sol = firmcall::solve_asset(stressed);   // may fail validation: check solve status
#pragma once

#include "firmcall/model/merton.hpp"

namespace firmcall {

/// One shock as written in a scenario; the defaults leave the inputs unchanged.
struct Shock {
  double equity_change = 0.0;          ///< relative change of E (-0.3 means a 30% fall), > -1
  double equity_vol_multiplier = 1.0;  ///< factor on sE, > 0
  double equity_vol_add_points = 0.0;  ///< volatility points added to sE (5 means +0.05)
  double rate_shift_bp = 0.0;          ///< basis points added to r (and mu when it follows r)
  double default_point_change = 0.0;   ///< relative change of DP (0.2 means +20%), > -1
  double horizon_years = 0.0;          ///< > 0: replaces T, years; 0: T unchanged
};

/// The combined effect of every shock that applies to one obligor in one scenario.
struct ShockEffect {
  double equity_factor = 1.0;         ///< E' = E x equity_factor
  double equity_vol_factor = 1.0;     ///< sE' = sE x equity_vol_factor + equity_vol_add
  double equity_vol_add = 0.0;        ///< annualised decimal (volatility points / 100)
  double rate_shift = 0.0;            ///< continuously compounded decimal (bp / 10^4)
  double default_point_factor = 1.0;  ///< DP' = DP x default_point_factor
  double horizon_years = 0.0;         ///< > 0: replaces T; 0: T unchanged
  int shocks = 0;                     ///< number of shocks combined

  /// Combines one more shock (see the file comment for the rules).
  void add(const Shock& s) noexcept;
  /// True when applying this effect returns the inputs unchanged bit for bit.
  bool identity() const noexcept;
};

/// The stressed inputs. Nothing is checked here: pass the result to validate() or solve_asset(),
/// which report a non-positive stressed value as invalid_input.
MertonInputs apply_shock(const MertonInputs& base, const ShockEffect& effect,
                         bool drift_follows_rate) noexcept;

}  // namespace firmcall
