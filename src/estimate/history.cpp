// Equity volatility and asset dynamics from market history. See include/firmcall/history.hpp.
//
// Sources: Merton (1974); Duan (1994), "Maximum likelihood estimation using price data of the
// derivative contract", Mathematical Finance 4(2); Vassalou and Xing (2004), "Default risk in
// equity returns", Journal of Finance 59(2); Bharath and Shumway (2008), "Forecasting default
// with the Merton distance to default model", Review of Financial Studies 21(3).
//
// Duan's log-likelihood of the equity series E_0..E_n for (sV, mu), with V_t = V_t(sV) the
// inverse of E_t = C(V_t; sV), r_t = ln(V_t / V_(t-1)), h_t the span of return t in years and
// c = mu - sV^2/2 (sums over t = 1..n):
//   L = -(n/2) ln(2 pi) - (1/2) sum ln(sV^2 h_t) - sum [ln V_t + ln N(d1_t)]
//       - sum (r_t - c h_t)^2 / (2 sV^2 h_t)
// The Jacobian term -ln N(d1_t) is dE/dV = N(d1) of the equity-to-asset map. For fixed sV the
// maximising drift has the closed form c = sum r / sum h, so the search is one-dimensional (the
// profile likelihood in ln sV, Brent's method from Boost.Math); the Hessian of the full L in
// (sV, mu) is then taken at the optimum: d2L/dmu2 = -sum h / sV^2 exactly, the other two entries
// by central differences in sV (each needs V_t(sV +- delta)).
#include "firmcall/estimate/history.hpp"

#include <Eigen/Cholesky>
#include <Eigen/Core>
#include <algorithm>
#include <boost/math/special_functions/erf.hpp>
#include <boost/math/tools/minima.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numbers>

#include "firmcall/model/math_policy.hpp"
#include "firmcall/model/normal.hpp"

namespace firmcall {

std::string_view to_string(HistoryMethod m) noexcept {
  switch (m) {
    case HistoryMethod::iterative:
      return "iterative";
    case HistoryMethod::mle:
      return "mle";
    case HistoryMethod::naive:
      return "naive";
  }
  return "";
}

std::optional<HistoryMethod> history_method_from_string(std::string_view s) noexcept {
  for (HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle, HistoryMethod::naive}) {
    if (to_string(m) == s) return m;
  }
  return std::nullopt;
}

std::string_view to_string(VolEstimator v) noexcept {
  return v == VolEstimator::simple ? "simple" : "ewma";
}

std::optional<VolEstimator> vol_estimator_from_string(std::string_view s) noexcept {
  if (s == "simple") return VolEstimator::simple;
  if (s == "ewma") return VolEstimator::ewma;
  return std::nullopt;
}

OptionCheck AssetDynamicsOptions::validate() const {
  if (to_string(method).empty()) {
    return OptionProblem{"method", std::to_string(static_cast<int>(method)),
                         "must be iterative, mle or naive"};
  }
  if (equity_vol != VolEstimator::simple && equity_vol != VolEstimator::ewma) {
    return OptionProblem{"equity_vol", std::to_string(static_cast<int>(equity_vol)),
                         "must be simple or ewma"};
  }
  return std::nullopt;
}

std::string_view to_string(DriftSource s) noexcept {
  switch (s) {
    case DriftSource::estimate:
      return "estimate";
    case DriftSource::shrunk:
      return "shrunk";
    case DriftSource::capped:
      return "capped";
    case DriftSource::rate:
      return "rate";
  }
  return "";
}

DriftInDistance drift_in_distance(double estimated_drift, double rate_cc, bool risk_neutral,
                                  const HistorySettings& settings) noexcept {
  if (risk_neutral) return {rate_cc, DriftSource::rate, 0.0};
  const double keep = 1.0 - settings.drift_shrinkage;
  const double excess = keep * (estimated_drift - rate_cc);
  if (excess > settings.drift_cap) return {rate_cc + settings.drift_cap, DriftSource::capped, 0.0};
  if (excess < -settings.drift_cap) return {rate_cc - settings.drift_cap, DriftSource::capped, 0.0};
  if (settings.drift_shrinkage == 0.0) return {estimated_drift, DriftSource::estimate, 1.0};
  return {rate_cc + excess, DriftSource::shrunk, keep};
}

