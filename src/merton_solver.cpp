// Inversion of the Merton (1974) model for (V, sV). See include/firmcall/merton_solver.hpp.
//
// Newton in log variables x = ln(V/K), y = ln sV on the scaled residuals
//   F1 = C(V, sV)/E - 1,   F2 = N(d1) sV V / (sE E) - 1,
// (x is measured from ln K so that ln(V/K), and with it d1, stays exact when V is close to K),
// with the analytic Jacobian (d/dx = V d/dV, d/dy = sV d/dsV; dC/dV = N(d1), dC/dsV = V phi(d1) sqrt(T),
// dd1/dV = 1/(V sV sqrt(T)), dd1/dsV = -d2/sV):
//   dF1/dx = V N(d1)/E                       dF1/dy = V phi(d1) sV sqrt(T)/E
//   dF2/dx = V (sV N(d1) + phi(d1)/sqrt(T))/(sE E)
//   dF2/dy = sV V (N(d1) - phi(d1) d2)/(sE E)
// Steps are capped, projected into the box that holds the unique solution, and halved until
// |F|^2 decreases (backtracking).
#include "firmcall/merton_solver.hpp"

#include <algorithm>
#include <boost/math/policies/policy.hpp>
#include <boost/math/tools/roots.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>

#include "firmcall/normal.hpp"
#include "firmcall/vector_math.hpp"

