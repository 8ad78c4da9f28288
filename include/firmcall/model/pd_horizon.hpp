// PDs of different horizons on one footing: the one-year PD of a PD over T years, under a constant
// annual default intensity (each year's survival equal): 1 - PD1 = (1 - PD_T)^(1/T).
//
//   PD1 = 1 - (1 - PD_T)^(1/T) = -expm1(log1p(-PD_T) / T)
//
// The log1p/expm1 form keeps the digits of tiny PDs (1 - (1 - 1e-15)^0.2 computed naively loses
// about half of them). Pure arithmetic: no I/O, nothing throws.
//
// **Example**:
//   double pd1 = firmcall::pd_one_year(0.05, 5.0);  // 0.010206..., since 0.98979...^5 = 0.95
#pragma once

#include <cmath>

namespace firmcall {

/// One-year PD of `pd`, a probability of default within `horizon_years` (> 0), assuming a constant
/// annual default intensity. Contract: pd in [0, 1] and horizon_years > 0 and finite, else NaN;
/// pd = 0 gives 0, pd = 1 gives 1, horizon 1 gives `pd` itself (bit for bit). The result is a
/// probability in [0, 1], increasing in pd: below pd for T > 1, above it for T < 1.
inline double pd_one_year(double pd, double horizon_years) noexcept {
  if (!(pd >= 0.0 && pd <= 1.0) || !(horizon_years > 0.0) || !std::isfinite(horizon_years)) {
    return std::nan("");
  }
  if (horizon_years == 1.0 || pd == 0.0 || pd == 1.0) return pd;
  const double pd1 = -std::expm1(std::log1p(-pd) / horizon_years);
  return pd1 < 1.0 ? pd1 : 1.0;
}

}  // namespace firmcall
