// Tests of the first-passage model (Black and Cox 1976): the down-and-out call against a published
// table and the in-out parity, the closed forms against Monte Carlo with the Brownian-bridge
// correction, limits, and the calibration.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <string>
#include <vector>

#include "barrier_monte_carlo.hpp"
#include "firmcall/model/first_passage.hpp"
#include "firmcall/model/merton.hpp"
#include "firmcall/model/normal.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {

// Haug's building blocks for a down (eta = 1) call (phi = 1) with asset carry b and a rebate R,
// typed in here from the book's formulas (Haug, The Complete Guide to Option Pricing Formulas,
// 2nd ed., "Standard barrier options"; from memory) for the test only:
//   cdo = A - C + F (X > H), B - D + F (X < H);  cdi = C + E (X > H), A - B + D + E (X < H).
struct HaugDownCall {
  double A, B, C, D, E, F;
};

HaugDownCall haug_down_call(double s, double x, double h, double t, double r, double b, double v,
                            double rebate) {
  const double vt = v * std::sqrt(t);
  const double mu = (b - v * v / 2) / (v * v);
  const double lambda = std::sqrt(mu * mu + 2 * r / (v * v));
  const double x1 = std::log(s / x) / vt + (1 + mu) * vt;
  const double x2 = std::log(s / h) / vt + (1 + mu) * vt;
  const double y1 = std::log(h * h / (s * x)) / vt + (1 + mu) * vt;
  const double y2 = std::log(h / s) / vt + (1 + mu) * vt;
  const double z = std::log(h / s) / vt + lambda * vt;
  const double fwd = s * std::exp((b - r) * t);
  const double disc = x * std::exp(-r * t);
  HaugDownCall p{};
  p.A = fwd * norm_cdf(x1) - disc * norm_cdf(x1 - vt);
  p.B = fwd * norm_cdf(x2) - disc * norm_cdf(x2 - vt);
  p.C =
      fwd * std::pow(h / s, 2 * (mu + 1)) * norm_cdf(y1) - disc * std::pow(h / s, 2 * mu) * norm_cdf(y1 - vt);
  p.D =
      fwd * std::pow(h / s, 2 * (mu + 1)) * norm_cdf(y2) - disc * std::pow(h / s, 2 * mu) * norm_cdf(y2 - vt);
  p.E = rebate * std::exp(-r * t) * (norm_cdf(x2 - vt) - std::pow(h / s, 2 * mu) * norm_cdf(y2 - vt));
  p.F = rebate * (std::pow(h / s, mu + lambda) * norm_cdf(z) +
                  std::pow(h / s, mu - lambda) * norm_cdf(z - 2 * lambda * vt));
  return p;
}

double haug_down_in_call(double s, double x, double h, double t, double r, double b, double v,
                         double rebate) {
  const HaugDownCall p = haug_down_call(s, x, h, t, r, b, v, rebate);
  return x > h ? p.C + p.E : p.A - p.B + p.D + p.E;
}

// Our down-and-out call for an asset with carry b (payout q = r - b): a payout only rescales time-0
// value, V_q(r) = e^(-qT) V_0(r - q) (common practice).
double doc_with_carry(double s, double x, double h, double t, double r, double b, double v) {
  const BarrierCallValue c = down_and_out_call({.asset_value = s,
                                                .asset_vol_annual = v,
                                                .strike = x,
                                                .barrier = h,
                                                .barrier_growth_cc = 0.0,
                                                .risk_free_rate_cc = b,
                                                .maturity_years = t});
  return std::exp((b - r) * t) * c.value;
}

// Vanilla Black-Scholes call with carry b, from merton.hpp's equity value.
double vanilla_with_carry(double s, double x, double t, double r, double b, double v) {
  const MertonInputs in{.default_point = x, .risk_free_rate_cc = b, .horizon_years = t};
  return std::exp((b - r) * t) * equity_value(in, s, v);
}

}  // namespace