namespace firmcall {

std::string_view to_string(SolveStatus status) noexcept {
  switch (status) {
    case SolveStatus::converged:
      return "converged";
    case SolveStatus::max_iterations:
      return "max_iterations";
    case SolveStatus::invalid_input:
      return "invalid_input";
  }
  return "";
}

std::string_view to_string(SolveMethod method) noexcept {
  switch (method) {
    case SolveMethod::none:
      return "none";
    case SolveMethod::newton:
      return "newton";
    case SolveMethod::bracketed:
      return "bracketed";
  }
  return "";
}

namespace {

// The problem in the form the iterations use; fixed for one obligor.
struct Problem {
  double e;         // equity value E
  double se;        // equity volatility sE
  double k;         // discounted default point K = DP exp(-rT)
  double sqrt_t;    // sqrt(T)
  double e_plus_k;  // E + K, the scale of the equity residual
};

// Residuals and the pieces the Jacobian needs, at one (V, sV).
struct Eval {
  double f1, f2;  // scaled residuals (see file comment)
  double v, sv, d1, d2, nd1;
  double phi = 0.0;  // norm_pdf(d1); set by evaluate_block()
};

// x = ln(V/K), y = ln sV.
inline Eval evaluate(const Problem& p, double x, double y) noexcept {
  Eval ev;
  const double growth = std::expm1(x);  // V/K - 1, exact also when V is close to K
  const double v_minus_k = p.k * growth;
  ev.v = p.k + v_minus_k;
  ev.sv = std::exp(y);
  const double st = ev.sv * p.sqrt_t;
  ev.d1 = x / st + 0.5 * st;
  ev.d2 = ev.d1 - st;
  double call;
  if (ev.d2 > 0.0) {
    // Call = (V - K) + put, with V - K = K expm1(x): accurate when the call is deep in the money.
    const double sf1 = norm_sf(ev.d1);
    ev.nd1 = 1.0 - sf1;
    call = v_minus_k + (p.k * norm_sf(ev.d2) - ev.v * sf1);
  } else {
    ev.nd1 = norm_cdf(ev.d1);
    call = ev.v * ev.nd1 - p.k * norm_cdf(ev.d2);
  }
  ev.f1 = call / p.e - 1.0;
  ev.f2 = ev.nd1 * ev.sv * ev.v / (p.se * p.e) - 1.0;
  return ev;
}

inline double residual_of(const Problem& p, const Eval& ev) noexcept {
  return std::max(std::fabs(ev.f1) * p.e / p.e_plus_k, std::fabs(ev.f2));
}

inline double merit_of(const Eval& ev) noexcept {
  return ev.f1 * ev.f1 + ev.f2 * ev.f2;
}

using NoThrowPolicy = boost::math::policies::policy<
    boost::math::policies::domain_error<boost::math::policies::ignore_error>,
    boost::math::policies::evaluation_error<boost::math::policies::ignore_error>>;

// Bracketed nested 1-D solve: for a given sV, V(sV) solves C(V, sV) = E on (E, E + K) (C is
// increasing in V, C(E) < E < C(E + K)), searched as x = ln(V/K) on [x_lo, x_hi]; then
// g(sV) = N(d1) sV V(sV) - sE E changes sign on (sE E/(E + K), sE). Returns false if either
// level ran out of evaluations; x_out is ln(V/K) at the solution.
bool solve_bracketed(const Problem& p, double x_lo, double x_hi, int max_evals, double& x_out, double& sv_out,
                     int& evals) noexcept {
  const auto tol = boost::math::tools::eps_tolerance<double>(std::numeric_limits<double>::digits - 2);
  bool inner_ok = true;
  const auto log_moneyness_for = [&](double sv) {
    const double st = sv * p.sqrt_t;
    const auto f = [&](double x) {
      const double d1 = x / st + 0.5 * st;
      const double d2 = d1 - st;
      const double v = p.k * std::exp(x);
      if (d2 > 0.0) return p.k * std::expm1(x) + (p.k * norm_sf(d2) - v * norm_sf(d1)) - p.e;
      return v * norm_cdf(d1) - p.k * norm_cdf(d2) - p.e;
    };
    const double lo = x_lo;
    const double hi = x_hi;
    const double flo = f(lo);
    const double fhi = f(hi);
    if (!(flo < 0.0)) return lo;  // call price rounds to V: the root is at the lower end
    if (!(fhi > 0.0)) return hi;
    std::uintmax_t it = static_cast<std::uintmax_t>(max_evals);
    const auto r = boost::math::tools::toms748_solve(f, lo, hi, flo, fhi, tol, it, NoThrowPolicy());
    evals += static_cast<int>(it);
    if (it >= static_cast<std::uintmax_t>(max_evals)) inner_ok = false;
    return 0.5 * (r.first + r.second);
  };
  const auto g = [&](double sv) {
    const double x = log_moneyness_for(sv);
    const double st = sv * p.sqrt_t;
    const double d1 = x / st + 0.5 * st;
    return norm_cdf(d1) * sv * p.k * std::exp(x) / (p.se * p.e) - 1.0;
  };
  const double lo = p.se * p.e / p.e_plus_k;
  const double hi = p.se;
  const double glo = g(lo);
  const double ghi = g(hi);
  double sv;
  if (!(glo < 0.0)) {
    sv = lo;
  } else if (!(ghi > 0.0)) {
    sv = hi;
  } else {
    std::uintmax_t it = static_cast<std::uintmax_t>(max_evals);
    const auto r = boost::math::tools::toms748_solve(g, lo, hi, glo, ghi, tol, it, NoThrowPolicy());
    evals += static_cast<int>(it);
    if (it >= static_cast<std::uintmax_t>(max_evals)) return false;
    sv = 0.5 * (r.first + r.second);
  }
  x_out = log_moneyness_for(sv);
  sv_out = sv;
  return inner_ok;
}

}  // namespace

double solve_residual(const MertonInputs& in, double asset_value, double asset_vol_annual) noexcept {
  const double k = in.default_point * std::exp(-in.risk_free_rate_cc * in.horizon_years);
  const Problem p{in.equity_value, in.equity_vol_annual, k, std::sqrt(in.horizon_years), in.equity_value + k};
  return residual_of(p, evaluate(p, std::log(asset_value / k), std::log(asset_vol_annual)));
}

namespace {

constexpr double kMaxStep = 2.0;      // cap on a Newton step in log units
constexpr double kStepFloor = 1e-13;  // a step this small means the next would be below rounding
constexpr double kSettled = 1e-4;     // stop once the residual is this fraction of the tolerance
constexpr int kMaxHalvings = 60;

// Residuals at one point per lane, p[j] at (x[j], y[j]) into out[j] (also norm_pdf(d1)): the same
// arithmetic as evaluate(), with the block functions. Each lane depends only on its own values.
void evaluate_block(const Problem* const* p, const double* x, const double* y, Eval* out) noexcept {
  constexpr std::size_t B = vmath::kBlock;
  double growth[B], sv[B], a1[B], a2[B], c1[B], c2[B], q[B], eq[B];
  vmath::expm1(x, growth);
  vmath::exp(y, sv);
  for (std::size_t j = 0; j < B; ++j) {
    Eval& ev = out[j];
    const double st = sv[j] * p[j]->sqrt_t;
    ev.sv = sv[j];
    ev.d1 = x[j] / st + 0.5 * st;
    ev.d2 = ev.d1 - st;
    // d2 > 0: upper tails N(-d1), N(-d2) (norm_sf); else N(d1), N(d2) (norm_cdf).
    const double sign = ev.d2 > 0.0 ? 1.0 : -1.0;
    a1[j] = (sign * ev.d1) * kInvSqrt2;
    a2[j] = (sign * ev.d2) * kInvSqrt2;
    q[j] = -0.5 * ev.d1 * ev.d1;
  }
  vmath::erfc(a1, c1);
  vmath::erfc(a2, c2);
  vmath::exp(q, eq);
  for (std::size_t j = 0; j < B; ++j) {
    const Problem& pj = *p[j];
    Eval& ev = out[j];
    const double v_minus_k = pj.k * growth[j];
    ev.v = pj.k + v_minus_k;
    // Selected without branches (the lanes disagree often): the tails N(-d1), N(-d2) when d2 > 0.
    const bool upper = ev.d2 > 0.0;
    const double h1 = 0.5 * c1[j];
    const double h2 = 0.5 * c2[j];
    ev.nd1 = upper ? 1.0 - h1 : h1;
    const double call = upper ? v_minus_k + (pj.k * h2 - ev.v * h1) : ev.v * h1 - pj.k * h2;
    ev.f1 = call / pj.e - 1.0;
    ev.f2 = ev.nd1 * ev.sv * ev.v / (pj.se * pj.e) - 1.0;
    ev.phi = kInvSqrt2Pi * eq[j];
  }
}

// One obligor's problem and the box that holds its solution, prepared eight at a time.
struct Prepared {
  Problem p;
  double x_lo, x_hi, y_lo, y_hi;  // x = ln(V/K), y = ln sV
  Eval start;                     // residuals at the start point (x_hi, y_lo)
};

// Prepares in[idx[j]] for j < count (count <= kBlock) into out[j]; the logarithms and the
// discount factor go through the block functions, the rare overflow cases through the C library.
void prepare_block(const MertonInputs* in, const std::size_t* idx, std::size_t count,
                   Prepared* out) noexcept {
  constexpr std::size_t B = vmath::kBlock;
  double neg_rt[B], disc[B], ratio[B], log_ratio[B], log1p_ratio[B], vol_lo[B], log_vol_lo[B], vol_hi[B],
      log_vol_hi[B];
  for (std::size_t j = 0; j < B; ++j) {
    const MertonInputs& m = in[idx[j < count ? j : 0]];
    neg_rt[j] = -m.risk_free_rate_cc * m.horizon_years;
  }
  vmath::exp(neg_rt, disc);
  for (std::size_t j = 0; j < B; ++j) {
    const MertonInputs& m = in[idx[j < count ? j : 0]];
    Problem& p = out[j].p;
    const double k = m.default_point * disc[j];
    p = Problem{m.equity_value, m.equity_vol_annual, k, std::sqrt(m.horizon_years), m.equity_value + k};
    const double e_over_k = p.e / k;
    ratio[j] = std::isfinite(e_over_k) ? e_over_k : 1.0;
    vol_lo[j] = p.se * p.e / p.e_plus_k;
    vol_hi[j] = p.se;
  }
  vmath::log(ratio, log_ratio);
  vmath::log1p(ratio, log1p_ratio);
  vmath::log(vol_lo, log_vol_lo);
  vmath::log(vol_hi, log_vol_hi);
  for (std::size_t j = 0; j < count; ++j) {
    Prepared& q = out[j];
    const double e_over_k = q.p.e / q.p.k;
    q.x_lo = std::isfinite(e_over_k) && e_over_k > 0.0 ? log_ratio[j] : std::log(q.p.e) - std::log(q.p.k);
    q.x_hi = std::isfinite(e_over_k) ? log1p_ratio[j] : q.x_lo + std::log1p(q.p.k / q.p.e);
    q.y_lo = log_vol_lo[j];
    q.y_hi = log_vol_hi[j];
  }
  // The start points, V0 = E + K and sV0 = sE E / V0, evaluated together.
  const Problem* problems[B];
  double xs[B], ys[B];
  Eval evals[B];
  for (std::size_t j = 0; j < B; ++j) {
    const Prepared& q = out[j < count ? j : 0];
    problems[j] = &q.p;
    xs[j] = q.x_hi;
    ys[j] = q.y_lo;
  }
  evaluate_block(problems, xs, ys, evals);
  for (std::size_t j = 0; j < count; ++j) out[j].start = evals[j];
}

// The damped Newton iteration for one obligor as a resumable state machine: next_point() names
// the next line-search trial, take() advances with its residuals.
// solve_asset_batch() runs up to eight lanes, evaluating their points together; an obligor's
// arithmetic never depends on the other lanes, so solve_asset() (a batch of one) returns the same.
struct NewtonLane {
  Problem p;
  double x_lo, x_hi, y_lo, y_hi;  // box holding the solution: x = ln(V/K), y = ln sV
  double x, y;                    // current iterate
  Eval ev;                        // residuals at (x, y)
  double merit = 0.0;
  double dx = 0.0, dy = 0.0, lambda = 1.0;
  int halvings = 0;
  int iterations = 0;
  bool done = false;