std::string_view to_string(EstimateStatus s) noexcept {
  switch (s) {
    case EstimateStatus::converged:
      return "converged";
    case EstimateStatus::max_iterations:
      return "max_iterations";
    case EstimateStatus::boundary:
      return "boundary";
    case EstimateStatus::singular_information:
      return "singular_information";
    case EstimateStatus::inversion_failed:
      return "inversion_failed";
    case EstimateStatus::degenerate:
      return "degenerate";
    case EstimateStatus::too_short:
      return "too_short";
    case EstimateStatus::invalid_input:
      return "invalid_input";
  }
  return "";
}

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Call value C(V) and N(d1) for strike K (already discounted) and s = sV sqrt(T).
struct CallEval {
  double call;
  double nd1;
  double d1;
};

inline CallEval call_eval(double v, double k, double s) noexcept {
  const double d1 = std::log(v / k) / s + 0.5 * s;
  const double d2 = d1 - s;
  if (d2 > 0.0) {
    // (V - K) + put: accurate deep in the money.
    const double sf1 = norm_sf(d1);
    return {(v - k) + (k * norm_sf(d2) - v * sf1), 1.0 - sf1, d1};
  }
  const double nd1 = norm_cdf(d1);
  return {v * nd1 - k * norm_cdf(d2), nd1, d1};
}

// Solves C(V) = E on [E, E + K]. C is increasing (dC/dV = N(d1) > 0) and convex in V, so a
// Newton step from the right of the root stays right of it and the iterates decrease
// monotonically; a bracket [a, b] catches the rest (steps from the left, N(d1) underflow) by
// bisection. Newton converges quadratically, so once a step is below 1e-9 V the iterate after it
// is exact to rounding. On return `nd1` and `d1` hold N(d1) and d1 at the last evaluation (one
// step before the returned value). Returns NaN if 200 steps do not settle.
inline double invert_call(double e, double k, double s, double guess, double& nd1, double& d1) noexcept {
  double a = e;
  double b = e + k;
  double v = (guess > a && guess < b) ? guess : b;
  for (int i = 0; i < 200; ++i) {
    const CallEval c = call_eval(v, k, s);
    nd1 = c.nd1;
    d1 = c.d1;
    const double f = c.call - e;
    if (f == 0.0) return v;
    if (f < 0.0) {
      a = v;
    } else {
      b = v;
    }
    double vn = v - f / c.nd1;
    if (vn >= a && vn <= b) {
      if (std::fabs(vn - v) <= 1e-9 * v) return vn;  // includes a step lost to rounding
    } else {
      vn = 0.5 * (a + b);  // Newton left the bracket: bisect
    }
    if (b - a <= 4.0 * std::numeric_limits<double>::epsilon() * b) return 0.5 * (a + b);
    v = vn;
  }
  return kNaN;
}

// Mean and variance (per year) of the log returns of x with spans h (h[0] unused):
// m = sum r / sum h, s2 = sum (r - m h)^2 / h / (n - 1). `r` is scratch of the same length.
struct ReturnStats {
  double m = 0.0;
  double s2 = 0.0;
  double years = 0.0;
};

ReturnStats log_return_stats(std::span<const double> x, std::span<const double> h,
                             std::span<double> r) noexcept {
  ReturnStats st;
  const std::size_t n = x.size();
  double sum_r = 0.0;
  double sum_h = 0.0;
  double log_prev = std::log(x[0]);
  for (std::size_t t = 1; t < n; ++t) {
    const double log_x = std::log(x[t]);
    r[t] = log_x - log_prev;
    log_prev = log_x;
    sum_r += r[t];
    sum_h += h[t];
  }
  st.m = sum_r / sum_h;
  st.years = sum_h;
  double q = 0.0;
  for (std::size_t t = 1; t < n; ++t) {
    const double d = r[t] - st.m * h[t];
    q += d * d / h[t];
  }
  st.s2 = q / static_cast<double>(n - 2);  // n - 1 returns, n - 2 degrees of freedom
  return st;
}

