// Merton (1974) pricing and derived measures. See include/firmcall/merton.hpp.
#include "firmcall/model/merton.hpp"

#include <cmath>

#include "firmcall/model/normal.hpp"

namespace firmcall {

std::string_view to_string(MertonField field) noexcept {
  switch (field) {
    case MertonField::none:
      return "";
    case MertonField::equity_value:
      return "market_cap";
    case MertonField::equity_vol:
      return "equity_vol";
    case MertonField::default_point:
      return "default_point";
    case MertonField::rate:
      return "rate";
    case MertonField::horizon:
      return "horizon";
    case MertonField::drift:
      return "drift";
  }
  return "";
}

MertonInputCheck validate(const MertonInputs& in) noexcept {
  const auto positive = [](double x) { return std::isfinite(x) && x > 0.0; };
  if (!positive(in.equity_value)) return {MertonField::equity_value, "must be positive and finite"};
  if (!positive(in.equity_vol_annual)) return {MertonField::equity_vol, "must be positive and finite"};
  if (!positive(in.default_point)) return {MertonField::default_point, "must be positive and finite"};
  if (!std::isfinite(in.risk_free_rate_cc)) return {MertonField::rate, "must be finite"};
  if (!positive(in.horizon_years)) return {MertonField::horizon, "must be positive and finite"};
  if (!std::isfinite(in.drift_annual)) return {MertonField::drift, "must be finite"};
  // exp(-rT) must stay a normal, finite number for the strike to make sense.
  const double rt = in.risk_free_rate_cc * in.horizon_years;
  if (!(std::fabs(rt) < 700.0)) return {MertonField::rate, "rate x horizon is outside +-700"};
  return {};
}

double equity_value(const MertonInputs& in, double v, double sv) noexcept {
  const double t = in.horizon_years;
  const double k = in.default_point * std::exp(-in.risk_free_rate_cc * t);
  const double st = sv * std::sqrt(t);
  const double d1 = (std::log(v / k) + 0.5 * st * st) / st;
  const double d2 = d1 - st;
  // For V well above K write C = (V - K) + put: both pieces are accurate there.
  if (d2 > 0.0) return (v - k) + (k * norm_sf(d2) - v * norm_sf(d1));
  return v * norm_cdf(d1) - k * norm_cdf(d2);
}

MertonMeasures merton_measures(const MertonInputs& in, double v, double sv) noexcept {
  MertonMeasures m;
  const double t = in.horizon_years;
  const double sqrt_t = std::sqrt(t);
  const double st = sv * sqrt_t;
  const double k = in.default_point * std::exp(-in.risk_free_rate_cc * t);
  const double log_v_dp = std::log(v / in.default_point);
  m.asset_value = v;
  m.asset_vol_annual = sv;
  m.default_point = in.default_point;
  m.leverage = in.default_point / v;
  m.d2 = (log_v_dp + (in.risk_free_rate_cc - 0.5 * sv * sv) * t) / st;
  m.d1 = m.d2 + st;
  // With mu = r the physical DD is d2 itself (and pd equals pd_risk_neutral exactly).
  m.distance_to_default = in.drift_annual == in.risk_free_rate_cc
                              ? m.d2
                              : (log_v_dp + (in.drift_annual - 0.5 * sv * sv) * t) / st;
  const double sf_d2 = norm_sf(m.d2);  // N(-d2)
  const double sf_d1 = norm_sf(m.d1);  // N(-d1)
  m.pd = in.drift_annual == in.risk_free_rate_cc ? sf_d2 : norm_sf(m.distance_to_default);
  m.pd_risk_neutral = sf_d2;
  // Debt = riskless debt - put; both forms avoid the V - E cancellation at low leverage.
  m.debt_value = k * norm_cdf(m.d2) + v * sf_d1;
  const double put = k * sf_d2 - v * sf_d1;
  double spread;
  if (put < 0.5 * k) {
    spread = put > 0.0 ? -std::log1p(-put / k) / t : 0.0;
  } else {
    spread = -std::log(m.debt_value / k) / t;
  }
  m.spread_bp = 1e4 * spread;
  return m;
}

}  // namespace firmcall