  void begin(const Prepared& q, const MertonSolveOptions& o) noexcept {
    p = q.p;
    x_lo = q.x_lo;
    x_hi = q.x_hi;
    y_lo = q.y_lo;
    y_hi = q.y_hi;
    x = x_hi;  // V0 = E + K
    y = y_lo;  // sV0 = sE E / V0
    ev = q.start;
    merit = merit_of(ev);
    iterations = 0;
    done = false;
    plan_step(o);
  }

  // The point to evaluate next; false (and done) when the line search cannot move any more.
  bool next_point(double& xt, double& yt) noexcept {
    xt = std::clamp(x + lambda * dx, x_lo, x_hi);
    yt = std::clamp(y + lambda * dy, y_lo, y_hi);
    if (xt == x && yt == y) {
      done = true;
      return false;
    }
    return true;
  }

  // Advances with the residuals et at the point next_point() gave.
  void take(const Eval& et, double xt, double yt, const MertonSolveOptions& o) noexcept {
    // One backtracking trial on |F|^2, projected into the box.
    const double mt = merit_of(et);
    if (mt < merit) {
      const double taken = std::max(std::fabs(xt - x), std::fabs(yt - y));
      x = xt;
      y = yt;
      ev = et;
      merit = mt;
      // At the rounding floor, or settled (a further quadratic step would chase rounding).
      if (taken < kStepFloor || residual_of(p, ev) <= kSettled * o.residual_tolerance) {
        done = true;
        return;
      }
      plan_step(o);
      return;
    }
    lambda *= 0.5;
    if (++halvings >= kMaxHalvings) done = true;
  }