// Fills strikes and spans; the inputs are validated already.
void prepare(const EquityHistoryView& hv, const HistorySettings& settings, HistoryWorkspace& ws) noexcept {
  const std::size_t n = hv.equity_value.size();
  ws.asset_value.resize(n);
  ws.distance_to_default.resize(n);
  ws.pd.resize(n);
  ws.strike.resize(n);
  ws.span_years.resize(n);
  ws.vol_sensitivity.resize(n);
  ws.returns.resize(n);
  const double disc = std::exp(-hv.risk_free_rate_cc * hv.horizon_years);
  for (std::size_t t = 0; t < n; ++t) ws.strike[t] = hv.default_point[t] * disc;
  ws.solved_asset_vol = 0.0;  // no solution yet: invert_all starts cold
  ws.span_years[0] = 0.0;
  for (std::size_t t = 1; t < n; ++t) {
    ws.span_years[t] =
        static_cast<double>(hv.trading_day[t] - hv.trading_day[t - 1]) / settings.trading_days_per_year;
  }
}

// Inverts every day for sV. Starting values: from a previous solution at sV', the first-order
// prediction V_t + (dV_t/dsV)(sV - sV'), with dV/dsV = -V phi(d1) sqrt(T) / N(d1) (implicit
// function theorem on C(V, sV) = E); cold, the previous day's solution moved by the change in
// E + K (the first day starts at the bracket's right end E + K). Returns the index + 1 of the
// first failure, 0 on success.
std::size_t invert_all(const EquityHistoryView& hv, double sv, HistoryWorkspace& ws) noexcept {
  const double sqrt_t = std::sqrt(hv.horizon_years);
  const double s = sv * sqrt_t;
  const std::size_t n = hv.equity_value.size();
  const double prev_sv = ws.solved_asset_vol;
  ws.solved_asset_vol = 0.0;
  for (std::size_t t = 0; t < n; ++t) {
    const double e = hv.equity_value[t];
    const double k = ws.strike[t];
    double guess;
    if (prev_sv > 0.0) {
      guess = ws.asset_value[t] + ws.vol_sensitivity[t] * (sv - prev_sv);
    } else if (t > 0) {
      guess = ws.asset_value[t - 1] + (e - hv.equity_value[t - 1]) + (k - ws.strike[t - 1]);
    } else {
      guess = e + k;
    }
    double nd1 = 0.0;
    double d1 = 0.0;
    const double v = invert_call(e, k, s, guess, nd1, d1);
    if (!std::isfinite(v)) return t + 1;
    ws.asset_value[t] = v;
    ws.vol_sensitivity[t] = nd1 > 0.0 ? -v * norm_pdf(d1) * sqrt_t / nd1 : 0.0;
  }
  ws.solved_asset_vol = sv;
  return 0;
}

// Daily DD and PD from V_t (in ws) with sV and the drift mu that DD uses: Merton (1974).
void fill_series(const EquityHistoryView& hv, double sv, double mu, HistoryWorkspace& ws) noexcept {
  const double st = sv * std::sqrt(hv.horizon_years);
  const double drift = (mu - 0.5 * sv * sv) * hv.horizon_years;
  for (std::size_t t = 0; t < hv.equity_value.size(); ++t) {
    const double dd = (std::log(ws.asset_value[t] / hv.default_point[t]) + drift) / st;
    ws.distance_to_default[t] = dd;
    ws.pd[t] = norm_sf(dd);
  }
}

void set_last_day(const EquityHistoryView& hv, const HistoryWorkspace& ws, AssetDynamics& a) noexcept {
  const std::size_t last = hv.equity_value.size() - 1;
  a.asset_value = ws.asset_value[last];
  a.default_point = hv.default_point[last];
  a.distance_to_default = ws.distance_to_default[last];
  a.pd = ws.pd[last];
}

