// Merton (1974) structural model of default: equity is a European call on the firm's assets,
// struck at the default point and priced with Black-Scholes (Black and Scholes, 1973).
//
//   E  = V N(d1) - K N(d2),            K  = DP exp(-r T)
//   d1 = [ln(V/DP) + (r + sV^2/2) T] / (sV sqrt(T)),   d2 = d1 - sV sqrt(T)
//   DD = [ln(V/DP) + (mu - sV^2/2) T] / (sV sqrt(T)),  PD = N(-DD)
//
// Everything here is pure arithmetic: no I/O, no allocation, nothing throws.
//
// **Example**:
//   firmcall::MertonInputs in{.equity_value = 400, .equity_vol_annual = 0.45, .default_point = 700,
//                             .risk_free_rate_cc = 0.03, .horizon_years = 1, .drift_annual = 0.03};
//   auto sol = firmcall::solve_asset(in);                       // merton_solver.hpp
//   auto m = firmcall::merton_measures(in, sol.asset_value, sol.asset_vol_annual);
#pragma once

#include <cstdint>
#include <string_view>

namespace firmcall {

/// What the model needs about one obligor, after the default point and equity value are resolved.
struct MertonInputs {
  double equity_value = 0.0;       ///< market value of equity E, currency units (> 0)
  double equity_vol_annual = 0.0;  ///< equity volatility sE, annualised decimal (> 0)
  double default_point = 0.0;      ///< default point DP, currency units (> 0)
  double risk_free_rate_cc = 0.0;  ///< r, annualised, continuously compounded decimal (finite)
  double horizon_years = 1.0;      ///< T, years (> 0)
  double drift_annual = 0.0;       ///< mu, expected asset return, annualised cc decimal (finite)
};

/// Which input of MertonInputs broke its constraint (none when valid).
enum class MertonField : std::uint8_t { none, equity_value, equity_vol, default_point, rate, horizon, drift };

/// Result of validate(): the first broken constraint, with a static message.
struct MertonInputCheck {
  MertonField field = MertonField::none;
  const char* message = "";  ///< e.g. "must be positive and finite"; static storage
  bool ok() const noexcept { return field == MertonField::none; }
};

/// Field name as used in files ("equity_vol", "rate", ...).
std::string_view to_string(MertonField field) noexcept;

/// Checks E > 0, sE > 0, DP > 0, T > 0 (all finite) and finite r, mu; returns the first violation.
MertonInputCheck validate(const MertonInputs& in) noexcept;

/// Black-Scholes value of equity as a call on assets V with volatility sV (Merton 1974).
double equity_value(const MertonInputs& in, double asset_value, double asset_vol_annual) noexcept;

/// Everything reported for one obligor once (V, sV) is known.
struct MertonMeasures {
  double asset_value = 0.0;          ///< V, currency units
  double asset_vol_annual = 0.0;     ///< sV, annualised decimal
  double default_point = 0.0;        ///< DP, currency units
  double leverage = 0.0;             ///< DP / V
  double d1 = 0.0;                   ///< Black-Scholes d1 (risk-neutral drift r)
  double d2 = 0.0;                   ///< d1 - sV sqrt(T)
  double distance_to_default = 0.0;  ///< DD, with drift mu, in standard deviations
  double pd = 0.0;                   ///< N(-DD), physical-measure probability of default at T
  double pd_risk_neutral = 0.0;      ///< N(-d2), risk-neutral probability of default at T
  double debt_value = 0.0;           ///< market value of debt K N(d2) + V N(-d1) (= V - E at the solution)
  double spread_bp = 0.0;            ///< -ln(debt_value / K)/T in basis points (10^-4)
};

/// Derived measures from (V, sV). The spread is computed from the put value with log1p so that
/// tiny spreads keep their relative accuracy; PDs are complements (never 1 - N).
MertonMeasures merton_measures(const MertonInputs& in, double asset_value, double asset_vol_annual) noexcept;

}  // namespace firmcall