  // Newton direction from the analytic Jacobian at the current iterate.
  void plan_step(const MertonSolveOptions& o) noexcept {
    if (iterations >= o.max_newton_iterations || !(merit > 0.0)) {
      done = true;
      return;
    }
    ++iterations;
    const double phi = ev.phi;
    const double inv_e = 1.0 / p.e;
    const double inv_see = 1.0 / (p.se * p.e);
    const double j11 = ev.v * ev.nd1 * inv_e;
    const double j12 = ev.v * phi * ev.sv * p.sqrt_t * inv_e;
    const double j21 = ev.v * (ev.sv * ev.nd1 + phi / p.sqrt_t) * inv_see;
    const double j22 = ev.sv * ev.v * (ev.nd1 - phi * ev.d2) * inv_see;
    const double det = j11 * j22 - j12 * j21;
    dx = (-ev.f1 * j22 + ev.f2 * j12) / det;
    dy = (-ev.f2 * j11 + ev.f1 * j21) / det;
    if (!std::isfinite(dx) || !std::isfinite(dy)) {
      done = true;
      return;
    }
    const double big = std::max(std::fabs(dx), std::fabs(dy));
    if (big > kMaxStep) {
      dx *= kMaxStep / big;
      dy *= kMaxStep / big;
    }
    lambda = 1.0;
    halvings = 0;
  }

