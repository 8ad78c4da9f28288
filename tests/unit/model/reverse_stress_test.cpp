// Tests of the reverse-stress searches (src/reverse_stress.cpp).
#include "firmcall/model/reverse_stress.hpp"

#include <doctest/doctest.h>

#include <cmath>

#include "firmcall/model/shock.hpp"
#include "obligor_sample.hpp"
#include "reference_solver.hpp"

using namespace firmcall;

namespace {

// PD after a shock, re-solved the way a stress run does it (apply_shock, solve_asset).
double pd_after(const MertonInputs& base, const Shock& shock) {
  ShockEffect e;
  e.add(shock);
  const MertonInputs in = apply_shock(base, e, false);
  const AssetSolution s = solve_asset(in);
  REQUIRE(s.usable());
  return merton_measures(in, s.asset_value, s.asset_vol_annual).pd;
}

// PD from the independent long-double reference solver (tests/support/reference_solver.hpp).
double reference_pd(const MertonInputs& in) {
  const auto r = testing::reference_solve(in.equity_value, in.equity_vol_annual, in.default_point,
                                          in.risk_free_rate_cc, in.horizon_years);
  const long double t = in.horizon_years;
  const long double dd =
      (logl(r.asset_value / in.default_point) + (in.drift_annual - 0.5L * r.asset_vol * r.asset_vol) * t) /
      (r.asset_vol * sqrtl(t));
  return static_cast<double>(testing::ref_ncdf(-dd));
}

// The searches as they ran before the asset-vol hold: every trial re-solves (V, sV) from (E', sE').
const ReverseStressOptions kResolve = [] {
  ReverseStressOptions o;
  o.hold = StressHold::equity_vol;
  return o;
}();

const MertonInputs kObligor{.equity_value = 2450,
                            .equity_vol_annual = 0.31,
                            .default_point = 1770,
                            .risk_free_rate_cc = 0.0265,
                            .horizon_years = 1,
                            .drift_annual = 0.0265};

}  // namespace

TEST_CASE("re-running with the found shock gives the target PD to 1e-9") {
  // Over generated obligors with PD below the targets, for several targets.
  testing::SampleGenerator gen(42);
  int found_fall = 0;
  int found_vol = 0;
  double worst = 0.0;
  for (int i = 0; i < 150; ++i) {
    bool follows = false;
    MertonInputs in = gen.obligor(follows);
    in.default_point = in.equity_value * gen.log_uniform(0.1, 3.0);
    for (double target : {0.001, 0.05, 0.2}) {
      const ReverseResult fall = reverse_equity_fall(in, target, kResolve);
      if (fall.status == ReverseStatus::found) {
        ++found_fall;
        const double pd = pd_after(in, {.equity_change = -fall.shock});
        CHECK(pd == fall.pd_at_shock);
        worst = std::max(worst, std::fabs(pd / target - 1.0));
      }
      const ReverseResult vol = reverse_vol_multiplier(in, target, kResolve);
      if (vol.status == ReverseStatus::found) {
        ++found_vol;
        const double pd = pd_after(in, {.equity_vol_multiplier = vol.shock});
        CHECK(pd == vol.pd_at_shock);
        worst = std::max(worst, std::fabs(pd / target - 1.0));
      }
    }
  }
  MESSAGE("found " << found_fall << " equity falls and " << found_vol
                   << " volatility multipliers; worst |PD / target - 1| = " << worst);
  // Holding equity volatility, an equity fall lowers the solved asset volatility with it, so many
  // obligors never reach the higher targets by a fall alone (not_reachable); enough do to test.
  CHECK(found_fall >= 50);
  CHECK(found_vol >= 250);
  CHECK(worst < 1e-9);
}

TEST_CASE("the found equity fall agrees with the independent long-double reference solver") {
  // Independent computation: tests/support/reference_solver.hpp (nested bisection in long double).
  // This obligor's PD (about 1e-6 as it stands) approaches only about 6e-4 as its equity falls
  // towards 0 with equity volatility held, so the fall is searched for a 2e-4 level.
  const ReverseResult fall = reverse_equity_fall(kObligor, 2e-4, kResolve);
  REQUIRE(fall.status == ReverseStatus::found);
  MertonInputs shocked = kObligor;
  shocked.equity_value = kObligor.equity_value * (1.0 - fall.shock);
  CHECK(reference_pd(shocked) == doctest::Approx(2e-4).epsilon(1e-8));
  CHECK(reverse_equity_fall(kObligor, 0.05, kResolve).status == ReverseStatus::not_reachable);
  const ReverseResult vol = reverse_vol_multiplier(kObligor, 0.05, kResolve);
  REQUIRE(vol.status == ReverseStatus::found);
  shocked = kObligor;
  shocked.equity_vol_annual = kObligor.equity_vol_annual * vol.shock;
  CHECK(reference_pd(shocked) == doctest::Approx(0.05).epsilon(1e-8));
}