// The drift DD uses, from a.drift_annual (drift_in_distance); returns d(mu_used)/d(mu).
double set_drift_used(const EquityHistoryView& hv, const AssetDynamicsOptions& options,
                      const HistorySettings& settings, AssetDynamics& a) noexcept {
  const DriftInDistance d =
      drift_in_distance(a.drift_annual, hv.risk_free_rate_cc, options.risk_neutral, settings);
  a.drift_used = d.drift;
  a.drift_source = d.source;
  return d.slope;
}

void set_inversion_failed(AssetDynamics& a) noexcept {
  a.status = EstimateStatus::inversion_failed;
  a.message = "the equity value of one day could not be inverted for the asset value";
}

// invert_all at sV; when a day fails, marks `a` inversion_failed at that day and returns false.
bool invert_or_fail(const EquityHistoryView& hv, double sv, HistoryWorkspace& ws, AssetDynamics& a) noexcept {
  if (const std::size_t bad = invert_all(hv, sv, ws); bad != 0) {
    set_inversion_failed(a);
    a.bad_index = bad - 1;
    return false;
  }
  return true;
}

void run_iterative(const EquityHistoryView& hv, const AssetDynamicsOptions& options,
                   const HistorySettings& settings, HistoryWorkspace& ws, AssetDynamics& a) noexcept {
  const std::size_t last = hv.equity_value.size() - 1;
  const double e_last = hv.equity_value[last];
  double sv = a.equity_vol_used * e_last / (e_last + hv.default_point[last]);
  a.status = EstimateStatus::max_iterations;
  a.message = "the iteration did not settle within history.max_iterations passes";
  for (int k = 1; k <= settings.max_iterations; ++k) {
    a.iterations = k;
    if (!invert_or_fail(hv, sv, ws, a)) return;
    const ReturnStats st = log_return_stats(ws.asset_value, ws.span_years, ws.returns);
    const double sv_new = std::sqrt(st.s2);
    if (!(sv_new > 0.0) || !std::isfinite(sv_new)) {
      a.status = EstimateStatus::degenerate;
      a.message =
          "the asset values implied at this asset volatility do not vary (equity far out of the money at "
          "the start value sE E/(E + DP)); the mle method may still apply";
      return;
    }
    a.last_change = std::fabs(sv_new - sv);
    sv = sv_new;
    if (a.last_change < settings.iteration_tolerance) {
      a.status = EstimateStatus::converged;
      a.message = "";
      break;
    }
  }
  if (a.status != EstimateStatus::converged) return;
  // Final pass at the converged sV so that V_t, mu and DD are consistent with it.
  if (!invert_or_fail(hv, sv, ws, a)) return;
  const ReturnStats st = log_return_stats(ws.asset_value, ws.span_years, ws.returns);
  a.asset_vol_annual = sv;
  a.drift_annual = st.m + 0.5 * sv * sv;
  set_drift_used(hv, options, settings, a);
  fill_series(hv, sv, a.drift_used, ws);
  set_last_day(hv, ws, a);
}

// Pieces of Duan's log-likelihood at one sV (after invert_all): with c free,
//   L(sV, c) = base - n ln sV - jac - (s2h - 2 c sum_r + c^2 sum_h) / (2 sV^2).
struct LikelihoodParts {
  bool ok = false;
  double base = 0.0;   // -(n/2) ln(2 pi) - (1/2) sum ln h
  double jac = 0.0;    // sum [ln V_t + ln N(d1_t)]
  double sum_r = 0.0;  // sum r_t
  double sum_h = 0.0;  // sum h_t
  double s2h = 0.0;    // sum r_t^2 / h_t
  double n = 0.0;      // returns
  double value(double sv, double c) const noexcept {
    return base - n * std::log(sv) - jac - (s2h - 2.0 * c * sum_r + c * c * sum_h) / (2.0 * sv * sv);
  }
  double c_hat() const noexcept { return sum_r / sum_h; }
  double dmu(double sv, double c) const noexcept { return (sum_r - c * sum_h) / (sv * sv); }
};