TEST_CASE("down-and-out and down-and-in calls reproduce Haug's table of standard barrier options") {
  // Ref: Haug, The Complete Guide to Option Pricing Formulas (2nd ed.), table of standard barrier
  // option values (from memory): S = 100, rebate 3, T = 0.5, r = 0.08, b = 0.04; the book prints 4
  // decimals. The out options pay the rebate at the touch (F), the in options at expiry (E); our
  // down_and_out_call has no rebate, so F is added here.
  struct Row {
    double strike, barrier, vol25, vol30;
  };
  const double s = 100, t = 0.5, r = 0.08, b = 0.04, rebate = 3;
  const Row down_out[] = {{90, 95, 9.0246, 8.8334},  {100, 95, 6.7924, 7.0285},  {110, 95, 4.8759, 5.4137},
                          {90, 100, 3.0000, 3.0000}, {100, 100, 3.0000, 3.0000}, {110, 100, 3.0000, 3.0000}};
  const Row down_in[] = {{90, 95, 7.7627, 9.0093},    {100, 95, 4.0109, 5.1370},  {110, 95, 2.0576, 2.8517},
                         {90, 100, 13.8333, 14.8816}, {100, 100, 7.8494, 9.2045}, {110, 100, 3.9795, 5.3043}};
  for (const Row& row : down_out) {
    for (const auto& [vol, expected] : {std::pair{0.25, row.vol25}, std::pair{0.30, row.vol30}}) {
      CAPTURE(row.strike);
      CAPTURE(row.barrier);
      CAPTURE(vol);
      const double touch_rebate = haug_down_call(s, row.strike, row.barrier, t, r, b, vol, rebate).F;
      const double ours = doc_with_carry(s, row.strike, row.barrier, t, r, b, vol) + touch_rebate;
      CHECK(std::fabs(ours - expected) <= 5.1e-5);  // the table's rounding
    }
  }
  for (const Row& row : down_in) {
    for (const auto& [vol, expected] : {std::pair{0.25, row.vol25}, std::pair{0.30, row.vol30}}) {
      CAPTURE(row.strike);
      CAPTURE(row.barrier);
      CAPTURE(vol);
      // The test's transcription of Haug's in formula against the table ...
      const double in = haug_down_in_call(s, row.strike, row.barrier, t, r, b, vol, rebate);
      CHECK(std::fabs(in - expected) <= 5.1e-5);
      // ... and, without the rebate, out + in = vanilla (in-out parity, an identity).
      const double in_no_rebate = haug_down_in_call(s, row.strike, row.barrier, t, r, b, vol, 0.0);
      const double vanilla = vanilla_with_carry(s, row.strike, t, r, b, vol);
      CHECK(doc_with_carry(s, row.strike, row.barrier, t, r, b, vol) + in_no_rebate ==
            doctest::Approx(vanilla).epsilon(1e-12));
    }
  }
}

TEST_CASE("in-out parity: down-and-out + down-and-in = vanilla call over a grid") {
  // Identity: a knock-out and a knock-in with the same barrier together are the plain call
  // (common practice); the in value is Haug's formula (test transcription), the call Black-Scholes.
  int n = 0;
  double worst = 0.0;
  for (double strike : {60.0, 90.0, 100.0, 130.0})
    for (double barrier : {40.0, 80.0, 95.0})
      for (double vol : {0.08, 0.3, 0.9})
        for (double t : {0.25, 1.0, 5.0})
          for (double r : {-0.01, 0.03, 0.1}) {
            const double doc = doc_with_carry(100, strike, barrier, t, r, r, vol);
            const double dic = haug_down_in_call(100, strike, barrier, t, r, r, vol, 0.0);
            const double vanilla = vanilla_with_carry(100, strike, t, r, r, vol);
            const double gap = std::fabs(doc + dic - vanilla) / 100.0;
            worst = std::max(worst, gap);
            ++n;
            CHECK(gap <= 1e-13);
            CHECK(doc >= 0.0);
            CHECK(doc <= vanilla + 1e-12);
          }
  MESSAGE("in-out parity over " << n << " options: worst |out + in - call| / S = " << worst);
}

