// Reverse stress searches. See include/firmcall/reverse_stress.hpp.
#include "firmcall/model/reverse_stress.hpp"

#include <algorithm>
#include <boost/math/tools/toms748_solve.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>

#include "firmcall/model/math_policy.hpp"
#include "firmcall/model/shock.hpp"

namespace firmcall {

OptionCheck ReverseStressOptions::validate() const {
  if (scan_points < 2) return OptionProblem{"scan_points", std::to_string(scan_points), "must be at least 2"};
  if (max_refine_iterations <= 0) {
    return OptionProblem{"max_refine_iterations", std::to_string(max_refine_iterations), "must be positive"};
  }
  if (!(max_equity_fall > 0.0 && max_equity_fall < 1.0)) {
    return OptionProblem{"max_equity_fall", option_value_text(max_equity_fall), "must lie in (0, 1)"};
  }
  if (!(max_vol_multiplier > 1.0 && std::isfinite(max_vol_multiplier))) {
    return OptionProblem{"max_vol_multiplier", option_value_text(max_vol_multiplier),
                         "must be finite and greater than 1"};
  }
  if (OptionCheck solver_problem = solver.validate()) {
    solver_problem->field = "solver." + solver_problem->field;
    return solver_problem;
  }
  return std::nullopt;
}

std::string_view to_string(ReverseStatus s) noexcept {
  switch (s) {
    case ReverseStatus::found:
      return "found";
    case ReverseStatus::already_reached:
      return "already_reached";
    case ReverseStatus::not_reachable:
      return "not_reachable";
    case ReverseStatus::not_converged:
      return "not_converged";
    case ReverseStatus::invalid_input:
      return "invalid_input";
  }
  return "";
}

namespace {

enum class Kind { equity_fall, vol_multiplier };

// The shock that the search variable x stands for, built exactly as a scenario file would.
ShockEffect effect_of(Kind kind, double x) noexcept {
  ShockEffect e;
  Shock s;
  if (kind == Kind::equity_fall) {
    s.equity_change = -x;
  } else {
    s.equity_vol_multiplier = x;
  }
  e.add(s);
  return e;
}

// PD after the shock x; false when the stressed model cannot be solved. With the asset_vol hold,
// base_asset_vol is the base solve's sV, held (times the multiplier) while V is re-solved.
bool pd_after(const MertonInputs& base, Kind kind, double x, const ReverseStressOptions& options,
              double base_asset_vol, double& pd, int& solves, double* equity_vol = nullptr) noexcept {
  const ShockEffect effect = effect_of(kind, x);
  const MertonInputs in = apply_shock(base, effect, /*drift_follows_rate=*/false);
  const AssetSolution sol =
      options.hold == StressHold::asset_vol
          ? solve_asset_value_at_vol(in, stressed_asset_vol(base_asset_vol, effect), options.solver)
          : solve_asset(in, options.solver);
  ++solves;
  if (!sol.usable()) return false;
  pd = merton_measures(in, sol.asset_value, sol.asset_vol_annual).pd;
  if (equity_vol) {
    *equity_vol = options.hold == StressHold::asset_vol
                      ? implied_equity_vol(in, sol.asset_value, sol.asset_vol_annual)
                      : in.equity_vol_annual;
  }
  return std::isfinite(pd);
}

ReverseResult search(const MertonInputs& base, double target, Kind kind,
                     const ReverseStressOptions& options) noexcept {
  ReverseResult r;
  const bool equity = kind == Kind::equity_fall;
  const double lo = equity ? 0.0 : 1.0;
  const double hi = equity ? options.max_equity_fall : options.max_vol_multiplier;
  if (!(target > 0.0 && target < 1.0) || !validate(base).ok() || !options_valid(options)) return r;

  double base_asset_vol = 0.0;
  if (options.hold == StressHold::asset_vol) {
    const AssetSolution b = solve_asset(base, options.solver);
    ++r.solves;
    if (!b.usable()) {
      r.status = ReverseStatus::not_converged;
      return r;
    }
    base_asset_vol = b.asset_vol_annual;
  }
  double pd = 0.0;
  if (!pd_after(base, kind, lo, options, base_asset_vol, pd, r.solves, &r.equity_vol_at_shock)) {
    r.status = ReverseStatus::not_converged;
    return r;
  }
  if (pd >= target) {
    r.status = ReverseStatus::already_reached;
    r.shock = lo;
    r.pd_at_shock = pd;
    return r;
  }

  // Scan for the first grid cell whose upper end reaches the level: uniform in f for the equity
  // fall, uniform in ln m for the multiplier.
  const double log_target = std::log(target);
  const auto gap = [&](double p) {
    return std::log(std::max(p, std::numeric_limits<double>::min())) - log_target;
  };
  const auto grid = [&](int i) {
    const double u = static_cast<double>(i) / (options.scan_points - 1);
    if (i == options.scan_points - 1) return hi;
    return equity ? lo + u * (hi - lo) : std::exp(u * std::log(hi));
  };
  double a = lo;
  double ga = gap(pd);
  double b = lo;
  double gb = ga;
  bool crossed = false;
  for (int i = 1; i < options.scan_points; ++i) {
    b = grid(i);
    if (!pd_after(base, kind, b, options, base_asset_vol, pd, r.solves)) {
      r.status = ReverseStatus::not_converged;
      return r;
    }
    gb = gap(pd);
    if (gb >= 0.0) {
      crossed = true;
      break;
    }
    a = b;
    ga = gb;
  }
  if (!crossed) {
    r.status = ReverseStatus::not_reachable;
    return r;
  }

  // Refine the crossing in (a, b]: g(a) < 0 <= g(b).
  double best = b;
  double best_gap = gb;
  bool solve_failed = false;
  if (gb > 0.0) {
    const auto g = [&](double x) {
      double p = 0.0;
      if (!pd_after(base, kind, x, options, base_asset_vol, p, r.solves)) {
        solve_failed = true;
        return std::numeric_limits<double>::quiet_NaN();
      }
      const double gx = gap(p);
      if (std::fabs(gx) < std::fabs(best_gap)) {
        best = x;
        best_gap = gx;
      }
      return gx;
    };
    const auto tol = boost::math::tools::eps_tolerance<double>(std::numeric_limits<double>::digits - 3);
    std::uintmax_t it = static_cast<std::uintmax_t>(options.max_refine_iterations);
    boost::math::tools::toms748_solve(g, a, b, ga, gb, tol, it, NoThrowPolicy());
  }
  if (solve_failed) {
    r.status = ReverseStatus::not_converged;
    return r;
  }
  if (!pd_after(base, kind, best, options, base_asset_vol, pd, r.solves, &r.equity_vol_at_shock)) {
    r.status = ReverseStatus::not_converged;
    return r;
  }
  r.status = ReverseStatus::found;
  r.shock = best;
  r.pd_at_shock = pd;
  return r;
}

}  // namespace

ReverseResult reverse_equity_fall(const MertonInputs& base, double target_pd,
                                  const ReverseStressOptions& options) noexcept {
  return search(base, target_pd, Kind::equity_fall, options);
}

ReverseResult reverse_vol_multiplier(const MertonInputs& base, double target_pd,
                                     const ReverseStressOptions& options) noexcept {
  return search(base, target_pd, Kind::vol_multiplier, options);
}

}  // namespace firmcall