TEST_CASE("below PD 50% the volatility multiplier found is the only crossing") {
  // Guaranteed by the model (see sensitivity_test, "more equity volatility"): while DD > 0
  // (PD < 1/2), PD rises with the equity volatility, so PD(m) < target for every m below the one
  // found. Checked on a fine grid.
  testing::SampleGenerator gen(5);
  for (int i = 0; i < 40; ++i) {
    bool follows = false;
    MertonInputs in = gen.obligor(follows);
    in.default_point = in.equity_value * gen.log_uniform(0.1, 3.0);
    const ReverseResult vol = reverse_vol_multiplier(in, 0.05, kResolve);
    if (vol.status != ReverseStatus::found) continue;
    for (int k = 0; k < 50; ++k) {
      const double m = 1.0 + (vol.shock - 1.0) * k / 50.0;
      CHECK(pd_after(in, {.equity_vol_multiplier = m}) < 0.05);
    }
  }
}

TEST_CASE("reverse stress reports already reached, not reachable and invalid levels") {
  // Already at the level: no shock needed.
  const double pd0 = pd_after(kObligor, {});
  const ReverseResult at = reverse_equity_fall(kObligor, pd0 * 0.5, kResolve);
  CHECK(at.status == ReverseStatus::already_reached);
  CHECK(at.shock == 0.0);
  CHECK(at.pd_at_shock == pd0);
  CHECK(reverse_vol_multiplier(kObligor, pd0 * 0.5, kResolve).shock == 1.0);

  // A firm with almost no debt cannot reach a 50% PD with at most twice its volatility: with DP/E
  // = 0.01 and sE 0.2 x 2, sV < 0.4 and DD > (ln 100 - 0.08)/0.4 > 11.
  const MertonInputs safe{.equity_value = 1000,
                          .equity_vol_annual = 0.2,
                          .default_point = 10,
                          .risk_free_rate_cc = 0.03,
                          .horizon_years = 1,
                          .drift_annual = 0.03};
  ReverseStressOptions narrow = kResolve;
  narrow.max_vol_multiplier = 2.0;
  CHECK(reverse_vol_multiplier(safe, 0.5, narrow).status == ReverseStatus::not_reachable);

  for (double bad : {0.0, 1.0, -0.1, std::nan("")}) {
    CHECK(reverse_equity_fall(kObligor, bad, kResolve).status == ReverseStatus::invalid_input);
    CHECK(reverse_vol_multiplier(kObligor, bad, kResolve).status == ReverseStatus::invalid_input);
  }
  MertonInputs broken = kObligor;
  broken.equity_vol_annual = -1.0;
  CHECK(reverse_equity_fall(broken, 0.05, kResolve).status == ReverseStatus::invalid_input);
  CHECK(to_string(ReverseStatus::not_reachable) == "not_reachable");
}

TEST_CASE("asset-vol hold: an equity fall reaches the level the equity-vol re-solve never reaches") {
  // kObligor (PD about 1e-6): with sE held its PD stays below 5% for every fall up to 99.9% (the
  // test above). Holding sV, the equity equation alone fixes V; as E -> 0, V -> a point where the
  // call is worthless, V below DP, and PD -> above 50% (Merton 1974: the call value C(V) is
  // increasing in V, so a smaller E means a smaller V).
  const ReverseResult fall = reverse_equity_fall(kObligor, 0.05);
  REQUIRE(fall.status == ReverseStatus::found);
  // Re-running the found fall with sV held (the base solve's sV, V from the equity equation by
  // the long-double reference bisection of tests/support/reference_solver.hpp) gives PD 5%.
  const auto base = testing::reference_solve(kObligor.equity_value, kObligor.equity_vol_annual,
                                             kObligor.default_point, kObligor.risk_free_rate_cc, 1.0);
  const long double e1 = kObligor.equity_value * (1.0L - fall.shock);
  const long double k = kObligor.default_point * expl(-static_cast<long double>(kObligor.risk_free_rate_cc));
  const long double v1 = testing::ref_asset_value(base.asset_vol, e1, k, 1.0L);
  const long double dd =
      (logl(v1 / kObligor.default_point) + (kObligor.drift_annual - 0.5L * base.asset_vol * base.asset_vol)) /
      base.asset_vol;
  CHECK(static_cast<double>(testing::ref_ncdf(-dd)) == doctest::Approx(0.05).epsilon(1e-9));
  CHECK(fall.pd_at_shock == doctest::Approx(0.05).epsilon(1e-9));
  // The implied equity volatility at the found fall: N(d1) sV V / E (Ito), above the base sE.
  const long double st = base.asset_vol;
  const long double d1 = (logl(v1 / k) + 0.5L * st * st) / st;
  CHECK(fall.equity_vol_at_shock ==
        doctest::Approx(static_cast<double>(testing::ref_ncdf(d1) * base.asset_vol * v1 / e1)).epsilon(1e-9));
  CHECK(fall.equity_vol_at_shock > kObligor.equity_vol_annual);

  // The multiplier acts on sV with the asset-vol hold: E held, V re-solved at sV m.
  const ReverseResult vol = reverse_vol_multiplier(kObligor, 0.05);
  REQUIRE(vol.status == ReverseStatus::found);
  const long double sv = base.asset_vol * vol.shock;
  const long double v2 = testing::ref_asset_value(sv, kObligor.equity_value, k, 1.0L);
  const long double dd2 = (logl(v2 / kObligor.default_point) + (kObligor.drift_annual - 0.5L * sv * sv)) / sv;
  CHECK(static_cast<double>(testing::ref_ncdf(-dd2)) == doctest::Approx(0.05).epsilon(1e-9));
}