LikelihoodParts likelihood_parts(const EquityHistoryView& hv, double sv, HistoryWorkspace& ws) noexcept {
  LikelihoodParts p;
  if (invert_all(hv, sv, ws) != 0) return p;
  const double s = sv * std::sqrt(hv.horizon_years);
  const std::size_t n = hv.equity_value.size();
  double log_h = 0.0;
  for (std::size_t t = 1; t < n; ++t) {
    const double v = ws.asset_value[t];
    const double nd1 = norm_cdf(std::log(v / ws.strike[t]) / s + 0.5 * s);
    if (!(nd1 > 0.0)) return p;
    const double r = std::log(v / ws.asset_value[t - 1]);
    const double h = ws.span_years[t];
    p.jac += std::log(v) + std::log(nd1);
    p.sum_r += r;
    p.sum_h += h;
    p.s2h += r * r / h;
    log_h += std::log(h);
  }
  p.n = static_cast<double>(n - 1);
  p.base = -0.5 * p.n * std::log(2.0 * std::numbers::pi) - 0.5 * log_h;
  p.ok = true;
  return p;
}

// The maximum of the profile log-likelihood over u = ln sV (Brent) into sv_out; false, with `a`
// saying why, when a day could not be inverted or the maximum lies on the edge of the interval.
bool profile_maximum(const EquityHistoryView& hv, HistoryWorkspace& ws, AssetDynamics& a,
                     double& sv_out) noexcept {
  const std::size_t n = hv.equity_value.size();
  // Search interval: the call's elasticity N(d1) V / E is at least 1 and at most (E + K)/E, so
  // sV lies near [sE min E/(E+K), sE]; widened by 10 below and 2 above.
  double min_share = 1.0;
  for (std::size_t t = 0; t < n; ++t) {
    min_share = std::min(min_share, hv.equity_value[t] / (hv.equity_value[t] + ws.strike[t]));
  }
  const double se = a.equity_vol.simple_annual;
  const double u_lo = std::log(0.1 * se * min_share);
  const double u_hi = std::log(2.0 * se);
  int evals = 0;
  bool failed = false;
  const auto neg_profile = [&](double u) {
    ++evals;
    const double sv = std::exp(u);
    const LikelihoodParts p = likelihood_parts(hv, sv, ws);
    if (!p.ok) {
      failed = true;
      return std::numeric_limits<double>::max();
    }
    return -p.value(sv, p.c_hat());
  };
  std::uintmax_t max_iter = 200;
  const auto best = boost::math::tools::brent_find_minima(neg_profile, u_lo, u_hi,
                                                          std::numeric_limits<double>::digits / 2, max_iter);
  a.iterations = evals;
  if (failed) {
    set_inversion_failed(a);
    return false;
  }
  const double u_hat = best.first;
  if (u_hat - u_lo < 1e-6 || u_hi - u_hat < 1e-6) {
    a.status = EstimateStatus::boundary;
    a.message = "the likelihood maximum lies on the edge of the asset volatility search interval";
    return false;
  }
  sv_out = std::exp(u_hat);
  return true;
}

// Standard errors and Wald intervals at settings.confidence_level of sV, mu, DD and PD, from the
// covariance of (sV, mu); after fill_series and set_last_day at (sv, mu_used). DD depends on mu
// through mu_used, whose derivative is `drift_slope`.
void set_mle_intervals(const EquityHistoryView& hv, const HistorySettings& settings,
                       const HistoryWorkspace& ws, double sv, double mu, double drift_slope,
                       const Eigen::Matrix2d& cov, AssetDynamics& a) noexcept {
  const double z = two_sided_normal_quantile(settings.confidence_level);
  a.asset_vol_se = std::sqrt(cov(0, 0));
  a.drift_se = std::sqrt(cov(1, 1));
  a.asset_vol_lo = sv - z * a.asset_vol_se;
  a.asset_vol_hi = sv + z * a.asset_vol_se;
  a.drift_lo = mu - z * a.drift_se;
  a.drift_hi = mu + z * a.drift_se;

  // Delta method for DD = [ln(V_n/DP_n) + (mu_used - sV^2/2) T] / (sV sqrt T), where V_n depends on sV
  // through C(V_n; sV) = E_n: d ln V_n / d sV = -vega / (N(d1) V) = -phi(d1) sqrt(T) / N(d1).
  const std::size_t last = hv.equity_value.size() - 1;
  const double t = hv.horizon_years;
  const double sqrt_t = std::sqrt(t);
  const double v_n = ws.asset_value[last];
  const double d1 = std::log(v_n / ws.strike[last]) / (sv * sqrt_t) + 0.5 * sv * sqrt_t;
  const double dlnv = -norm_pdf(d1) * sqrt_t / norm_cdf(d1);
  const double dd = a.distance_to_default;
  Eigen::Vector2d grad;
  grad(0) = (dlnv - sv * t) / (sv * sqrt_t) - dd / sv;
  grad(1) = drift_slope * sqrt_t / sv;
  const double var_dd = grad.dot(cov * grad);
  a.dd_se = var_dd >= 0.0 ? std::sqrt(var_dd) : kNaN;
  a.dd_lo = dd - z * a.dd_se;
  a.dd_hi = dd + z * a.dd_se;
  a.pd_lo = norm_sf(a.dd_hi);
  a.pd_hi = norm_sf(a.dd_lo);
}