TEST_CASE("first-passage PD and the down-and-out call agree with Monte Carlo (Brownian bridge)") {
  // Independent reference: tests/support/barrier_monte_carlo.hpp (exact log-normal steps, bridge-corrected
  // survival weights; fixed seeds). Each closed form must lie within 4 standard errors.
  const std::vector<double> horizons = {0.5, 1, 2, 3, 5, 7, 10};
  struct PdCase {
    const char* what;
    testing::BarrierPathSpec spec;
  };
  const PdCase pd_cases[] = {
      {"physical drift, constant barrier", {100, 0.25, 0.06, 60, 0.0}},
      {"risk-neutral drift, barrier growing at 3%", {100, 0.25, 0.03, 60, 0.03}},
      {"negative drift, volatile assets, barrier growing at 1%", {100, 0.40, -0.02, 70, 0.01}},
  };
  double worst_z = 0.0;
  std::uint64_t seed = 20261130;
  for (const PdCase& c : pd_cases) {
    const auto mc = testing::mc_first_passage(c.spec, horizons, 16000, 10, seed++);
    for (std::size_t i = 0; i < horizons.size(); ++i) {
      const FirstPassageProbability p =
          first_passage_probability({.asset_value = c.spec.asset_value,
                                     .asset_vol_annual = c.spec.asset_vol,
                                     .drift_annual = c.spec.drift,
                                     .barrier = c.spec.barrier,
                                     .barrier_growth_cc = c.spec.barrier_growth},
                                    horizons[i]);
      const double z = std::fabs(p.pd - mc[i].mean) / mc[i].se;
      worst_z = std::max(worst_z, z);
      CAPTURE(c.what);
      CAPTURE(horizons[i]);
      CAPTURE(mc[i].mean);
      CAPTURE(mc[i].se);
      CHECK(std::fabs(p.pd - mc[i].mean) <= 4.0 * mc[i].se);
      CHECK(p.pd + p.survival == doctest::Approx(1.0).epsilon(1e-15));
    }
  }
  struct CallCase {
    const char* what;
    testing::BarrierPathSpec spec;
    double strike, maturity;
  };
  const CallCase call_cases[] = {
      {"strike above a constant barrier", {100, 0.30, 0.03, 80, 0.0}, 100, 1.0},
      {"barrier growing above the strike by maturity", {100, 0.25, 0.05, 95, 0.02}, 90, 2.0},
      {"falling barrier, deep in the money", {120, 0.20, 0.04, 90, -0.05}, 100, 3.0},
  };
  for (const CallCase& c : call_cases) {
    const auto mc = testing::mc_down_and_out_call(c.spec, c.strike, c.maturity, 20000, 40, seed++);
    const BarrierCallValue v = down_and_out_call({.asset_value = c.spec.asset_value,
                                                  .asset_vol_annual = c.spec.asset_vol,
                                                  .strike = c.strike,
                                                  .barrier = c.spec.barrier,
                                                  .barrier_growth_cc = c.spec.barrier_growth,
                                                  .risk_free_rate_cc = c.spec.drift,
                                                  .maturity_years = c.maturity});
    const double z = std::fabs(v.value - mc.mean) / mc.se;
    worst_z = std::max(worst_z, z);
    CAPTURE(c.what);
    CAPTURE(mc.mean);
    CAPTURE(mc.se);
    CHECK(std::fabs(v.value - mc.mean) <= 4.0 * mc.se);
  }
  MESSAGE("closed forms vs Monte Carlo: largest gap " << worst_z
                                                      << " standard errors (21 PDs, 3 call values)");
  CHECK(worst_z < 4.0);
}

