// Why a PD moved between two runs: exact Shapley values (Shapley 1953) over the model inputs.
//
// The drivers are the Merton inputs of one obligor: equity value E, equity volatility sE, default
// point DP, rate r and horizon T (and the drift mu when it changed on its own, see below). For a
// set S of drivers, v(S) is the PD of the Merton model re-solved with the drivers in S at their new
// values and the others at their old ones. Driver i receives
//
//   phi_i = sum over S not holding i of  |S|! (n - |S| - 1)! / n!  [ v(S + i) - v(S) ],
//
// the average of its marginal effect over all n! orders of moving the drivers one at a time. The
// values do not depend on any order and sum to v(all) - v(none) = PD_new - PD_old (efficiency);
// a driver that did not change receives exactly 0.
//
// The drift: when mu is unchanged it stays fixed; when mu equals r in both runs (the default, and
// the risk-neutral measure) it follows the rate driver, so the rate's share includes its effect
// on the drift; otherwise the drift is a sixth driver of its own (64 subsets instead of 32).
//
// Pure computation: no I/O, no allocation, nothing throws.
//
// **Example**:
//   firmcall::PdAttribution a = firmcall::attribute_pd_change(last_week, this_week);
//   if (a.usable()) a.share(firmcall::Driver::equity_value);  // PD change due to equity value
#pragma once

#include <array>
#include <cstdint>
#include <limits>
#include <string_view>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"

namespace firmcall {

/// Inputs a PD change is attributed to, in a fixed order (used as an index).
enum class Driver : std::uint8_t { equity_value, equity_vol, default_point, rate, horizon, drift };
inline constexpr std::size_t kDriverCount = 6;

/// Driver name as used in output columns ("equity_value", "equity_vol", ...).
std::string_view to_string(Driver d) noexcept;

/// ok: every subset solved. invalid_input: an endpoint failed validate(). not_converged: the
/// solver failed, or a PD was not finite, for some mix of old and new inputs.
enum class AttributionStatus : std::uint8_t { ok, invalid_input, not_converged };
std::string_view to_string(AttributionStatus s) noexcept;

struct PdAttribution {
  AttributionStatus status = AttributionStatus::invalid_input;
  double pd_before = std::numeric_limits<double>::quiet_NaN();  ///< v(none): PD at the old inputs
  double pd_after = std::numeric_limits<double>::quiet_NaN();   ///< v(all): PD at the new inputs
  std::array<double, kDriverCount> contribution{};              ///< Shapley value per driver, probability
  int drivers = 0;  ///< players: 5, or 6 when the drift moved on its own
  bool usable() const noexcept { return status == AttributionStatus::ok; }
  double total() const noexcept { return pd_after - pd_before; }
  double share(Driver d) const noexcept { return contribution[static_cast<std::size_t>(d)]; }
};

/// Attributes the PD change from `before` to `after` (same obligor, two runs) to its drivers.
PdAttribution attribute_pd_change(const MertonInputs& before, const MertonInputs& after,
                                  const MertonSolveOptions& options = {}) noexcept;

}  // namespace firmcall