void run_mle(const EquityHistoryView& hv, const AssetDynamicsOptions& options,
             const HistorySettings& settings, HistoryWorkspace& ws, AssetDynamics& a) noexcept {
  double sv = 0.0;
  if (!profile_maximum(hv, ws, a, sv)) return;

  // Hessian of L(sV, mu) at the optimum; mu enters only through c = mu - sV^2/2.
  const double delta = 2e-4 * sv;
  const LikelihoodParts up = likelihood_parts(hv, sv + delta, ws);
  const LikelihoodParts dn = likelihood_parts(hv, sv - delta, ws);
  const LikelihoodParts at = likelihood_parts(hv, sv, ws);  // last: leaves V_t(sV hat) in ws
  if (!up.ok || !dn.ok || !at.ok) {
    set_inversion_failed(a);
    return;
  }
  const double c_hat = at.c_hat();
  const double mu = c_hat + 0.5 * sv * sv;
  const auto c_of = [mu](double s) { return mu - 0.5 * s * s; };
  Eigen::Matrix2d hess;
  hess(0, 0) = (up.value(sv + delta, c_of(sv + delta)) - 2.0 * at.value(sv, c_hat) +
                dn.value(sv - delta, c_of(sv - delta))) /
               (delta * delta);
  hess(0, 1) = (up.dmu(sv + delta, c_of(sv + delta)) - dn.dmu(sv - delta, c_of(sv - delta))) / (2.0 * delta);
  hess(1, 0) = hess(0, 1);
  hess(1, 1) = -at.sum_h / (sv * sv);
  const Eigen::Matrix2d info = -hess;
  const Eigen::LLT<Eigen::Matrix2d> llt(info);
  a.asset_vol_annual = sv;
  a.drift_annual = mu;
  a.log_likelihood = at.value(sv, c_hat);
  if (llt.info() != Eigen::Success || !info.allFinite()) {
    a.status = EstimateStatus::singular_information;
    a.message = "the observed information matrix is not positive definite: no standard errors";
    return;
  }
  const Eigen::Matrix2d cov = llt.solve(Eigen::Matrix2d::Identity());
  const double slope = set_drift_used(hv, options, settings, a);
  fill_series(hv, sv, a.drift_used, ws);
  set_last_day(hv, ws, a);
  set_mle_intervals(hv, settings, ws, sv, mu, slope, cov, a);
  a.status = EstimateStatus::converged;
  a.message = "";
}