TEST_CASE("the delta of the down-and-out call is the derivative of its value") {
  // Reference: central differences of the value itself (h = 1e-4 V, error O(h^2)).
  for (double barrier : {50.0, 90.0, 99.0})
    for (double growth : {-0.03, 0.0, 0.04})
      for (double strike : {70.0, 100.0, 140.0}) {
        DownAndOutCall o{.asset_value = 100,
                         .asset_vol_annual = 0.3,
                         .strike = strike,
                         .barrier = barrier,
                         .barrier_growth_cc = growth,
                         .risk_free_rate_cc = 0.04,
                         .maturity_years = 2};
        const double delta = down_and_out_call(o).delta;
        const double h = 1e-4 * o.asset_value;
        o.asset_value = 100 + h;
        const double up = down_and_out_call(o).value;
        o.asset_value = 100 - h;
        const double down = down_and_out_call(o).value;
        CAPTURE(barrier);
        CAPTURE(growth);
        CAPTURE(strike);
        CHECK(delta == doctest::Approx((up - down) / (2 * h)).epsilon(1e-6));
        CHECK(delta > 0.0);
      }
}

TEST_CASE("limits: the barrier only adds defaults, a vanishing barrier gives Merton, PDs rise with t") {
  // {V_t < DP} is contained in {V touched DP before t}: first-passage PD >= Merton PD (same V, sV,
  // barrier at DP). A barrier far below the assets is never touched: PD -> 0, equity -> the
  // Black-Scholes call, and the calibration -> the Merton one. (Black and Cox 1976; common practice.)
  for (double lev : {0.2, 0.6, 0.9})
    for (double sv : {0.05, 0.2, 0.6})
      for (double mu : {-0.05, 0.03, 0.12})
        for (double t : {0.25, 1.0, 5.0, 10.0}) {
          const MertonInputs in{
              .default_point = 100 * lev, .risk_free_rate_cc = 0.02, .horizon_years = t, .drift_annual = mu};
          const double merton_pd = merton_measures(in, 100, sv).pd;
          const FirstPassagePath path{100, sv, mu, 100 * lev, 0.0};
          const FirstPassageProbability p = first_passage_probability(path, t);
          CHECK(p.pd >= merton_pd * (1 - 1e-12));
          // Non-decreasing in t.
          CHECK(first_passage_probability(path, t * 1.5).pd >= p.pd);
        }
  const FirstPassageInputs far{.merton = {.equity_value = 400,
                                          .equity_vol_annual = 0.45,
                                          .default_point = 700,
                                          .risk_free_rate_cc = 0.03,
                                          .horizon_years = 1,
                                          .drift_annual = 0.05},
                               .barrier = {.default_point_ratio = 1e-12, .growth_rate_cc = 0.0}};
  const FirstPassageSolution fs = solve_first_passage(far);
  const AssetSolution ms = solve_asset(far.merton);
  REQUIRE(fs.usable());
  REQUIRE(ms.usable());
  CHECK(fs.asset_value == doctest::Approx(ms.asset_value).epsilon(1e-10));
  CHECK(fs.asset_vol_annual == doctest::Approx(ms.asset_vol_annual).epsilon(1e-10));
  CHECK(first_passage_equity(far, ms.asset_value, ms.asset_vol_annual).value ==
        doctest::Approx(equity_value(far.merton, ms.asset_value, ms.asset_vol_annual)).epsilon(1e-14));
  CHECK(first_passage_probability(path_of(far, fs), 10.0).pd < 1e-300);
}

TEST_CASE("first-passage PD tends to the ruin probability of Brownian motion with drift") {
  // Ref: for X_t = x0 + nu t + s W_t with nu > 0, P(X ever <= 0) = exp(-2 nu x0 / s^2); with nu <= 0
  // it is 1 (gambler's ruin in continuous time; e.g. Karlin and Taylor, A First Course in Stochastic
  // Processes, from memory).
  const FirstPassagePath up{100, 0.2, 0.08, 70, 0.0};  // nu = 0.06
  const double nu = 0.08 - 0.02;
  CHECK(first_passage_probability(up, 1e5).pd ==
        doctest::Approx(std::exp(-2 * nu * std::log(100.0 / 70) / 0.04)).epsilon(1e-12));
  const FirstPassagePath down{100, 0.2, 0.01, 70, 0.0};  // nu = -0.01
  CHECK(first_passage_probability(down, 1e5).pd == doctest::Approx(1.0).epsilon(1e-12));
  CHECK(first_passage_probability(up, 0.0).pd == 0.0);
  CHECK(first_passage_probability({60, 0.2, 0.05, 70, 0.0}, 1.0).pd == 1.0);  // already below
}

