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
// Which volatility a stress holds (StressHold):
//   asset_vol  (structural stress): the base asset volatility sV is held (times the volatility
//              multiplier, plus the points), the stressed V alone is re-solved from the equity
//              equation E' = V N(d1) - K' N(d2), and the stressed equity volatility is what the
//              model implies there, sE' = N(d1) sV' V' / E'. A fall in equity raises leverage and
//              with it sE', as the model says it must.
//   equity_vol (re-solve): the shocked (E', sE') pair goes through the full inversion again.
// With asset_vol the volatility shocks act on the asset volatility: sV' = sV m + a/100.
//
// Pure arithmetic and a bracketed 1-D root search: no I/O, nothing throws.
//
// **Example**:
//   firmcall::ShockEffect effect;
//   effect.add({.equity_change = -0.3, .equity_vol_multiplier = 1.5});
//   firmcall::MertonInputs stressed = firmcall::apply_shock(base, effect, /*drift_follows_rate=*/true);
//   auto sol = firmcall::solve_asset(stressed);   // may fail validation: check solve status
#pragma once

#include <cstdint>
#include <optional>
#include <string_view>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"

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

/// Which volatility a stress holds (see the file comment). asset_vol is the default of the stress
/// command: it is the structural view (leverage drives equity volatility).
enum class StressHold : std::uint8_t { asset_vol, equity_vol };
/// "asset-vol" or "equity-vol", as on the command line and in the settings file.
std::string_view to_string(StressHold hold) noexcept;
/// The hold named "asset-vol" or "equity-vol"; nullopt for anything else.
std::optional<StressHold> parse_stress_hold(std::string_view text) noexcept;

/// The stressed asset volatility of an asset_vol-hold stress: sV' = sV x equity_vol_factor +
/// equity_vol_add (the volatility shocks act on the held asset volatility).
double stressed_asset_vol(double base_asset_vol, const ShockEffect& effect) noexcept;

/// Solves the equity equation E = V N(d1) - K N(d2) (K = DP exp(-rT)) for V with the asset
/// volatility held at `asset_vol`; in.equity_vol_annual is not read. The root lies in
/// (E, E + K), where the call value is increasing in V; it is found by a bracketed search
/// (Boost.Math TOMS 748, non-throwing policy) on x = ln(V/K). converged when
/// |C(V) - E| / (E + K) <= options.residual_tolerance; invalid_input when the inputs (other than
/// the equity volatility), asset_vol or the options are not valid. The result's asset_vol_annual
/// is `asset_vol`.
AssetSolution solve_asset_value_at_vol(const MertonInputs& in, double asset_vol,
                                       const MertonSolveOptions& options = {}) noexcept;

/// Equity volatility the model implies at (V, sV): sE = N(d1) sV V / E.
double implied_equity_vol(const MertonInputs& in, double asset_value, double asset_vol_annual) noexcept;

}  // namespace firmcall