void run_naive(const EquityHistoryView& hv, const AssetDynamicsOptions& options,
               const HistorySettings& settings, HistoryWorkspace& ws, AssetDynamics& a) noexcept {
  // r_prev: the equity return over the window as a simple annual return; equal to the previous
  // year's return E_n / E_0 - 1 when the window is one year (Bharath and Shumway 2008). It is the
  // method's drift estimate; DD uses it through the same drift rule as the other methods.
  a.drift_annual = std::expm1(a.equity_vol.mean_log_return_annual);
  set_drift_used(hv, options, settings, a);
  const double r_prev = a.drift_used;
  for (std::size_t t = 0; t < hv.equity_value.size(); ++t) {
    const NaiveDistance d = naive_distance_to_default(hv.equity_value[t], hv.default_point[t],
                                                      a.equity_vol_used, r_prev, hv.horizon_years);
    ws.asset_value[t] = d.asset_value;
    ws.distance_to_default[t] = d.distance_to_default;
    ws.pd[t] = d.pd;
  }
  const std::size_t last = hv.equity_value.size() - 1;
  const NaiveDistance d = naive_distance_to_default(hv.equity_value[last], hv.default_point[last],
                                                    a.equity_vol_used, r_prev, hv.horizon_years);
  a.asset_vol_annual = d.asset_vol_annual;
  set_last_day(hv, ws, a);
  a.status = EstimateStatus::converged;
  a.message = "";
}

}  // namespace

HistoryCheck validate(const EquityHistoryView& h, const HistorySettings& s) noexcept {
  const auto bad = [](const char* m, std::size_t i = kNoIndex) {
    return HistoryCheck{EstimateStatus::invalid_input, m, i};
  };
  if (!(s.trading_days_per_year > 0.0) || !std::isfinite(s.trading_days_per_year))
    return bad("history.trading_days_per_year must be positive");
  if (!(s.ewma_decay > 0.0 && s.ewma_decay < 1.0)) return bad("history.ewma_decay must lie in (0, 1)");
  if (!(s.iteration_tolerance > 0.0)) return bad("history.iteration_tolerance must be positive");
  if (s.max_iterations < 1) return bad("history.max_iterations must be at least 1");
  if (!(s.confidence_level > 0.0 && s.confidence_level < 1.0))
    return bad("history.confidence_level must lie in (0, 1)");
  if (s.min_observations < 1) return bad("history.min_observations must be at least 1");
  if (!(s.drift_shrinkage >= 0.0 && s.drift_shrinkage <= 1.0))
    return bad("history.drift_shrinkage must lie in [0, 1]");
  if (!(s.drift_cap >= 0.0 && s.drift_cap <= 10.0)) return bad("history.drift_cap must lie in [0, 10]");
  const std::size_t n = h.equity_value.size();
  if (h.default_point.size() != n || h.trading_day.size() != n)
    return bad("equity values, default points and trading days differ in length");
  if (!std::isfinite(h.risk_free_rate_cc) || h.risk_free_rate_cc < -1.0 || h.risk_free_rate_cc > 1.0)
    return bad("rate must be a continuously compounded decimal in [-1, 1]");
  if (!(h.horizon_years > 0.0) || !std::isfinite(h.horizon_years)) return bad("horizon must be positive");
  for (std::size_t t = 0; t < n; ++t) {
    if (!(h.equity_value[t] > 0.0) || !std::isfinite(h.equity_value[t]))
      return bad("equity value must be positive and finite", t);
    if (!(h.default_point[t] > 0.0) || !std::isfinite(h.default_point[t]))
      return bad("default point must be positive and finite", t);
    if (t > 0 && h.trading_day[t] <= h.trading_day[t - 1])
      return bad("trading days must be strictly increasing", t);
  }
  if (n < 3 || n < static_cast<std::size_t>(s.min_observations)) {
    return {EstimateStatus::too_short, "fewer observations than history.min_observations (and at least 3)",
            kNoIndex};
  }
  return {};
}

