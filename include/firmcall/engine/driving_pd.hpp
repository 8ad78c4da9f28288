// Which PD drives grades, expected loss, the loss distribution and IRB capital: the Merton model
// PD, or the calibrated one-year PD of the obligor's distance to default (--pd-calibration). A
// calibrated one-year PD PD1 over a horizon of T years is 1 - (1 - PD1)^T (constant annual default
// intensity, the inverse of pd_one_year in model/pd_horizon.hpp).
#pragma once

#include <cstdint>
#include <string_view>

#include "firmcall/model/pd_horizon.hpp"

namespace firmcall {

/// model: the Merton PD. calibrated: the calibrated one-year PD (needs a calibration).
enum class DrivingPd : std::uint8_t { model, calibrated };

inline std::string_view to_string(DrivingPd d) noexcept {
  return d == DrivingPd::calibrated ? "calibrated" : "model";
}

/// The PD over `horizon_years` of a one-year PD: 1 - (1 - pd1)^T, as -expm1(T log1p(-pd1)).
/// pd1 itself at T = 1; NaN outside pd1 in [0, 1], T > 0 finite.
inline double pd_over_horizon(double pd1, double horizon_years) noexcept {
  if (!(pd1 >= 0.0 && pd1 <= 1.0) || !(horizon_years > 0.0) || !std::isfinite(horizon_years)) {
    return std::nan("");
  }
  if (horizon_years == 1.0 || pd1 == 0.0 || pd1 == 1.0) return pd1;
  const double pd = -std::expm1(horizon_years * std::log1p(-pd1));
  return pd < 1.0 ? pd : 1.0;
}

}  // namespace firmcall
