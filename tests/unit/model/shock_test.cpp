// Tests of stress shocks and their combination (src/shock.cpp). The expected values follow the
// rules documented in include/firmcall/shock.hpp, recomputed here by hand.
#include "firmcall/model/shock.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <cstring>

#include "reference_solver.hpp"

using namespace firmcall;

namespace {

const MertonInputs kBase{.equity_value = 400,
                         .equity_vol_annual = 0.45,
                         .default_point = 700,
                         .risk_free_rate_cc = 0.03,
                         .horizon_years = 1,
                         .drift_annual = 0.05};

bool same_bits(const MertonInputs& a, const MertonInputs& b) {
  return std::memcmp(&a, &b, sizeof a) == 0;
}

}  // namespace

TEST_CASE("a shock without changes leaves the inputs unchanged bit for bit") {
  ShockEffect e;
  CHECK(e.identity());
  e.add(Shock{});
  CHECK(e.identity());
  CHECK(e.shocks == 1);
  CHECK(same_bits(apply_shock(kBase, e, true), kBase));
  CHECK(same_bits(apply_shock(kBase, e, false), kBase));
}

TEST_CASE("one shock moves each input by the documented rule") {
  // Rules of shock.hpp: E' = E (1 + c), sE' = sE m + a/100, r' = r + b/1e4, DP' = DP (1 + d), T' = h.
  ShockEffect e;
  e.add({.equity_change = -0.3,
         .equity_vol_multiplier = 1.5,
         .equity_vol_add_points = 5,
         .rate_shift_bp = 25,
         .default_point_change = 0.1,
         .horizon_years = 2.0});
  CHECK_FALSE(e.identity());
  const MertonInputs s = apply_shock(kBase, e, /*drift_follows_rate=*/false);
  CHECK(s.equity_value == doctest::Approx(280.0).epsilon(1e-15));
  CHECK(s.equity_vol_annual == doctest::Approx(0.725).epsilon(1e-15));
  CHECK(s.risk_free_rate_cc == doctest::Approx(0.0325).epsilon(1e-15));
  CHECK(s.default_point == doctest::Approx(770.0).epsilon(1e-15));
  CHECK(s.horizon_years == 2.0);
  CHECK(s.drift_annual == kBase.drift_annual);  // an explicit drift is not moved by the rate
  const MertonInputs f = apply_shock(kBase, e, /*drift_follows_rate=*/true);
  CHECK(f.drift_annual == doctest::Approx(0.0525).epsilon(1e-15));
}

TEST_CASE("shocks combine: factors multiply, additions add, order does not matter") {
  const Shock a{
      .equity_change = -0.1, .equity_vol_multiplier = 1.2, .equity_vol_add_points = 3, .rate_shift_bp = 50};
  const Shock b{.equity_change = -0.2,
                .equity_vol_multiplier = 1.5,
                .equity_vol_add_points = -1,
                .rate_shift_bp = -20,
                .default_point_change = 0.25};
  ShockEffect ab;
  ab.add(a);
  ab.add(b);
  ShockEffect ba;
  ba.add(b);
  ba.add(a);
  const MertonInputs x = apply_shock(kBase, ab, true);
  const MertonInputs y = apply_shock(kBase, ba, true);
  CHECK(same_bits(x, y));  // two factors or two terms commute exactly in IEEE arithmetic
  // Documented combination: E (1 - 0.1)(1 - 0.2), sE (1.2 x 1.5) + (3 - 1)/100, r + (50 - 20)/1e4.
  CHECK(x.equity_value == doctest::Approx(400.0 * 0.9 * 0.8).epsilon(1e-15));
  CHECK(x.equity_vol_annual == doctest::Approx(0.45 * 1.8 + 0.02).epsilon(1e-15));
  CHECK(x.risk_free_rate_cc == doctest::Approx(0.033).epsilon(1e-15));
  CHECK(x.default_point == doctest::Approx(875.0).epsilon(1e-15));
  // Not applied one after the other: (sE m_a + a_a) m_b + a_b would differ.
  CHECK(x.equity_vol_annual != doctest::Approx((0.45 * 1.2 + 0.03) * 1.5 - 0.01).epsilon(1e-12));
}

TEST_CASE("of several horizons the last one given wins") {
  ShockEffect e;
  e.add({.horizon_years = 2.0});
  e.add({.equity_change = -0.1});
  e.add({.horizon_years = 0.5});
  CHECK(apply_shock(kBase, e, true).horizon_years == 0.5);
}

TEST_CASE("apply_shock does not validate: a negative stressed volatility reaches validate()") {
  ShockEffect e;
  e.add({.equity_vol_add_points = -50});
  const MertonInputs s = apply_shock(kBase, e, true);
  CHECK(s.equity_vol_annual < 0.0);
  CHECK(validate(s).field == MertonField::equity_vol);
}

