// Exact Shapley values (L. S. Shapley, "A value for n-person games", 1953) of a PD change over the
// Merton inputs; see attribution.hpp for the drivers and the treatment of the drift.
#include "firmcall/model/attribution.hpp"

#include <bit>
#include <cmath>

namespace firmcall {

std::string_view to_string(Driver d) noexcept {
  switch (d) {
    case Driver::equity_value:
      return "equity_value";
    case Driver::equity_vol:
      return "equity_vol";
    case Driver::default_point:
      return "default_point";
    case Driver::rate:
      return "rate";
    case Driver::horizon:
      return "horizon";
    case Driver::drift:
      return "drift";
  }
  return "";
}

std::string_view to_string(AttributionStatus s) noexcept {
  switch (s) {
    case AttributionStatus::ok:
      return "ok";
    case AttributionStatus::invalid_input:
      return "invalid_input";
    case AttributionStatus::not_converged:
      return "not_converged";
  }
  return "";
}

namespace {

constexpr unsigned bit(Driver d) noexcept {
  return 1U << static_cast<unsigned>(d);
}

// How the drift moves (attribution.hpp): fixed, with the rate, or as a driver of its own.
enum class DriftRule { fixed, follows_rate, own_driver };

// The inputs of subset `mask`: bit i set means driver i takes its new value.
MertonInputs mix(const MertonInputs& a, const MertonInputs& b, unsigned mask, DriftRule rule) noexcept {
  MertonInputs m;
  m.equity_value = (mask & bit(Driver::equity_value)) ? b.equity_value : a.equity_value;
  m.equity_vol_annual = (mask & bit(Driver::equity_vol)) ? b.equity_vol_annual : a.equity_vol_annual;
  m.default_point = (mask & bit(Driver::default_point)) ? b.default_point : a.default_point;
  m.risk_free_rate_cc = (mask & bit(Driver::rate)) ? b.risk_free_rate_cc : a.risk_free_rate_cc;
  m.horizon_years = (mask & bit(Driver::horizon)) ? b.horizon_years : a.horizon_years;
  switch (rule) {
    case DriftRule::fixed:
      m.drift_annual = a.drift_annual;
      break;
    case DriftRule::follows_rate:
      m.drift_annual = m.risk_free_rate_cc;
      break;
    case DriftRule::own_driver:
      m.drift_annual = (mask & bit(Driver::drift)) ? b.drift_annual : a.drift_annual;
      break;
  }
  return m;
}

}  // namespace

PdAttribution attribute_pd_change(const MertonInputs& before, const MertonInputs& after,
                                  const MertonSolveOptions& options) noexcept {
  PdAttribution r;
  if (!validate(before).ok() || !validate(after).ok()) return r;
  DriftRule rule = DriftRule::own_driver;
  if (before.drift_annual == after.drift_annual) {
    rule = DriftRule::fixed;
  } else if (before.drift_annual == before.risk_free_rate_cc &&
             after.drift_annual == after.risk_free_rate_cc) {
    rule = DriftRule::follows_rate;
  }
  const unsigned n = rule == DriftRule::own_driver ? 6 : 5;  // drivers are bits 0..n-1
  const unsigned subsets = 1U << n;
  std::array<MertonInputs, 64> in;
  std::array<AssetSolution, 64> sol;
  for (unsigned mask = 0; mask < subsets; ++mask) in[mask] = mix(before, after, mask, rule);
  solve_asset_batch(in.data(), sol.data(), subsets, options);
  std::array<double, 64> v{};
  r.status = AttributionStatus::not_converged;
  for (unsigned mask = 0; mask < subsets; ++mask) {
    if (!sol[mask].usable()) return r;
    v[mask] = merton_measures(in[mask], sol[mask].asset_value, sol[mask].asset_vol_annual).pd;
    if (!std::isfinite(v[mask])) return r;
  }
  // weight[s] = s! (n - s - 1)! / n!, the share of orders in which a given coalition of size s
  // precedes the driver.
  std::array<double, 6> weight{};
  for (unsigned s = 0; s < n; ++s) {
    double w = 1.0 / n;  // 1 / C(n-1, s) / n
    for (unsigned k = 1; k <= s; ++k) w *= static_cast<double>(k) / static_cast<double>(n - k);
    weight[s] = w;
  }
  for (unsigned i = 0; i < n; ++i) {
    const unsigned b = 1U << i;
    double phi = 0.0;
    for (unsigned mask = 0; mask < subsets; ++mask) {
      if (mask & b) continue;
      phi += weight[static_cast<std::size_t>(std::popcount(mask))] * (v[mask | b] - v[mask]);
    }
    r.contribution[i] = phi;
  }
  r.pd_before = v[0];
  r.pd_after = v[subsets - 1];
  r.drivers = static_cast<int>(n);
  r.status = AttributionStatus::ok;
  return r;
}

}  // namespace firmcall
