// Analytic sensitivities of the Merton measures. See include/firmcall/sensitivity.hpp for the
// formulas.
//
// Why det J > 0: with m = N(d1)/phi(d1), det J = V phi(d1)^2 (m^2 - d1 m - 1), positive iff
// m > (d1 + sqrt(d1^2 + 4))/2. For d1 < 0 that is Birnbaum's (1942) lower bound on Mills' ratio
// (from memory). For d1 >= 0 it holds at d1 = 0 (m = 1.2533 > 1), and m grows at rate
// dm/dd1 = 1 + d1 m >= 1 while the bound grows at rate (1 + d1/sqrt(d1^2 + 4))/2 <= 1.
#include "firmcall/model/sensitivity.hpp"

#include <cmath>

#include "firmcall/model/normal.hpp"

namespace firmcall {

std::string_view to_string(SensitivityStatus s) noexcept {
  switch (s) {
    case SensitivityStatus::ok:
      return "ok";
    case SensitivityStatus::singular:
      return "singular";
    case SensitivityStatus::invalid_input:
      return "invalid_input";
  }
  return "";
}

namespace {

bool finite(const MeasureChange& c) noexcept {
  return std::isfinite(c.distance_to_default) && std::isfinite(c.pd) && std::isfinite(c.spread_bp) &&
         std::isfinite(c.asset_value) && std::isfinite(c.asset_vol_annual);
}

}  // namespace

MertonSensitivities merton_sensitivities(const MertonInputs& in, double v, double sv,
                                         bool drift_follows_rate) noexcept {
  MertonSensitivities out;
  const auto positive = [](double x) { return std::isfinite(x) && x > 0.0; };
  if (!validate(in).ok() || !positive(v) || !positive(sv)) return out;

  const double e = in.equity_value;
  const double se = in.equity_vol_annual;
  const double dp = in.default_point;
  const double t = in.horizon_years;
  const double sqrt_t = std::sqrt(t);
  const double st = sv * sqrt_t;
  const double k = dp * std::exp(-in.risk_free_rate_cc * t);
  const double log_v_dp = std::log(v / dp);
  const double d1 = (log_v_dp + (in.risk_free_rate_cc + 0.5 * sv * sv) * t) / st;
  const double d2 = d1 - st;
  const double dd = (log_v_dp + (in.drift_annual - 0.5 * sv * sv) * t) / st;
  const double nd1 = norm_cdf(d1);
  const double nd2 = norm_cdf(d2);
  const double n_minus_d1 = norm_sf(d1);
  const double n_minus_d2 = norm_sf(d2);
  const double phi = norm_pdf(d1);
  const double phi_dd = norm_pdf(dd);
  const double vega = v * phi * sqrt_t;  // dC/dsV
  const double put = k * n_minus_d2 - v * n_minus_d1;
  const double debt = k * nd2 + v * n_minus_d1;  // D = K - P, without the V - E cancellation

  // Jacobian of (F1, F2) in (V, sV).
  const double j11 = nd1;
  const double j12 = vega;
  const double j21 = sv * nd1 + phi / sqrt_t;
  const double j22 = v * (nd1 - phi * d2);
  const double det = j11 * j22 - j12 * j21;
  if (!std::isfinite(det) || !(det > 0.0)) {
    out.status = SensitivityStatus::singular;
    return out;
  }

  // One input: its partials of (F1, F2), of K, and its direct effect on DD (through DP or mu).
  struct Partials {
    double f1, f2, k, dd_direct, scale;
  };
  const auto change = [&](const Partials& p) {
    // d(V, sV)/dp = -J^{-1} dF/dp (Cramer's rule).
    const double dv = (-p.f1 * j22 + p.f2 * j12) / det;
    const double dsv = (-p.f2 * j11 + p.f1 * j21) / det;
    const double ddd = dv / (v * st) - (dd / sv + sqrt_t) * dsv + p.dd_direct;
    const double dput = -n_minus_d1 * dv + vega * dsv + n_minus_d2 * p.k;
    const double dspread = (dput - put * p.k / k) / (t * debt);
    MeasureChange c;
    c.asset_value = p.scale * dv;
    c.asset_vol_annual = p.scale * dsv;
    c.distance_to_default = p.scale * ddd;
    c.pd = p.scale * (-phi_dd * ddd);
    c.spread_bp = p.scale * 1e4 * dspread;
    return c;
  };

  out.equity = change({.f1 = -1.0, .f2 = -se, .k = 0.0, .dd_direct = 0.0, .scale = 0.01 * e});
  out.equity_vol = change({.f1 = 0.0, .f2 = -e, .k = 0.0, .dd_direct = 0.0, .scale = 0.01});
  out.default_point = change({.f1 = -nd2 * k / dp,
                              .f2 = -v * phi / (dp * sqrt_t),
                              .k = k / dp,
                              .dd_direct = -1.0 / (dp * st),
                              .scale = 0.01 * dp});
  out.rate = change({.f1 = t * k * nd2,
                     .f2 = v * phi * sqrt_t,
                     .k = -t * k,
                     .dd_direct = drift_follows_rate ? sqrt_t / sv : 0.0,
                     .scale = 1e-4});

  const bool all_finite =
      finite(out.equity) && finite(out.equity_vol) && finite(out.default_point) && finite(out.rate);
  out.status = all_finite ? SensitivityStatus::ok : SensitivityStatus::singular;
  return out;
}

}  // namespace firmcall