  // Result of a finished lane; runs the bracketed fallback when Newton fell short.
  AssetSolution finish(const MertonSolveOptions& o) const noexcept {
    AssetSolution out;
    out.iterations = iterations;
    out.residual = residual_of(p, ev);
    if (out.residual <= o.residual_tolerance) {
      out.asset_value = ev.v;
      out.asset_vol_annual = ev.sv;
      out.status = SolveStatus::converged;
      out.method = SolveMethod::newton;
      return out;
    }
    double xb = 0.0;
    double sv = 0.0;
    int evals = 0;
    const bool ok = solve_bracketed(p, x_lo, x_hi, o.max_fallback_iterations, xb, sv, evals);
    out.iterations = iterations + evals;
    out.method = SolveMethod::bracketed;
    const Eval eb = evaluate(p, xb, std::log(sv));
    out.residual = residual_of(p, eb);
    if (ok && out.residual <= o.residual_tolerance) {
      out.asset_value = eb.v;
      out.asset_vol_annual = sv;
      out.status = SolveStatus::converged;
    } else {
      out.status = SolveStatus::max_iterations;
    }
    return out;
  }
};

}  // namespace

AssetSolution solve_asset(const MertonInputs& in, const MertonSolveOptions& options) noexcept {
  AssetSolution out;
  solve_asset_batch(&in, &out, 1, options);
  return out;
}

void solve_asset_batch(const MertonInputs* in, AssetSolution* out, std::size_t n,
                       const MertonSolveOptions& options) noexcept {
  constexpr std::size_t B = vmath::kBlock;
  // Obligors are validated and prepared eight at a time, then handed to free lanes in order.
  Prepared prepared[B];
  std::size_t prepared_owner[B];
  std::size_t prepared_count = 0, prepared_next = 0;
  std::size_t next = 0;  // next obligor to validate
  const auto load_prepared = [&](NewtonLane& lane, std::size_t& owner) {
    if (prepared_next == prepared_count) {
      prepared_count = prepared_next = 0;
      while (next < n && prepared_count < B) {
        const std::size_t i = next++;
        out[i] = AssetSolution{};
        out[i].input_check = validate(in[i]);
        if (out[i].input_check.ok()) prepared_owner[prepared_count++] = i;
      }
      if (prepared_count == 0) return false;
      prepare_block(in, prepared_owner, prepared_count, prepared);
    }
    lane.begin(prepared[prepared_next], options);
    owner = prepared_owner[prepared_next++];
    return true;
  };
  // Starts the next obligor on a lane; one that needs no step finishes at once. False when none
  // is left.
  const auto take_prepared = [&](NewtonLane& lane, std::size_t& owner) {
    while (true) {
      if (!load_prepared(lane, owner)) return false;
      if (!lane.done) return true;
      out[owner] = lane.finish(options);
    }
  };

  NewtonLane lanes[B];
  std::size_t owner[B];
  bool busy[B] = {};
  // Idle lanes evaluate a harmless fixed point whose results are ignored.
  const Problem idle{1.0, 0.3, 1.0, 1.0, 2.0};
  const Problem* problems[B];
  double xs[B], ys[B];
  Eval evals[B];
  while (true) {
    bool any = false;
    for (std::size_t s = 0; s < B; ++s) {
      if (!busy[s]) busy[s] = take_prepared(lanes[s], owner[s]);
      // A lane whose line search is exhausted finishes and takes the next obligor.
      while (busy[s] && !lanes[s].next_point(xs[s], ys[s])) {
        out[owner[s]] = lanes[s].finish(options);
        busy[s] = take_prepared(lanes[s], owner[s]);
      }
      if (busy[s]) {
        problems[s] = &lanes[s].p;
        any = true;
      } else {
        problems[s] = &idle;
        xs[s] = 0.0;
        ys[s] = -1.0;
      }
    }
    if (!any) return;
    evaluate_block(problems, xs, ys, evals);
    for (std::size_t s = 0; s < B; ++s) {
      if (!busy[s]) continue;
      lanes[s].take(evals[s], xs[s], ys[s], options);
      if (lanes[s].done) {
        out[owner[s]] = lanes[s].finish(options);
        busy[s] = false;
      }
    }
  }
}

}  // namespace firmcall
