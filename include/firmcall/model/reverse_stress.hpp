// Reverse stress: how far must one observed input move before an obligor's PD reaches a level?
//
// Two one-dimensional searches, each over one shock of shock.hpp with everything else held:
//   equity fall f in [0, max_equity_fall]:    E' = E (1 + (-f))      (equity_change = -f)
//   volatility multiplier m in [1, max_vol_multiplier]:  sE' = sE m   (equity_vol_multiplier = m)
// Every trial re-solves the model and takes PD = N(-DD) from merton_measures. How it re-solves
// follows ReverseStressOptions::hold (shock.hpp): asset_vol (the default) holds the base asset
// volatility sV and solves the equity equation for V alone, and the multiplier then acts on sV
// (sV' = sV m); equity_vol re-solves (V, sV) from the shocked (E', sE') with solve_asset.
// The PD path need not be monotone, so the interval is first scanned on a grid and the first
// grid cell where PD crosses the level is refined with a bracketed root search (Boost.Math TOMS
// 748, Alefeld, Potra and Shi 1995) on ln PD - ln level, with a non-throwing error policy. The
// result is therefore the smallest shock on the scanned grid's resolution at which PD reaches the
// level.
//
// Nothing here allocates or throws; results carry a status.
//
// **Example**:
//   auto fall = firmcall::reverse_equity_fall(base_inputs, 0.05);
//   if (fall.status == firmcall::ReverseStatus::found) use(fall.shock);  // 0.42: a 42% fall
#pragma once

#include <cstdint>
#include <string_view>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/shock.hpp"

namespace firmcall {

struct ReverseStressOptions {
  int scan_points = 64;                     ///< grid points on the search interval (>= 2)
  int max_refine_iterations = 100;          ///< TOMS 748 function evaluations in the refinement
  double max_equity_fall = 0.999;           ///< largest equity fall searched (0.999 keeps 0.1% of E)
  double max_vol_multiplier = 20.0;         ///< largest volatility multiplier searched
  StressHold hold = StressHold::asset_vol;  ///< which volatility the trials hold (shock.hpp)
  MertonSolveOptions solver;
  /// scan_points >= 2, max_refine_iterations > 0, max_equity_fall in (0, 1), max_vol_multiplier
  /// above 1 and finite (the searches refuse other values), then solver.validate() (its fields are
  /// named "solver.<field>").
  OptionCheck validate() const;
};

/// found: `shock` moves PD to the level. already_reached: PD is at or above the level without a
/// shock (`shock` is the identity: 0 fall, multiplier 1). not_reachable: PD stays below the
/// level over the whole search interval. not_converged: a solve on the path failed.
/// invalid_input: the base inputs or the level are not valid.
enum class ReverseStatus : std::uint8_t {
  found,
  already_reached,
  not_reachable,
  not_converged,
  invalid_input
};
std::string_view to_string(ReverseStatus s) noexcept;

struct ReverseResult {
  ReverseStatus status = ReverseStatus::invalid_input;
  double shock =
      0.0;  ///< equity fall f (decimal) or volatility multiplier m; valid for found/already_reached
  double pd_at_shock = 0.0;  ///< PD re-solved at `shock`
  /// Equity volatility at `shock`: the shocked sE with the equity_vol hold, the model-implied
  /// N(d1) sV' V' / E' with asset_vol; valid for found/already_reached.
  double equity_vol_at_shock = 0.0;
  int solves = 0;  ///< model solves spent
};

/// Smallest equity fall f with PD(E (1 + (-f))) >= target_pd, 0 < target_pd < 1.
ReverseResult reverse_equity_fall(const MertonInputs& base, double target_pd,
                                  const ReverseStressOptions& options = {}) noexcept;

/// Smallest volatility multiplier m >= 1 with PD >= target_pd, 0 < target_pd < 1: of the equity
/// volatility (sE m) with the equity_vol hold, of the asset volatility (sV m) with asset_vol.
ReverseResult reverse_vol_multiplier(const MertonInputs& base, double target_pd,
                                     const ReverseStressOptions& options = {}) noexcept;

}  // namespace firmcall
