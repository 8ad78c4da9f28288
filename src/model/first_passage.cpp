// Black and Cox (1976) first-passage model. See include/firmcall/first_passage.hpp.
//
// Numerical notes. The reflected term (H0/V)^(2k) F(H0^2/V) is formed piece by piece in logs:
// for small asset volatility |k| is large and (H0/V)^(2k) alone can overflow while the product with
// the normal tail is tiny. ln N(x) comes from log_norm_cdf, which stays finite where N(x)
// underflows. The first-passage probability's second term exp(-2 nu x0/sV^2) N(.) is formed the
// same way.
#include "firmcall/model/first_passage.hpp"

#include <algorithm>
#include <boost/math/tools/roots.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>

#include "firmcall/model/math_policy.hpp"
#include "firmcall/model/normal.hpp"

namespace firmcall {

namespace {
constexpr double kLogSqrt2Pi = 0.91893853320467274178;  // ln sqrt(2 pi)

double log_norm_pdf(double x) noexcept {
  return -0.5 * x * x - kLogSqrt2Pi;
}
}  // namespace

double log_norm_cdf(double x) noexcept {
  if (x > 0.0) return std::log1p(-norm_sf(x));
  if (x > -37.0) return std::log(norm_cdf(x));
  // N(x) = phi(x)/|x| (1 - 1/x^2 + 3/x^4 - 15/x^6 + 105/x^8 - ...) for x -> -inf; at |x| >= 37 the
  // first omitted term is below 1e-13 in relative terms.
  const double z = 1.0 / (x * x);
  const double series = 1.0 - z * (1.0 - z * (3.0 - z * (15.0 - 105.0 * z)));
  return log_norm_pdf(x) - std::log(-x) + std::log(series);
}

const char* barrier_problem(const Barrier& b) noexcept {
  if (!std::isfinite(b.default_point_ratio) || !(b.default_point_ratio > 0.0)) {
    return "barrier ratio must be positive and finite";
  }
  if (!(std::fabs(b.growth_rate_cc) <= 1.0)) return "barrier growth must lie in [-1, 1]";
  return "";
}

std::string_view to_string(FirstPassageStatus status) noexcept {
  switch (status) {
    case FirstPassageStatus::converged:
      return "converged";
    case FirstPassageStatus::max_iterations:
      return "max_iterations";
    case FirstPassageStatus::not_bracketed:
      return "not_bracketed";
    case FirstPassageStatus::invalid_input:
      return "invalid_input";
  }
  return "";
}

BarrierCallValue down_and_out_call(const DownAndOutCall& o) noexcept {
  const double v = o.asset_value;
  const double s = o.asset_vol_annual;
  const double h0 = o.barrier;
  const double t = o.maturity_years;
  if (!(v > h0)) return {};
  const double st = s * std::sqrt(t);
  const double log_kd = std::log(o.strike) - o.risk_free_rate_cc * t;  // ln(K e^(-rT))
  const double kd = std::exp(log_kd);
  const double kg = o.strike * std::exp(-o.barrier_growth_cc * t);  // strike in units of Y = V e^(-gt)
  const double l = std::max(kg, h0);
  // (L e^(gT) - K) e^(-rT): positive when the barrier at T lies above the strike.
  const double excess =
      h0 > kg ? (h0 * std::exp(o.barrier_growth_cc * t) - o.strike) * std::exp(-o.risk_free_rate_cc * t)
              : 0.0;
  const double carry = o.risk_free_rate_cc - o.barrier_growth_cc;
  const double shift = (carry + 0.5 * s * s) * t;

  // F(V) and F'(V).
  const double d1 = (std::log(v / l) + shift) / st;
  const double d2 = d1 - st;
  double f;
  if (d2 > 0.0) {
    f = (v - kd) - v * norm_sf(d1) + kd * norm_sf(d2);  // accurate deep in the money
  } else {
    f = v * norm_cdf(d1) - kd * norm_cdf(d2);
  }
  double f_prime = norm_cdf(d1);
  if (excess > 0.0) f_prime += excess * norm_pdf(d2) / (v * st);

  // The reflected term p F(V*), p = (H0/V)^(2k), V* = H0^2/V, in three pieces:
  //   a1 = p V* N(d1*),  a2 = p K e^(-rT) N(d2*),  a3 = p (L e^(gT) - K) e^(-rT) phi(d2*) / (sV sqrt T).
  const double k2 = carry / (s * s) - 0.5;
  const double log_h_over_v = std::log(h0 / v);  // < 0
  const double log_p = 2.0 * k2 * log_h_over_v;
  const double log_v_star = std::log(h0) + log_h_over_v;
  const double d1s = (std::log(h0 / l) + log_h_over_v + shift) / st;
  const double d2s = d1s - st;
  const double a1 = std::exp(log_p + log_v_star + log_norm_cdf(d1s));
  const double a2 = std::exp(log_p + log_kd + log_norm_cdf(d2s));
  const double a3 = excess > 0.0 ? std::exp(log_p + std::log(excess) + log_norm_pdf(d2s)) / st : 0.0;

  BarrierCallValue out;
  out.value = f - (a1 - a2);
  out.delta = f_prime + ((2.0 * k2 + 1.0) * a1 - 2.0 * k2 * a2 + a3) / v;
  return out;
}

FirstPassageProbability first_passage_probability(const FirstPassagePath& p, double t) noexcept {
  if (!(t > 0.0)) return {0.0, 1.0};
  if (!(p.asset_value > p.barrier)) return {1.0, 0.0};
  const double s = p.asset_vol_annual;
  const double x0 = std::log(p.asset_value / p.barrier);
  const double nu = p.drift_annual - p.barrier_growth_cc - 0.5 * s * s;
  const double st = s * std::sqrt(t);
  const double a = (x0 + nu * t) / st;
  const double c = (x0 - nu * t) / st;
  // exp(-2 nu x0 / sV^2) N(-c), in logs: the factor may overflow where N(-c) underflows.
  const double reflected = std::exp(-2.0 * nu * x0 / (s * s) + log_norm_cdf(-c));
  const double pd = norm_sf(a) + reflected;
  if (pd <= 0.5) return {pd, 1.0 - pd};
  return {std::min(pd, 1.0), std::max(0.0, norm_cdf(a) - reflected)};
}

BarrierCallValue first_passage_equity(const FirstPassageInputs& in, double asset_value,
                                      double asset_vol_annual) noexcept {
  return down_and_out_call({.asset_value = asset_value,
                            .asset_vol_annual = asset_vol_annual,
                            .strike = in.merton.default_point,
                            .barrier = in.barrier.default_point_ratio * in.merton.default_point,
                            .barrier_growth_cc = in.barrier.growth_rate_cc,
                            .risk_free_rate_cc = in.merton.risk_free_rate_cc,
                            .maturity_years = in.merton.horizon_years});
}

FirstPassagePath path_of(const FirstPassageInputs& in, const FirstPassageSolution& s) noexcept {
  return {.asset_value = s.asset_value,
          .asset_vol_annual = s.asset_vol_annual,
          .drift_annual = in.merton.drift_annual,
          .barrier = in.barrier.default_point_ratio * in.merton.default_point,
          .barrier_growth_cc = in.barrier.growth_rate_cc};
}

namespace {

// The problem as the iterations see it; fixed for one obligor.
struct Problem {
  const FirstPassageInputs* in;
  double e;      // equity value E
  double se;     // equity volatility sE
  double scale;  // E + DP e^(-rT), the scale of the equity residual
  double log_h;  // ln H0
};

// Scaled residuals F1 = DOC/E - 1, F2 = DOC' sV V / (sE E) - 1 at u = ln V, y = ln sV.
struct Eval {
  double f1 = 0.0, f2 = 0.0;
};

Eval evaluate(const Problem& p, double u, double y) noexcept {
  const double v = std::exp(u);
  const double s = std::exp(y);
  const BarrierCallValue c = first_passage_equity(*p.in, v, s);
  return {c.value / p.e - 1.0, c.delta * s * v / (p.se * p.e) - 1.0};
}

double residual_of(const Problem& p, const Eval& ev) noexcept {
  const double r = std::max(std::fabs(ev.f1) * p.e / p.scale, std::fabs(ev.f2));
  return std::isfinite(r) ? r : std::numeric_limits<double>::infinity();
}

double merit_of(const Eval& ev) noexcept {
  const double m = ev.f1 * ev.f1 + ev.f2 * ev.f2;
  return std::isfinite(m) ? m : std::numeric_limits<double>::infinity();
}

constexpr double kMaxStep = 1.0;      // cap on a Newton step in log units
constexpr double kDiffStep = 1e-5;    // central-difference step in log units
constexpr double kStepFloor = 1e-14;  // a step this small is at the rounding floor
constexpr double kSettled = 1e-3;     // stop once the residual is this fraction of the tolerance
constexpr int kMaxHalvings = 60;

// Damped Newton from (u, y); returns the number of Newton steps and leaves the last iterate.
int newton(const Problem& p, double& u, double& y, const MertonSolveOptions& o) noexcept {
  Eval ev = evaluate(p, u, y);
  double merit = merit_of(ev);
  int steps = 0;
  while (steps < o.max_newton_iterations && merit > 0.0 && std::isfinite(merit)) {
    if (residual_of(p, ev) <= kSettled * o.residual_tolerance) break;
    ++steps;
    // Central differences (forward in u when the barrier is within reach of the step).
    const bool central_u = u - kDiffStep > p.log_h + kDiffStep;
    const Eval up = evaluate(p, u + kDiffStep, y);
    const Eval um = central_u ? evaluate(p, u - kDiffStep, y) : ev;
    const double hu = central_u ? 2.0 * kDiffStep : kDiffStep;
    const Eval yp = evaluate(p, u, y + kDiffStep);
    const Eval ym = evaluate(p, u, y - kDiffStep);
    const double j11 = (up.f1 - um.f1) / hu;
    const double j21 = (up.f2 - um.f2) / hu;
    const double j12 = (yp.f1 - ym.f1) / (2.0 * kDiffStep);
    const double j22 = (yp.f2 - ym.f2) / (2.0 * kDiffStep);
    const double det = j11 * j22 - j12 * j21;
    double du = (-ev.f1 * j22 + ev.f2 * j12) / det;
    double dy = (-ev.f2 * j11 + ev.f1 * j21) / det;
    if (!std::isfinite(du) || !std::isfinite(dy)) break;
    const double big = std::max(std::fabs(du), std::fabs(dy));
    if (big > kMaxStep) {
      du *= kMaxStep / big;
      dy *= kMaxStep / big;
    }
    double lambda = 1.0;
    bool moved = false;
    for (int h = 0; h < kMaxHalvings; ++h, lambda *= 0.5) {
      const double ut = u + lambda * du;
      const double yt = y + lambda * dy;
      if (!(ut > p.log_h)) continue;  // the solution lies above the barrier
      const Eval et = evaluate(p, ut, yt);
      const double mt = merit_of(et);
      if (mt < merit) {
        moved = true;
        u = ut;
        y = yt;
        ev = et;
        merit = mt;
        break;
      }
    }
    if (!moved || lambda * std::max(std::fabs(du), std::fabs(dy)) < kStepFloor) break;
  }
  return steps;
}

// Bracketed nested 1-D solve. Inner: for a given sV, DOC is increasing in V and is 0 at the
// barrier, so V(sV) solves DOC = E on x = ln(V/H0) in (0, x_hi] (x_hi grown until DOC > E). Outer:
// g(sV) = DOC'(V(sV)) sV V(sV) / (sE E) - 1 need not be monotone (when E < H0 - DP e^(-rT), g grows
// without bound as sV -> 0), so a log-spaced scan from sE E / (E + K + H0) / 1000 to 64 sE looks
// for the first sign change, which TOMS 748 then refines. Returns the status and (u, y) there.
FirstPassageStatus bracketed(const Problem& p, int max_evals, double& u_out, double& y_out,
                             int& evals) noexcept {
  const auto tol = boost::math::tools::eps_tolerance<double>(std::numeric_limits<double>::digits - 2);
  bool inner_ok = true;
  const double h0 = std::exp(p.log_h);
  const auto log_v_for = [&](double s) {
    const double y = std::log(s);
    const auto f = [&](double x) { return evaluate(p, p.log_h + x, y).f1; };
    double hi = std::log1p(p.scale / h0);
    double fhi = f(hi);
    ++evals;
    for (int i = 0; i < 60 && !(fhi > 0.0) && hi < 350.0; ++i) {
      hi *= 2.0;
      fhi = f(hi);
      ++evals;
    }
    if (!(fhi > 0.0)) {
      inner_ok = false;
      return p.log_h + hi;
    }
    const double flo = -1.0;  // DOC = 0 at the barrier
    std::uintmax_t it = static_cast<std::uintmax_t>(max_evals);
    const auto r = boost::math::tools::toms748_solve(f, 0.0, hi, flo, fhi, tol, it, NoThrowPolicy());
    evals += static_cast<int>(it);
    if (it >= static_cast<std::uintmax_t>(max_evals)) inner_ok = false;
    return p.log_h + 0.5 * (r.first + r.second);
  };
  const auto g = [&](double s) { return evaluate(p, log_v_for(s), std::log(s)).f2; };

  constexpr int kScan = 48;
  const double s_min = 1e-3 * p.se * p.e / (p.scale + h0);
  const double s_max = 64.0 * p.se;
  const double factor = std::pow(s_max / s_min, 1.0 / (kScan - 1));
  double lo = s_min;
  inner_ok = true;
  double glo = g(lo);
  bool lo_ok = inner_ok && std::isfinite(glo);
  double hi = lo, ghi = glo;
  bool found = false;
  for (int i = 1; i < kScan && !found; ++i) {
    hi = s_min * std::pow(factor, i);
    inner_ok = true;
    ghi = g(hi);
    const bool hi_ok = inner_ok && std::isfinite(ghi);
    if (lo_ok && hi_ok && (glo < 0.0) != (ghi < 0.0)) {
      found = true;
    } else {
      lo = hi;
      glo = ghi;
      lo_ok = hi_ok;
    }
  }
  if (!found) return FirstPassageStatus::not_bracketed;
  inner_ok = true;
  std::uintmax_t it = static_cast<std::uintmax_t>(max_evals);
  const auto r = boost::math::tools::toms748_solve(g, lo, hi, glo, ghi, tol, it, NoThrowPolicy());
  evals += static_cast<int>(it);
  const bool outer_ok = it < static_cast<std::uintmax_t>(max_evals) && inner_ok;
  const double s = 0.5 * (r.first + r.second);
  inner_ok = true;
  u_out = log_v_for(s);
  y_out = std::log(s);
  return outer_ok && inner_ok ? FirstPassageStatus::converged : FirstPassageStatus::max_iterations;
}

Problem problem_of(const FirstPassageInputs& in) noexcept {
  const MertonInputs& m = in.merton;
  const double kd = m.default_point * std::exp(-m.risk_free_rate_cc * m.horizon_years);
  return {&in, m.equity_value, m.equity_vol_annual, m.equity_value + kd,
          std::log(in.barrier.default_point_ratio * m.default_point)};
}

}  // namespace

double first_passage_residual(const FirstPassageInputs& in, double asset_value,
                              double asset_vol_annual) noexcept {
  const Problem p = problem_of(in);
  return residual_of(p, evaluate(p, std::log(asset_value), std::log(asset_vol_annual)));
}

FirstPassageSolution solve_first_passage(const FirstPassageInputs& in, const MertonSolveOptions& o) noexcept {
  FirstPassageSolution out;
  out.input_check = validate(in.merton);
  if (!out.input_check.ok()) return out;
  out.barrier_check = barrier_problem(in.barrier);
  if (*out.barrier_check != '\0') return out;
  const Problem p = problem_of(in);

  // Start from the Merton solution: the barrier only lowers equity, so V lies at or above it.
  const AssetSolution m = solve_asset(in.merton, o);
  const double h0 = std::exp(p.log_h);
  double v0 = m.usable() ? m.asset_value : p.scale;
  double s0 = m.usable() ? m.asset_vol_annual : p.se * p.e / p.scale;
  if (!(v0 > h0 * 1.0001)) {
    v0 = h0 + p.scale;
    s0 = p.se * p.e / v0;
  }
  double u = std::log(v0);
  double y = std::log(s0);
  out.iterations = newton(p, u, y, o);
  out.method = SolveMethod::newton;
  out.residual = residual_of(p, evaluate(p, u, y));
  if (!(out.residual <= o.residual_tolerance)) {
    double ub = 0.0, yb = 0.0;
    int evals = 0;
    const FirstPassageStatus st = bracketed(p, o.max_fallback_iterations, ub, yb, evals);
    out.iterations += evals;
    out.method = SolveMethod::bracketed;
    if (st == FirstPassageStatus::not_bracketed) {
      out.status = st;
      return out;
    }
    u = ub;
    y = yb;
    out.residual = residual_of(p, evaluate(p, u, y));
    if (st != FirstPassageStatus::converged || !(out.residual <= o.residual_tolerance)) {
      out.status = FirstPassageStatus::max_iterations;
      return out;
    }
  }
  out.asset_value = std::exp(u);
  out.asset_vol_annual = std::exp(y);
  out.status = FirstPassageStatus::converged;
  return out;
}

}  // namespace firmcall