TEST_CASE("calibration recovers the asset value and volatility that produced E and sE") {
  // Reference: (V, sV) chosen first; E and sE computed from them with the closed forms; the solver
  // must return them (the equations are then solved exactly, so the truth is known).
  int n = 0, fallback = 0;
  long iterations = 0;
  double worst = 0.0;
  for (double v_over_dp : {1.3, 2.0, 5.0})
    for (double sv : {0.08, 0.25, 0.5})
      for (double t : {0.5, 1.0, 5.0})
        for (double r : {0.0, 0.03, 0.08})
          for (double ratio : {0.6, 1.0})
            for (double growth : {0.0, 0.02}) {
              FirstPassageInputs in{.merton = {.default_point = 100,
                                               .risk_free_rate_cc = r,
                                               .horizon_years = t,
                                               .drift_annual = r + 0.03},
                                    .barrier = {ratio, growth}};
              const double v = 100 * v_over_dp;
              const BarrierCallValue c = first_passage_equity(in, v, sv);
              in.merton.equity_value = c.value;
              in.merton.equity_vol_annual = c.delta * sv * v / c.value;
              const FirstPassageSolution s = solve_first_passage(in);
              CAPTURE(v_over_dp);
              CAPTURE(sv);
              CAPTURE(t);
              CAPTURE(r);
              CAPTURE(ratio);
              CAPTURE(growth);
              REQUIRE(s.usable());
              CHECK(s.residual <= 1e-12);
              CHECK(first_passage_residual(in, s.asset_value, s.asset_vol_annual) == s.residual);
              const double e =
                  std::max(std::fabs(s.asset_value / v - 1), std::fabs(s.asset_vol_annual / sv - 1));
              worst = std::max(worst, e);
              CHECK(e <= 1e-9);
              ++n;
              iterations += s.iterations;
              fallback += s.method == SolveMethod::bracketed;
            }
  MESSAGE("first-passage calibration: " << n << " cases, worst relative error " << worst
                                        << ", mean iterations " << double(iterations) / n << ", fallback "
                                        << fallback);
  CHECK(double(iterations) / n < 10.0);
}

TEST_CASE("realistic obligors: solved, or reported as not solved, never a false convergence") {
  const auto book = testing::generated_obligors(2000, 808);
  int solved = 0, no_bracket = 0, budget = 0, elsewhere = 0;
  for (const MertonInputs& m : book) {
    const FirstPassageInputs in{m, {}};
    const FirstPassageSolution s = solve_first_passage(in);
    if (s.usable()) {
      ++solved;
      CHECK(first_passage_residual(in, s.asset_value, s.asset_vol_annual) <= 1e-12);
      CHECK(s.asset_value > m.default_point);  // above the barrier
      continue;
    }
    CHECK(s.status != FirstPassageStatus::invalid_input);
    if (s.status == FirstPassageStatus::not_bracketed) ++no_bracket;
    if (s.status == FirstPassageStatus::max_iterations) ++budget;
    // With the barrier at DP, a riskless asset path just above it is worth DP - DP e^(-rT) to the
    // shareholders; equity values below that often have no solution (see first_passage.hpp), and
    // just above it the system is ill-conditioned. Failures stay within 1% of that floor.
    const double riskless_floor = m.default_point * -std::expm1(-m.risk_free_rate_cc * m.horizon_years);
    if (m.equity_value > 1.01 * riskless_floor) ++elsewhere;
  }
  MESSAGE("generated obligors under the default barrier: solved "
          << solved << " of 2000, no bracket " << no_bracket << ", budget " << budget
          << ", failed more than 1% above the floor " << elsewhere);
  CHECK(elsewhere == 0);
  CHECK(solved > 1800);
}

