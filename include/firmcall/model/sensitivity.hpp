// Analytic sensitivities of the Merton (1974) measures to the observed inputs, through the
// implicit-function theorem on the 2x2 system that the solver inverts:
//
//   F1(V, sV; p) = C(V, sV; K) - E            = 0     (equity is a call on the assets, K = DP e^{-rT})
//   F2(V, sV; p) = N(d1) sV V - sE E          = 0     (Ito's lemma on E = C(V))
//
// For an input p in {E, sE, DP, r}, d(V, sV)/dp = -J^{-1} dF/dp with the Jacobian
//
//   J = [ N(d1)                        V phi(d1) sqrt(T)      ]
//       [ sV N(d1) + phi(d1)/sqrt(T)   V (N(d1) - phi(d1) d2) ]
//
//   dF/dE  = (-1, -sE)                 dF/dsE = (0, -E)
//   dF/dDP = (-N(d2) K/DP, -V phi(d1)/DP/sqrt(T))
//   dF/dr  = (T K N(d2), V phi(d1) sqrt(T))
//
// det J = V phi(d1)^2 (m^2 - d1 m - 1) with m = N(d1)/phi(d1), positive for every d1 by
// Birnbaum's (1942) lower bound on Mills' ratio; a zero or non-finite determinant (underflow in the
// far tails) is reported as a status, never divided by.
//
// The measures then follow by the chain rule:
//   DD     = [ln(V/DP) + (mu - sV^2/2) T] / (sV sqrt(T))
//            dDD = dV/(V sV sqrt(T)) - (DD/sV + sqrt(T)) dsV - dDP/(DP sV sqrt(T)) + sqrt(T)/sV dmu
//   PD     = N(-DD),                   dPD = -phi(DD) dDD
//   spread = -ln(D/K)/T with D = K - P and P = K N(-d2) - V N(-d1) (the put),
//            dspread = [dP - P dK/K] / (T D),  dP = -N(-d1) dV + V phi(d1) sqrt(T) dsV + N(-d2) dK
// (the put form keeps tiny spreads and their derivatives accurate; D = V - E would cancel).
//
// Nothing here allocates or throws.
//
// **Example**:
//   auto sol = firmcall::solve_asset(in);
//   auto s = firmcall::merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual,
//                                           /*drift_follows_rate=*/true);
//   if (s.ok()) use(s.equity.pd);   // change of PD (probability) for a +1% relative change of E
#pragma once

#include <cstdint>
#include <string_view>

#include "firmcall/model/merton.hpp"

namespace firmcall {

/// Changes of the reported measures for one unit move of one input (units: see MertonSensitivities).
struct MeasureChange {
  double distance_to_default = 0.0;  ///< change of DD, standard deviations
  double pd = 0.0;                   ///< change of PD, probability (0.0001 = 1 bp of PD)
  double spread_bp = 0.0;            ///< change of the spread, basis points
  double asset_value = 0.0;          ///< change of V, currency units
  double asset_vol_annual = 0.0;     ///< change of sV, annualised decimal
};

/// ok: every derivative is finite. singular: the Jacobian determinant is zero or not finite
/// (inputs so far in a tail that the derivatives under- or overflow); the values are not usable.
/// invalid_input: validate() rejected the inputs or (V, sV) is not positive and finite.
enum class SensitivityStatus : std::uint8_t { ok, singular, invalid_input };
std::string_view to_string(SensitivityStatus s) noexcept;

/// First-order sensitivities, each scaled to a stated unit move (linear approximation):
struct MertonSensitivities {
  MeasureChange equity;         ///< per +1% relative change of E: 0.01 E d/dE
  MeasureChange equity_vol;     ///< per +1 volatility point of sE (+0.01 absolute): 0.01 d/dsE
  MeasureChange default_point;  ///< per +1% relative change of DP: 0.01 DP d/dDP
  MeasureChange rate;           ///< per +1 bp of r (+0.0001): 0.0001 d/dr; see drift_follows_rate
  SensitivityStatus status = SensitivityStatus::invalid_input;
  bool ok() const noexcept { return status == SensitivityStatus::ok; }
};

/// Sensitivities at the solution (V, sV) of `in` (as returned by solve_asset). When
/// `drift_follows_rate` is true (risk-neutral measure, or no drift given so mu = r) the rate
/// derivative moves mu with r; otherwise mu is held fixed.
MertonSensitivities merton_sensitivities(const MertonInputs& in, double asset_value, double asset_vol_annual,
                                         bool drift_follows_rate) noexcept;

}  // namespace firmcall
