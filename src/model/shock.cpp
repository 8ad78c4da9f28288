// Stress shocks, their combination and the asset-volatility hold. See include/firmcall/shock.hpp.
#include "firmcall/model/shock.hpp"

#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>

#include "firmcall/model/math_policy.hpp"
#include "firmcall/model/normal.hpp"

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

std::string_view to_string(StressHold hold) noexcept {
  return hold == StressHold::asset_vol ? "asset-vol" : "equity-vol";
}

std::optional<StressHold> parse_stress_hold(std::string_view text) noexcept {
  if (text == "asset-vol") return StressHold::asset_vol;
  if (text == "equity-vol") return StressHold::equity_vol;
  return std::nullopt;
}

double stressed_asset_vol(double base_asset_vol, const ShockEffect& effect) noexcept {
  return base_asset_vol * effect.equity_vol_factor + effect.equity_vol_add;
}

AssetSolution solve_asset_value_at_vol(const MertonInputs& in, double asset_vol,
                                       const MertonSolveOptions& options) noexcept {
  AssetSolution out;
  out.asset_vol_annual = 0.0;
  MertonInputs checked = in;
  checked.equity_vol_annual = asset_vol;  // validate() then checks sV as it would sE
  out.input_check = validate(checked);
  if (!out.input_check.ok() || !options_valid(options)) return out;
  const double k = in.default_point * std::exp(-in.risk_free_rate_cc * in.horizon_years);
  const double e = in.equity_value;
  const double st = asset_vol * std::sqrt(in.horizon_years);
  if (!(k > 0.0) || !std::isfinite(k) || !std::isfinite(st) || !(st > 0.0)) {
    out.status = SolveStatus::max_iterations;
    return out;
  }
  // C(V) - E as a function of x = ln(V/K); the deep in-the-money form (V - K) + put keeps its
  // accuracy where the call is nearly V - K (as the full solver does).
  const auto f = [&](double x) {
    const double d1 = x / st + 0.5 * st;
    const double d2 = d1 - st;
    const double v = k * std::exp(x);
    if (d2 > 0.0) return k * std::expm1(x) + (k * norm_sf(d2) - v * norm_sf(d1)) - e;
    return v * norm_cdf(d1) - k * norm_cdf(d2) - e;
  };
  // E < V < E + K: x in [ln(E/K), ln(E/K) + ln(1 + K/E)].
  const double lo = std::log(e) - std::log(k);
  const double hi = lo + std::log1p(k / e);
  const double flo = f(lo);
  const double fhi = f(hi);
  double x = lo;
  int evals = 2;
  if (!(flo < 0.0)) {
    x = lo;  // the call rounds to V at the lower end
  } else if (!(fhi > 0.0)) {
    x = hi;
  } else {
    const auto tol = boost::math::tools::eps_tolerance<double>(std::numeric_limits<double>::digits - 2);
    std::uintmax_t it = static_cast<std::uintmax_t>(options.max_fallback_iterations);
    const auto r = boost::math::tools::toms748_solve(f, lo, hi, flo, fhi, tol, it, NoThrowPolicy());
    evals += static_cast<int>(it);
    x = 0.5 * (r.first + r.second);
  }
  const double resid = std::fabs(f(x)) / (e + k);
  out.iterations = evals;
  out.method = SolveMethod::bracketed;
  out.residual = resid;
  if (std::isfinite(x) && resid <= options.residual_tolerance) {
    out.asset_value = k * std::exp(x);
    out.asset_vol_annual = asset_vol;
    out.status = SolveStatus::converged;
  } else {
    out.status = SolveStatus::max_iterations;
  }
  return out;
}

double implied_equity_vol(const MertonInputs& in, double asset_value, double asset_vol_annual) noexcept {
  const double st = asset_vol_annual * std::sqrt(in.horizon_years);
  const double d1 =
      (std::log(asset_value / in.default_point) + in.risk_free_rate_cc * in.horizon_years) / st + 0.5 * st;
  return norm_cdf(d1) * asset_vol_annual * asset_value / in.equity_value;
}

}  // namespace firmcall