// ---------------------------------------------------------------- the asset-vol hold

TEST_CASE("solve_asset_value_at_vol: V from the equity equation, against a long-double bisection") {
  // Reference: tests/support/reference_solver.hpp (nested bisection in long double, written
  // independently of src/), its inner level solving E = V N(d1) - K N(d2) for V at a given sV.
  struct Case {
    double e, dp, r, t, sv;
  };
  const Case cases[] = {
      {400, 700, 0.03, 1, 0.25},   {2.45, 1770, 0.0265, 1, 0.182},      {5000, 10, 0.02, 1, 0.3},
      {120, 900, -0.005, 5, 0.12}, {1e-3 * 2450, 1770, 0.0265, 1, 0.5}, {800, 800, 0.0, 0.25, 0.9}};
  for (const Case& c : cases) {
    const MertonInputs in{.equity_value = c.e,
                          .equity_vol_annual = 0.4,  // not read
                          .default_point = c.dp,
                          .risk_free_rate_cc = c.r,
                          .horizon_years = c.t,
                          .drift_annual = c.r};
    const AssetSolution s = solve_asset_value_at_vol(in, c.sv);
    REQUIRE(s.usable());
    CHECK(s.asset_vol_annual == c.sv);
    const long double k = static_cast<long double>(c.dp) * expl(-static_cast<long double>(c.r) * c.t);
    const long double v = testing::ref_asset_value(c.sv, c.e, k, c.t);
    CHECK(s.asset_value == doctest::Approx(static_cast<double>(v)).epsilon(1e-12));
    CHECK(s.asset_value > c.e);  // the root lies in (E, E + K)
  }
}

TEST_CASE("implied_equity_vol: N(d1) sV V / E gives back sE at the full inversion") {
  // The second Merton equation sE E = N(d1) sV V (Ito's lemma on E = C(V), Merton 1974) holds at
  // the full solution, so the implied equity volatility there is the observed one.
  const MertonInputs in = kBase;
  const AssetSolution full = solve_asset(in);
  REQUIRE(full.usable());
  CHECK(implied_equity_vol(in, full.asset_value, full.asset_vol_annual) ==
        doctest::Approx(in.equity_vol_annual).epsilon(1e-11));
  // Holding sV at the full solution's value gives back its V (the system's solution is unique).
  const AssetSolution held = solve_asset_value_at_vol(in, full.asset_vol_annual);
  REQUIRE(held.usable());
  CHECK(held.asset_value == doctest::Approx(full.asset_value).epsilon(1e-12));
}

TEST_CASE("asset-vol hold: equity volatility rises as equity falls (the leverage effect)") {
  // With sV held, sE = N(d1) sV V/E; as E falls leverage V/E rises faster than N(d1) falls (model
  // property of the Merton call, Merton 1974), so sE rises strictly along the path.
  const AssetSolution full = solve_asset(kBase);
  REQUIRE(full.usable());
  double last = kBase.equity_vol_annual;
  for (double fall : {0.1, 0.3, 0.5, 0.7, 0.9, 0.99, 0.999}) {
    MertonInputs in = kBase;
    in.equity_value = kBase.equity_value * (1.0 - fall);
    const AssetSolution s = solve_asset_value_at_vol(in, full.asset_vol_annual);
    REQUIRE(s.usable());
    const double se = implied_equity_vol(in, s.asset_value, s.asset_vol_annual);
    CHECK(se > last);
    last = se;
  }
}

TEST_CASE("asset-vol hold: bad inputs and options return invalid_input without throwing") {
  for (double sv : {0.0, -0.2, std::nan(""), HUGE_VAL}) {
    CHECK(solve_asset_value_at_vol(kBase, sv).status == SolveStatus::invalid_input);
  }
  MertonInputs bad = kBase;
  bad.equity_value = -1;
  CHECK(solve_asset_value_at_vol(bad, 0.2).status == SolveStatus::invalid_input);
  MertonSolveOptions o;
  o.residual_tolerance = 0.0;
  CHECK(solve_asset_value_at_vol(kBase, 0.2, o).status == SolveStatus::invalid_input);
  // Volatility shocks act on the held sV: sV' = sV m + a/100 (shock.hpp).
  ShockEffect e;
  e.add({.equity_vol_multiplier = 1.5, .equity_vol_add_points = 2});
  CHECK(stressed_asset_vol(0.2, e) == doctest::Approx(0.32).epsilon(1e-15));
  CHECK(parse_stress_hold("asset-vol") == StressHold::asset_vol);
  CHECK(parse_stress_hold("equity-vol") == StressHold::equity_vol);
  CHECK(!parse_stress_hold("asset_vol"));
  CHECK(to_string(StressHold::asset_vol) == "asset-vol");
}
