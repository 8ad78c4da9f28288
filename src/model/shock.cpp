// Stress shocks and their combination. See include/firmcall/shock.hpp.
#include "firmcall/model/shock.hpp"

namespace firmcall {

void ShockEffect::add(const Shock& s) noexcept {
  equity_factor *= 1.0 + s.equity_change;
  equity_vol_factor *= s.equity_vol_multiplier;
  equity_vol_add += s.equity_vol_add_points / 100.0;
  rate_shift += s.rate_shift_bp / 1e4;
  default_point_factor *= 1.0 + s.default_point_change;
  if (s.horizon_years > 0.0) horizon_years = s.horizon_years;
  ++shocks;
}

bool ShockEffect::identity() const noexcept {
  return equity_factor == 1.0 && equity_vol_factor == 1.0 && equity_vol_add == 0.0 && rate_shift == 0.0 &&
         default_point_factor == 1.0 && horizon_years == 0.0;
}

MertonInputs apply_shock(const MertonInputs& base, const ShockEffect& effect,
                         bool drift_follows_rate) noexcept {
  MertonInputs s = base;
  s.equity_value = base.equity_value * effect.equity_factor;
  s.equity_vol_annual = base.equity_vol_annual * effect.equity_vol_factor + effect.equity_vol_add;
  s.risk_free_rate_cc = base.risk_free_rate_cc + effect.rate_shift;
  if (drift_follows_rate) s.drift_annual = base.drift_annual + effect.rate_shift;
  s.default_point = base.default_point * effect.default_point_factor;
  if (effect.horizon_years > 0.0) s.horizon_years = effect.horizon_years;
  return s;
}

}  // namespace firmcall