TEST_CASE("a no-solution case and an exhausted budget are reported as such") {
  // Equity 30 against a barrier at DP = 1000 with r = 5%: a riskless path just above the barrier
  // is worth 1000 (1 - e^-0.05) = 48.8 > 30, so no (V, sV) gives E = 30.
  FirstPassageInputs in{.merton = {.equity_value = 30,
                                   .equity_vol_annual = 0.3,
                                   .default_point = 1000,
                                   .risk_free_rate_cc = 0.05,
                                   .horizon_years = 1,
                                   .drift_annual = 0.05},
                        .barrier = {}};
  const FirstPassageSolution none = solve_first_passage(in);
  CHECK(none.status == FirstPassageStatus::not_bracketed);
  CHECK_FALSE(none.usable());
  in.merton.equity_value = 400;
  in.merton.default_point = 700;
  MertonSolveOptions starve;
  starve.max_newton_iterations = 1;
  starve.max_fallback_iterations = 2;
  const FirstPassageSolution s = solve_first_passage(in, starve);
  CHECK_FALSE(s.usable());
  CHECK(s.status != FirstPassageStatus::converged);
  CHECK(solve_first_passage(in).usable());
}

TEST_CASE("invalid inputs and barriers are rejected before solving") {
  FirstPassageInputs in{.merton = {.equity_value = 400,
                                   .equity_vol_annual = 0.45,
                                   .default_point = 700,
                                   .risk_free_rate_cc = 0.03,
                                   .horizon_years = 1,
                                   .drift_annual = 0.05},
                        .barrier = {}};
  CHECK(std::strlen(barrier_problem(in.barrier)) == 0);
  for (double bad : {0.0, -1.0, std::nan(""), std::numeric_limits<double>::infinity()}) {
    FirstPassageInputs b = in;
    b.barrier.default_point_ratio = bad;
    const FirstPassageSolution s = solve_first_passage(b);
    CHECK(s.status == FirstPassageStatus::invalid_input);
    CHECK(std::string(s.barrier_check) == "barrier ratio must be positive and finite");
  }
  FirstPassageInputs g = in;
  g.barrier.growth_rate_cc = 1.5;
  CHECK(std::string(solve_first_passage(g).barrier_check) == "barrier growth must lie in [-1, 1]");
  for (double bad : {0.0, -5.0, std::nan("")}) {
    FirstPassageInputs e = in;
    e.merton.equity_value = bad;
    const FirstPassageSolution s = solve_first_passage(e);
    CHECK(s.status == FirstPassageStatus::invalid_input);
    CHECK(s.input_check.field == MertonField::equity_value);
  }
  CHECK(to_string(FirstPassageStatus::not_bracketed) == "not_bracketed");
}

TEST_CASE("ln N(x) keeps its digits where N(x) underflows") {
  // Reference: long-double erfcl from the C library (64-bit mantissa), for x down to -100.
  for (double x : {8.0, 1.0, 0.0, -1.0, -10.0, -30.0, -36.9, -37.1, -40.0, -70.0, -100.0}) {
    const long double ref = logl(0.5L * erfcl(-static_cast<long double>(x) / sqrtl(2.0L)));
    CAPTURE(x);
    CHECK(log_norm_cdf(x) == doctest::Approx(static_cast<double>(ref)).epsilon(1e-13));
  }
}

TEST_CASE("the first-passage solver allocates nothing") {
  const auto book = testing::generated_obligors(200, 6);
  double sink = 0.0;
  const long before = testing::g_allocations.load();
  for (const MertonInputs& m : book) sink += solve_first_passage({m, {}}).asset_value;
  sink += solve_first_passage({{30, 0.3, 1000, 0.05, 1, 0.05}, {}}).iterations;  // the fallback too
  const long after = testing::g_allocations.load();
  CHECK(sink > 0.0);
  CHECK(after == before);
}
