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
// Steps (with a third-order correction, see step_direction) are capped, projected into the box
// that holds the unique solution, and halved until |F|^2 decreases (backtracking). An iterate
// whose next Newton step would be at most kPlannedFloor is the answer: its relative error in V and
// sV is of that size, so taking the step and evaluating once more would only confirm it.
#include "firmcall/model/merton_solver.hpp"

#include <algorithm>
#include <bit>
#include <boost/math/tools/roots.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>

#include "firmcall/model/math_policy.hpp"
#include "firmcall/model/normal.hpp"
#include "firmcall/util/vector_math.hpp"

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

OptionCheck MertonSolveOptions::validate() const {
  if (max_newton_iterations <= 0) {
    return OptionProblem{"max_newton_iterations", std::to_string(max_newton_iterations), "must be positive"};
  }
  if (max_fallback_iterations <= 0) {
    return OptionProblem{"max_fallback_iterations", std::to_string(max_fallback_iterations),
                         "must be positive"};
  }
  if (!(residual_tolerance > 0.0)) {
    return OptionProblem{"residual_tolerance", option_value_text(residual_tolerance), "must be positive"};
  }
  return std::nullopt;
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

constexpr double kMaxStep = 2.0;         // cap on a Newton step in log units
constexpr double kStepFloor = 1e-13;     // a step this small means the next would be below rounding
constexpr double kPlannedFloor = 1e-15;  // a planned Newton step this small: done (about 4 ulp)
constexpr double kSettled = 1e-4;        // stop once the residual is this fraction of the tolerance
constexpr double kMaxHalvings = 60.0;
constexpr std::size_t B = vmath::kBlock;  // values per block-math call
constexpr std::size_t L = 2 * B;          // lanes of a Newton block

// The loops over a block's lanes are written without branches so that the compiler can run them
// as vector instructions; one copy is compiled per instruction set and the processor's own is
// chosen once, so a machine always computes the same values.
#if defined(__x86_64__) && defined(__GNUC__) && !defined(__clang__) && !defined(__SANITIZE_ADDRESS__)
#define FIRMCALL_LANE_CLONES __attribute__((target_clones("avx512f", "avx2", "default")))
#else
#define FIRMCALL_LANE_CLONES
#endif

// |v| is finite (NaN compares false), in a form the vectoriser takes.
inline bool finite(double v) noexcept {
  return std::fabs(v) <= std::numeric_limits<double>::max();
}

// validate(m).ok() without a call or a branch, for the inputs nearly every obligor has (the same
// conditions; an input it refuses goes through validate() for the reason).
inline bool plainly_valid(const MertonInputs& m) noexcept {
  const double big = std::numeric_limits<double>::max();
  const double rt = m.risk_free_rate_cc * m.horizon_years;
  return static_cast<bool>((m.equity_value > 0.0) & (m.equity_value <= big) & (m.equity_vol_annual > 0.0) &
                           (m.equity_vol_annual <= big) & (m.default_point > 0.0) & (m.default_point <= big) &
                           (std::fabs(m.risk_free_rate_cc) <= big) & (m.horizon_years > 0.0) &
                           (m.horizon_years <= big) & (std::fabs(m.drift_annual) <= big) &
                           (std::fabs(rt) < 700.0));
}

// The problems of a block's lanes, one array per quantity (see Problem).
struct ProblemBlock {
  double e[L], se[L], k[L], sqrt_t[L], e_plus_k[L];
  // Derived once per obligor, so that a step divides as little as possible.
  double inv_e[L], inv_se_e[L], e_over_e_plus_k[L];
  void set(std::size_t j, const ProblemBlock& q, std::size_t i) noexcept {
    e[j] = q.e[i];
    se[j] = q.se[i];
    k[j] = q.k[i];
    sqrt_t[j] = q.sqrt_t[i];
    e_plus_k[j] = q.e_plus_k[i];
    inv_e[j] = q.inv_e[i];
    inv_se_e[j] = q.inv_se_e[i];
    e_over_e_plus_k[j] = q.e_over_e_plus_k[i];
  }
  Problem problem(std::size_t j) const noexcept { return {e[j], se[j], k[j], sqrt_t[j], e_plus_k[j]}; }
};

// Residuals of a block's lanes at one point each (see Eval), with norm_pdf(d1).
struct EvalBlock {
  double f1[L], f2[L], v[L], sv[L], d1[L], d2[L], nd1[L], phi[L];
  void set(std::size_t j, const EvalBlock& q, std::size_t i) noexcept {
    f1[j] = q.f1[i];
    f2[j] = q.f2[i];
    v[j] = q.v[i];
    sv[j] = q.sv[i];
    d1[j] = q.d1[i];
    d2[j] = q.d2[i];
    nd1[j] = q.nd1[i];
    phi[j] = q.phi[i];
  }
  // Lane j of q where `take`, as selects (no branch, for the vector loops).
  void take_if(std::size_t j, bool take, const EvalBlock& q) noexcept {
    f1[j] = take ? q.f1[j] : f1[j];
    f2[j] = take ? q.f2[j] : f2[j];
    v[j] = take ? q.v[j] : v[j];
    sv[j] = take ? q.sv[j] : sv[j];
    d1[j] = take ? q.d1[j] : d1[j];
    d2[j] = take ? q.d2[j] : d2[j];
    nd1[j] = take ? q.nd1[j] : nd1[j];
    phi[j] = take ? q.phi[j] : phi[j];
  }
  // The acceptance measure of residual_of() at lane j, with e_over_e_plus_k = E/(E + K).
  double residual(std::size_t j, double e_over_e_plus_k) const noexcept {
    const double r1 = std::fabs(f1[j]) * e_over_e_plus_k;
    const double r2 = std::fabs(f2[j]);
    return r1 < r2 ? r2 : r1;
  }
};

// Obligors prepared for lanes, eight at a time (entry i of every array): the problem, the values a
// step derives from it, the box that holds the solution, and the start V0 = E + K,
// sV0 = sE E / V0 (x = x_hi, y = y_lo) evaluated with the first direction planned.
struct PreparedBlock {
  ProblemBlock p;
  double x_lo[L], x_hi[L], y_lo[L], y_hi[L];  // x = ln(V/K), y = ln sV
  EvalBlock ev;
  double merit[L], residual[L], dx[L], dy[L], iterations[L];
  std::int64_t finished[L];  // nothing to iterate: solved at the start, or no step possible
  std::int64_t valid[L];     // the inputs passed plainly_valid(), and the entry was prepared
};

// An evaluation in two halves around the block functions (the same arithmetic as evaluate()):
// from x = ln(V/K) and sV, d1, d2 and the arguments of erfc (twice) and exp;
inline void evaluation_arguments(double x, double sv, double sqrt_t, double& d1, double& d2, double& a1,
                                 double& a2, double& q) noexcept {
  const double st = sv * sqrt_t;
  d1 = x / st + 0.5 * st;
  d2 = d1 - st;
  // d2 > 0: upper tails N(-d1), N(-d2) (norm_sf); else N(d1), N(d2) (norm_cdf).
  const double sign = d2 > 0.0 ? 1.0 : -1.0;
  a1 = (sign * d1) * kInvSqrt2;
  a2 = (sign * d2) * kInvSqrt2;
  q = -0.5 * d1 * d1;
}

// then from their values c1 = erfc(a1), c2 = erfc(a2), eq = exp(q) and growth = V/K - 1, the
// residuals (V, N(d1), F1, F2, phi(d1) into out[j]).
inline void evaluation_residuals(double growth, double d2, double c1, double c2, double eq, double k,
                                 double inv_e, double inv_se_e, double sv, EvalBlock& out,
                                 std::size_t j) noexcept {
  const double v_minus_k = k * growth;
  const double v = k + v_minus_k;
  const bool upper = d2 > 0.0;
  const double h1 = 0.5 * c1;
  const double h2 = 0.5 * c2;
  const double nd1 = upper ? 1.0 - h1 : h1;
  const double call = upper ? v_minus_k + (k * h2 - v * h1) : v * h1 - k * h2;
  out.v[j] = v;
  out.nd1[j] = nd1;
  out.f1[j] = call * inv_e - 1.0;
  out.f2[j] = nd1 * sv * v * inv_se_e - 1.0;
  out.phi[j] = kInvSqrt2Pi * eq;
}

// Residuals of every lane j at (x[j], y[j]). Each lane depends only on its own values.
FIRMCALL_LANE_CLONES void evaluate_block(const ProblemBlock& p, const double* x, const double* y,
                                         EvalBlock& out, std::size_t lanes) noexcept {
  // Lanes from `lanes` on are computed by the block functions too and ignored.
  double growth[L], a1[L] = {}, a2[L] = {}, c1[L], c2[L], q[L] = {}, eq[L];
  const vmath::Kernels& k = vmath::kernels();
  for (std::size_t c = 0; c < lanes; c += B) {
    k.expm1(x + c, growth + c);
    k.exp(y + c, out.sv + c);
  }
  for (std::size_t j = 0; j < lanes; ++j)
    evaluation_arguments(x[j], out.sv[j], p.sqrt_t[j], out.d1[j], out.d2[j], a1[j], a2[j], q[j]);
  for (std::size_t c = 0; c < lanes; c += B) {
    k.erfc(a1 + c, c1 + c);
    k.erfc(a2 + c, c2 + c);
    k.exp(q + c, eq + c);
  }
  for (std::size_t j = 0; j < lanes; ++j) {
    evaluation_residuals(growth[j], out.d2[j], c1[j], c2[j], eq[j], p.k[j], p.inv_e[j], p.inv_se_e[j],
                         out.sv[j], out, j);
  }
}

// Step direction: the Newton direction d = -J^-1 F from the analytic Jacobian (see the file
// comment) with Chebyshev's third-order correction c = -J^-1 F''(d, d) / 2 (Traub 1964,
// "Iterative Methods for the Solution of Equations", ch. 8; for systems e.g. Ortega and Rheinboldt
// 1970), which turns an error e into O(e^3) instead of O(e^2) near the solution. The correction is
// used only while it is at most half the Newton direction (far from the solution it is not
// trustworthy). With a = sV sqrt(T), the second derivatives in x = ln(V/K), y = ln sV are
//   E  F1_xx = V (N(d1) + phi/a)          E F1_xy = -V phi d2        E F1_yy = V a phi (1 + d1 d2)
//   sE E F2_xx = sV V (N(d1) + 2 phi/a - d1 phi/a^2)
//   sE E F2_xy = sV V (N(d1) - phi d2 + d1 d2 phi/a)
//   sE E F2_yy = sV V (N(d1) - 2 phi d2 - d1 phi (d2^2 - 1))      (phi = phi(d1)).
// `newton` is the size of the Newton direction alone (the distance to the solution, to first
// order); the direction is capped at kMaxStep; finite is false when it is not finite.
struct Direction {
  double dx, dy, newton;
  bool finite;
};

// What an iterate does with its direction d when its trial was taken (`plan`; a start point always
// plans) and the step budget is or is not spent (`limit`): `planned` when a step is counted,
// `moved` when the direction is taken up; returns true when the iterations end here (also when
// the Newton step is at most kPlannedFloor: the iterate is then the answer).
inline bool plan_step(bool plan, bool limit, const Direction& d, bool& planned, bool& moved) noexcept {
  const bool close = plan & d.finite & (d.newton <= kPlannedFloor);
  planned = plan & !limit & !close;
  moved = planned & d.finite;
  return plan & (close | limit | !d.finite);
}
inline Direction step_direction(double inv_e, double inv_see, double sqrt_t, double f1, double f2, double v,
                                double sv, double d1, double d2, double nd1, double phi) noexcept {
  const double a = sv * sqrt_t;
  const double inv_a = 1.0 / a;
  const double phi_a = phi * inv_a;
  const double j11 = v * nd1 * inv_e;
  const double j12 = v * phi * a * inv_e;
  const double svv = sv * v * inv_see;
  const double j21 = svv * (nd1 + phi_a);
  const double j22 = svv * (nd1 - phi * d2);
  const double inv_det = 1.0 / (j11 * j22 - j12 * j21);
  const double nx = (-f1 * j22 + f2 * j12) * inv_det;
  const double ny = (-f2 * j11 + f1 * j21) * inv_det;
  // Second derivatives along (nx, ny), halved: h = F''(d, d) / 2.
  const double xx = nx * nx;
  const double xy = nx * ny;
  const double yy = ny * ny;
  const double g11 = j21 + svv * phi_a * (1.0 - d1 * inv_a);  // sE E F2_xx / (sV V), times svv
  const double g12 = j22 + svv * d1 * d2 * phi_a;
  const double g22 = j22 - svv * phi * (d2 + d1 * (d2 * d2 - 1.0));
  const double h1 =
      0.5 * (v * inv_e * ((nd1 + phi_a) * xx - 2.0 * phi * d2 * xy) + j12 * (1.0 + d1 * d2) * yy);
  const double h2 = 0.5 * (g11 * xx + 2.0 * g12 * xy + g22 * yy);
  const double cx = (-h1 * j22 + h2 * j12) * inv_det;
  const double cy = (-h2 * j11 + h1 * j21) * inv_det;
  const double anx = std::fabs(nx);
  const double any = std::fabs(ny);
  const double newton = anx < any ? any : anx;
  const double acx = std::fabs(cx);
  const double acy = std::fabs(cy);
  const double corr = acx < acy ? acy : acx;
  const bool third = corr <= 0.5 * newton;
  const double dx = third ? nx + cx : nx;
  const double dy = third ? ny + cy : ny;
  const double adx = std::fabs(dx);
  const double ady = std::fabs(dy);
  const double big = adx < ady ? ady : adx;
  const bool cap = big > kMaxStep;
  return {cap ? dx * (kMaxStep / big) : dx, cap ? dy * (kMaxStep / big) : dy, newton,
          static_cast<bool>(finite(dx) & finite(dy))};
}

// Prepares in[j] for j < count (count <= kBlock) into entry j of `out`: the arithmetic runs on all
// eight entries at once, the logarithms, the discount factor and the start's evaluation through the
// block functions, the rare overflow of E/K through the C library. Entries past count and entries
// whose inputs fail plainly_valid() (out.valid[j] == 0) hold a harmless problem instead. At the
// start V0/K - 1 = E/K and sV0 = sE E/(E + K) are known without exp or expm1. The decisions are
// those step() makes for a start point.
FIRMCALL_LANE_CLONES void prepare_block(const MertonInputs* in, std::size_t count,
                                        const MertonSolveOptions& o, PreparedBlock& out) noexcept {
  double dp[B], t[B], neg_rt[B], disc[B], growth[B], ratio[B], inv_ratio[B], log1p_inv[B], a1[B], a2[B], q[B],
      c1[B], c2[B], eq[B];
  ProblemBlock& p = out.p;
  EvalBlock& ev = out.ev;
  for (std::size_t j = 0; j < B; ++j) {
    const MertonInputs& m = in[j < count ? j : 0];
    const bool used = (j < count) & plainly_valid(m);
    out.valid[j] = used ? 1 : 0;
    p.e[j] = used ? m.equity_value : 1.0;
    p.se[j] = used ? m.equity_vol_annual : 0.3;
    dp[j] = used ? m.default_point : 1.0;
    t[j] = used ? m.horizon_years : 1.0;
    neg_rt[j] = used ? -m.risk_free_rate_cc * m.horizon_years : 0.0;
  }
  const vmath::Kernels& km = vmath::kernels();
  km.exp(neg_rt, disc);
  for (std::size_t j = 0; j < B; ++j) {
    const double e = p.e[j];
    const double k = dp[j] * disc[j];
    p.k[j] = k;
    p.sqrt_t[j] = std::sqrt(t[j]);
    p.e_plus_k[j] = e + k;
    p.inv_e[j] = 1.0 / e;
    p.inv_se_e[j] = 1.0 / (p.se[j] * e);
    p.e_over_e_plus_k[j] = e / p.e_plus_k[j];
    growth[j] = e / k;
    ratio[j] = finite(growth[j]) ? growth[j] : 1.0;
    inv_ratio[j] = k / e;
    ev.sv[j] = p.se[j] * e / p.e_plus_k[j];
  }
  // ln(E/K), ln(1 + K/E) and ln sE give the box: ln(1 + E/K) = ln(E/K) + ln(1 + K/E) and
  // ln(sE E/(E + K)) = ln sE - ln(1 + K/E).
  km.log(ratio, out.x_lo);
  km.log1p(inv_ratio, log1p_inv);
  km.log(p.se, out.y_hi);
  for (std::size_t j = 0; j < B; ++j) {
    out.x_hi[j] = out.x_lo[j] + log1p_inv[j];
    out.y_lo[j] = out.y_hi[j] - log1p_inv[j];
  }
  for (std::size_t j = 0; j < B; ++j) {
    if (!finite(growth[j])) {  // K underflows against E
      out.x_lo[j] = std::log(p.e[j]) - std::log(p.k[j]);
      out.x_hi[j] = out.x_lo[j] + log1p_inv[j];
    }
  }
  for (std::size_t j = 0; j < B; ++j)
    evaluation_arguments(out.x_hi[j], ev.sv[j], p.sqrt_t[j], ev.d1[j], ev.d2[j], a1[j], a2[j], q[j]);
  km.erfc(a1, c1);
  km.erfc(a2, c2);
  km.exp(q, eq);
  const double max_it = o.max_newton_iterations;
  for (std::size_t j = 0; j < B; ++j) {
    evaluation_residuals(growth[j], ev.d2[j], c1[j], c2[j], eq[j], p.k[j], p.inv_e[j], p.inv_se_e[j],
                         ev.sv[j], ev, j);
    out.merit[j] = ev.f1[j] * ev.f1[j] + ev.f2[j] * ev.f2[j];
    out.residual[j] = ev.residual(j, p.e_over_e_plus_k[j]);
    const bool limit = (0.0 >= max_it) | !(out.merit[j] > 0.0);
    const Direction d = step_direction(p.inv_e[j], p.inv_se_e[j], p.sqrt_t[j], ev.f1[j], ev.f2[j], ev.v[j],
                                       ev.sv[j], ev.d1[j], ev.d2[j], ev.nd1[j], ev.phi[j]);
    bool planned, moved;
    const bool stop = plan_step(true, limit, d, planned, moved);
    out.dx[j] = moved ? d.dx : 0.0;
    out.dy[j] = moved ? d.dy : 0.0;
    out.iterations[j] = planned ? 1.0 : 0.0;
    out.finished[j] = stop ? 1 : 0;
  }
}

// The bracketed fallback for an obligor Newton left short (see finish_solution).
[[gnu::noinline]] void finish_bracketed(AssetSolution& out, const Problem& p, double x_lo, double x_hi,
                                        const MertonSolveOptions& o) noexcept {
  double xb = 0.0;
  double svb = 0.0;
  int evals = 0;
  const bool ok = solve_bracketed(p, x_lo, x_hi, o.max_fallback_iterations, xb, svb, evals);
  out.iterations += evals;
  out.method = SolveMethod::bracketed;
  const Eval eb = evaluate(p, xb, std::log(svb));
  out.residual = residual_of(p, eb);
  if (ok && out.residual <= o.residual_tolerance) {
    out.asset_value = eb.v;
    out.asset_vol_annual = svb;
    out.status = SolveStatus::converged;
  } else {
    out.asset_value = 0.0;
    out.asset_vol_annual = 0.0;
    out.status = SolveStatus::max_iterations;
  }
}

// Writes every field of the result of an obligor whose iterations are over, at the last iterate
// (V, sV) with its residual; runs the bracketed fallback when Newton fell short. Written field by
// field in place: a whole result returned and copied would be read back before its parts are
// stored.
inline void finish_solution(AssetSolution& out, const Problem& p, double x_lo, double x_hi, double v,
                            double sv, double residual, double iterations,
                            const MertonSolveOptions& o) noexcept {
  out.input_check = MertonInputCheck{};
  out.iterations = static_cast<int>(iterations);
  out.residual = residual;
  out.asset_value = v;
  out.asset_vol_annual = sv;
  out.status = SolveStatus::converged;
  out.method = SolveMethod::newton;
  if (!(residual <= o.residual_tolerance)) finish_bracketed(out, p, x_lo, x_hi, o);
}

// Up to sixteen damped Newton iterations side by side (conditions combine with & and | rather than && and
// ||, so that the loops have no branches), one obligor per lane, as arrays: step() makes one
// line-search trial on every lane at once (idle lanes hold a harmless fixed problem). An
// obligor's arithmetic never depends on the other lanes, so solve_asset() (a batch of one)
// returns what solve_asset_batch() returns.
struct NewtonBlock {
  ProblemBlock p;
  double x_lo[L], x_hi[L], y_lo[L], y_hi[L];
  double x[L], y[L];  // current iterate: x = ln(V/K), y = ln sV
  EvalBlock ev;       // residuals at (x, y)
  double merit[L], residual[L], dx[L], dy[L], lambda[L];
  double halvings[L], iterations[L];  // small whole numbers, kept as doubles for the vector loops
  std::int64_t done[L];
  // Scratch of step().
  double xt[L], yt[L];
  EvalBlock et;
  std::size_t lanes;  // lanes in use, 1..L: a single obligor is solved on one lane

  explicit NewtonBlock(std::size_t used) noexcept : lanes(std::clamp<std::size_t>(used, 1, L)) {
    // The block functions read whole groups of B lanes: those lanes hold a harmless problem.
    for (std::size_t j = 0; j < (lanes + B - 1) / B * B; ++j) {
      idle(j);
      xt[j] = x[j];
      yt[j] = y[j];
    }
  }

  void idle(std::size_t j) noexcept {
    // The problem E = 1, sE = 0.3, K = 1, T = 1 and its derived values, written out.
    p.e[j] = p.k[j] = p.sqrt_t[j] = p.inv_e[j] = 1.0;
    p.se[j] = 0.3;
    p.e_plus_k[j] = 2.0;
    p.inv_se_e[j] = 1.0 / 0.3;
    p.e_over_e_plus_k[j] = 0.5;
    x_lo[j] = x_hi[j] = x[j] = 0.0;
    y_lo[j] = y_hi[j] = y[j] = -1.0;
    dx[j] = dy[j] = lambda[j] = 0.0;
    done[j] = 1;
  }

  // Starts lane j on prepared obligor i at its start point, with its first direction planned.
  void begin(std::size_t j, const PreparedBlock& q, std::size_t i) noexcept {
    p.set(j, q.p, i);
    x_lo[j] = q.x_lo[i];
    x_hi[j] = q.x_hi[i];
    y_lo[j] = q.y_lo[i];
    y_hi[j] = q.y_hi[i];
    x[j] = q.x_hi[i];
    y[j] = q.y_lo[i];
    ev.set(j, q.ev, i);
    merit[j] = q.merit[i];
    residual[j] = q.residual[i];
    dx[j] = q.dx[i];
    dy[j] = q.dy[i];
    lambda[j] = 1.0;
    iterations[j] = q.iterations[i];
    halvings[j] = 0.0;
    done[j] = 0;
  }

  // One backtracking trial on |F|^2 for every lane, projected into the box; then, where the trial
  // was taken and the lane is not settled, the next direction. Returns the lanes that are done, bit j for
  // lane j.
  FIRMCALL_LANE_CLONES unsigned step(const MertonSolveOptions& o) noexcept {
    const double settle = kSettled * o.residual_tolerance;
    const double max_it = o.max_newton_iterations;
    for (std::size_t j = 0; j < lanes; ++j) {
      const double xr = x[j] + lambda[j] * dx[j];
      const double yr = y[j] + lambda[j] * dy[j];
      // std::clamp (the box is never empty), as two selects.
      const double xl = xr < x_lo[j] ? x_lo[j] : xr;
      const double yl = yr < y_lo[j] ? y_lo[j] : yr;
      xt[j] = x_hi[j] < xl ? x_hi[j] : xl;
      yt[j] = y_hi[j] < yl ? y_hi[j] : yl;
    }
    evaluate_block(p, xt, yt, et, lanes);
    for (std::size_t j = 0; j < lanes; ++j) {
      const bool stuck = (xt[j] == x[j]) & (yt[j] == y[j]);
      const double mt = et.f1[j] * et.f1[j] + et.f2[j] * et.f2[j];
      const bool take = !stuck & (mt < merit[j]);
      const double ax = std::fabs(xt[j] - x[j]);
      const double ay = std::fabs(yt[j] - y[j]);
      const double taken = ax < ay ? ay : ax;
      x[j] = take ? xt[j] : x[j];
      y[j] = take ? yt[j] : y[j];
      ev.take_if(j, take, et);
      merit[j] = take ? mt : merit[j];
      const double res = ev.residual(j, p.e_over_e_plus_k[j]);  // at the (possibly new) iterate
      residual[j] = res;
      // At the rounding floor, or settled (a further quadratic step would chase rounding).
      const bool settled = take & ((taken < kStepFloor) | (res <= settle));
      const bool rejected = !stuck & !take;
      lambda[j] = rejected ? lambda[j] * 0.5 : lambda[j];
      halvings[j] = rejected ? halvings[j] + 1.0 : halvings[j];
      const bool out_of_halvings = rejected & (halvings[j] >= kMaxHalvings);
      const bool plan = take & !settled;
      const bool limit = (iterations[j] >= max_it) | !(merit[j] > 0.0);
      const Direction d = step_direction(p.inv_e[j], p.inv_se_e[j], p.sqrt_t[j], ev.f1[j], ev.f2[j], ev.v[j],
                                         ev.sv[j], ev.d1[j], ev.d2[j], ev.nd1[j], ev.phi[j]);
      bool planned, moved;
      const bool stop = plan_step(plan, limit, d, planned, moved);
      iterations[j] = planned ? iterations[j] + 1.0 : iterations[j];
      dx[j] = moved ? d.dx : dx[j];
      dy[j] = moved ? d.dy : dy[j];
      lambda[j] = moved ? 1.0 : lambda[j];
      halvings[j] = moved ? 0.0 : halvings[j];
      const bool finished = stuck | settled | out_of_halvings | stop;
      done[j] = finished ? 1 : done[j];
    }
    unsigned mask = 0;
    for (std::size_t j = 0; j < lanes; ++j) mask |= static_cast<unsigned>(done[j] != 0) << j;
    return mask;
  }

  // Result of lane j once done.
  void finish(std::size_t j, const MertonSolveOptions& o, AssetSolution& out) const noexcept {
    finish_solution(out, p.problem(j), x_lo[j], x_hi[j], ev.v[j], ev.sv[j], residual[j], iterations[j], o);
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
  // Options are checked once per batch (a few comparisons): with invalid ones nothing is solved.
  if (!options_valid(options)) {
    for (std::size_t i = 0; i < n; ++i) out[i] = AssetSolution{};
    return;
  }
  // Obligors are validated and prepared eight at a time, then handed to free lanes in order.
  PreparedBlock prepared;
  std::size_t prepared_first = 0, prepared_count = 0, prepared_next = 0;
  NewtonBlock block(n);
  std::size_t owner[L];
  // Starts the next obligor that needs iterations on lane j (one solved at its start, or with
  // invalid inputs, is finished here); false when none is left, and the lane is then idle.
  const auto load = [&](std::size_t j) {
    for (;;) {
      if (prepared_next == prepared_count) {
        prepared_first += prepared_count;
        prepared_next = 0;
        prepared_count = std::min(B, n - prepared_first);
        if (prepared_count == 0) {
          block.idle(j);
          return false;
        }
        prepare_block(in + prepared_first, prepared_count, options, prepared);
      }
      const std::size_t q = prepared_next++;
      const std::size_t i = prepared_first + q;
      if (prepared.valid[q] == 0) {  // validate() states the same conditions and names the reason
        out[i] = AssetSolution{};
        out[i].input_check = validate(in[i]);
        continue;
      }
      if (prepared.finished[q] != 0) {
        finish_solution(out[i], prepared.p.problem(q), prepared.x_lo[q], prepared.x_hi[q], prepared.ev.v[q],
                        prepared.ev.sv[q], prepared.residual[q], prepared.iterations[q], options);
        continue;
      }
      block.begin(j, prepared, q);
      owner[j] = i;
      return true;
    }
  };
  unsigned busy = 0;  // bit j: lane j holds an obligor
  for (std::size_t j = 0; j < block.lanes; ++j) busy |= static_cast<unsigned>(load(j)) << j;
  while (busy != 0) {
    for (unsigned finished = block.step(options) & busy; finished != 0; finished &= finished - 1) {
      const auto j = static_cast<std::size_t>(std::countr_zero(finished));
      block.finish(j, options, out[owner[j]]);
      if (!load(j)) busy &= ~(1U << j);
    }
  }
}

}  // namespace firmcall