EquityVolEstimate estimate_equity_vol(const EquityHistoryView& h, const HistorySettings& settings) noexcept {
  EquityVolEstimate out;
  if (!validate(h, settings).ok()) return out;
  const std::size_t n = h.equity_value.size();
  double sum_r = 0.0;
  double sum_h = 0.0;
  const double per_year = settings.trading_days_per_year;
  for (std::size_t t = 1; t < n; ++t) {
    sum_r += std::log(h.equity_value[t] / h.equity_value[t - 1]);
    sum_h += static_cast<double>(h.trading_day[t] - h.trading_day[t - 1]) / per_year;
  }
  out.returns = static_cast<int>(n - 1);
  out.years = sum_h;
  out.mean_log_return_annual = sum_r / sum_h;
  double q = 0.0;
  double ewma_num = 0.0;
  double ewma_den = 0.0;
  double w = 1.0;  // newest return first
  for (std::size_t t = n - 1; t >= 1; --t) {
    const double days = static_cast<double>(h.trading_day[t] - h.trading_day[t - 1]);
    const double hy = days / per_year;
    const double r = std::log(h.equity_value[t] / h.equity_value[t - 1]);
    const double d = r - out.mean_log_return_annual * hy;
    q += d * d / hy;
    ewma_num += w * r * r / days;
    ewma_den += w;
    w *= settings.ewma_decay;
  }
  out.simple_annual = std::sqrt(q / static_cast<double>(n - 2));
  out.ewma_annual = std::sqrt(per_year * ewma_num / ewma_den);
  return out;
}

AssetDynamics estimate_asset_dynamics(const EquityHistoryView& h, const AssetDynamicsOptions& options,
                                      const HistorySettings& settings, HistoryWorkspace& ws) noexcept {
  AssetDynamics a;
  a.method = options.method;
  const HistoryCheck check = validate(h, settings);
  if (!check.ok()) {
    a.status = check.status;
    a.message = check.message;
    a.bad_index = check.index;
    return a;
  }
  const bool mle = options.method == HistoryMethod::mle;
  a.asset_vol_se = a.drift_se = mle ? 0.0 : kNaN;
  a.asset_vol_lo = a.asset_vol_hi = a.drift_lo = a.drift_hi = kNaN;
  a.dd_se = a.dd_lo = a.dd_hi = a.pd_lo = a.pd_hi = kNaN;
  a.log_likelihood = kNaN;
  a.equity_vol = estimate_equity_vol(h, settings);
  a.equity_vol_used =
      options.equity_vol == VolEstimator::ewma ? a.equity_vol.ewma_annual : a.equity_vol.simple_annual;
  if (!(a.equity_vol_used > 0.0)) {
    a.status = EstimateStatus::invalid_input;
    a.message = "the equity values do not vary: equity volatility is zero";
    return a;
  }
  prepare(h, settings, ws);
  switch (options.method) {
    case HistoryMethod::iterative:
      run_iterative(h, options, settings, ws, a);
      break;
    case HistoryMethod::mle:
      run_mle(h, options, settings, ws, a);
      break;
    case HistoryMethod::naive:
      run_naive(h, options, settings, ws, a);
      break;
  }
  return a;
}

double asset_value_from_equity(double equity_value, double default_point, double risk_free_rate_cc,
                               double horizon_years, double asset_vol_annual, double guess) noexcept {
  const auto positive = [](double x) { return x > 0.0 && std::isfinite(x); };
  if (!positive(equity_value) || !positive(default_point) || !positive(horizon_years) ||
      !positive(asset_vol_annual) || !std::isfinite(risk_free_rate_cc)) {
    return kNaN;
  }
  const double k = default_point * std::exp(-risk_free_rate_cc * horizon_years);
  double nd1 = 0.0;
  double d1 = 0.0;
  return invert_call(equity_value, k, asset_vol_annual * std::sqrt(horizon_years), guess, nd1, d1);
}

NaiveDistance naive_distance_to_default(double e, double f, double se, double r_prev, double t) noexcept {
  NaiveDistance d;
  d.asset_value = e + f;
  d.debt_vol_annual = 0.05 + 0.25 * se;
  d.asset_vol_annual = e / (e + f) * se + f / (e + f) * d.debt_vol_annual;
  d.distance_to_default =
      (std::log((e + f) / f) + (r_prev - 0.5 * d.asset_vol_annual * d.asset_vol_annual) * t) /
      (d.asset_vol_annual * std::sqrt(t));
  d.pd = norm_sf(d.distance_to_default);
  return d;
}

double two_sided_normal_quantile(double level) noexcept {
  if (!(level > 0.0 && level < 1.0)) return kNaN;
  return std::numbers::sqrt2 * boost::math::erf_inv(level, NoThrowPolicy());
}

}  // namespace firmcall
