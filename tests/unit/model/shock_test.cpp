// Tests of stress shocks and their combination (src/shock.cpp). The expected values follow the
// rules documented in include/firmcall/shock.hpp, recomputed here by hand.
#include "firmcall/model/shock.hpp"

#include <doctest/doctest.h>

#include <cstring>

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
