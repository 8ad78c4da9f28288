// Tests of Merton pricing and derived measures against textbook examples and identities.
#include <doctest/doctest.h>

#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <limits>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "reference_solver.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {
MertonInputs option(double strike, double rate, double t) {
  MertonInputs in;
  in.equity_value = 1.0;  // not used by equity_value()
  in.equity_vol_annual = 0.2;
  in.default_point = strike;
  in.risk_free_rate_cc = rate;
  in.horizon_years = t;
  in.drift_annual = rate;
  return in;
}
}  // namespace

TEST_CASE("equity priced as a call matches published Black-Scholes examples") {
  // Ref: Haug, The Complete Guide to Option Pricing Formulas (2nd ed.), Black-Scholes example
  // (from memory): S=60, K=65, T=0.25, r=0.08, sigma=0.30 -> call 2.1334 (4 decimals printed).
  CHECK(equity_value(option(65.0, 0.08, 0.25), 60.0, 0.30) == doctest::Approx(2.1334).epsilon(5e-5 / 2.1334));
  // Ref: Hull, Options, Futures, and Other Derivatives, Black-Scholes-Merton example (from memory):
  // S=42, K=40, r=0.10, sigma=0.20, T=0.5 -> call 4.76 (2 decimals printed).
  CHECK(std::fabs(equity_value(option(40.0, 0.10, 0.5), 42.0, 0.20) - 4.76) < 0.005);
}

TEST_CASE("Hull's worked example of default probability from equity prices") {
  // Ref: Hull, Options, Futures, and Other Derivatives, chapter "Credit Risk", example "Using
  // equity prices to estimate default probabilities" (from memory): E=3, sE=0.80, D=10, r=0.05,
  // T=1 gives V=12.40, sV=0.2123, d2=1.1408, risk-neutral PD N(-d2)=0.127, debt value 9.40.
  MertonInputs in{.equity_value = 3.0,
                  .equity_vol_annual = 0.80,
                  .default_point = 10.0,
                  .risk_free_rate_cc = 0.05,
                  .horizon_years = 1.0,
                  .drift_annual = 0.05};
  const AssetSolution s = solve_asset(in);
  REQUIRE(s.usable());
  CHECK(std::fabs(s.asset_value - 12.40) < 0.005);
  CHECK(std::fabs(s.asset_vol_annual - 0.2123) < 0.00005);
  const MertonMeasures m = merton_measures(in, s.asset_value, s.asset_vol_annual);
  CHECK(std::fabs(m.d2 - 1.1408) < 0.00005);
  CHECK(std::fabs(m.pd_risk_neutral - 0.127) < 0.0005);
  CHECK(std::fabs(m.debt_value - 9.40) < 0.005);
  // With mu = r the physical and risk-neutral measures coincide.
  CHECK(m.pd == doctest::Approx(m.pd_risk_neutral).epsilon(1e-15));
}

TEST_CASE("identities at the solution: E + D = V, equity and its volatility are reproduced") {
  const boost::math::normal_distribution<double> z;
  for (const MertonInputs& in : testing::generated_obligors(500, 11)) {
    const AssetSolution s = solve_asset(in);
    REQUIRE(s.usable());
    const MertonMeasures m = merton_measures(in, s.asset_value, s.asset_vol_annual);
    CAPTURE(in.equity_value);
    CAPTURE(in.default_point);
    // Balance sheet identity (debt + equity = assets): scale of the largest term.
    CHECK(std::fabs(m.debt_value + in.equity_value - s.asset_value) <= 1e-12 * s.asset_value);
    // Re-pricing the equity returns E (to the solver's tolerance on (E + K)).
    const double k = in.default_point * std::exp(-in.risk_free_rate_cc * in.horizon_years);
    CHECK(std::fabs(equity_value(in, s.asset_value, s.asset_vol_annual) - in.equity_value) <=
          1e-12 * (in.equity_value + k));
    // sE = N(d1) sV V / E (Ito's lemma), with N from Boost.Math.
    const double se = boost::math::cdf(z, m.d1) * s.asset_vol_annual * s.asset_value / in.equity_value;
    CHECK(se == doctest::Approx(in.equity_vol_annual).epsilon(1e-11));
    // PD = N(-DD), DD recomputed independently in long double, N(-x) from Boost.Math.
    const long double st =
        static_cast<long double>(s.asset_vol_annual) * std::sqrt((long double)in.horizon_years);
    const long double dd =
        (std::log((long double)s.asset_value / in.default_point) +
         ((long double)in.drift_annual - 0.5L * s.asset_vol_annual * s.asset_vol_annual) * in.horizon_years) /
        st;
    CHECK(m.distance_to_default == doctest::Approx(static_cast<double>(dd)).epsilon(1e-12));
    const double pd_ref = boost::math::cdf(boost::math::complement(z, static_cast<double>(dd)));
    if (pd_ref < 1e-300) {
      CHECK(m.pd < 1e-290);  // deep tail near the bottom of the double range
    } else {
      CHECK(m.pd == doctest::Approx(pd_ref).epsilon(1e-11).scale(0));
    }
    CHECK(m.leverage == doctest::Approx(in.default_point / s.asset_value).epsilon(1e-15));
  }
}

TEST_CASE("a PD of 1e-20 and tiny spreads keep their relative accuracy") {
  // Choose V and sV so that DD is about 9.26 (N(-9.262) ~ 1e-20); compare against long double.
  MertonInputs in{.equity_value = 1000.0,
                  .equity_vol_annual = 0.15,
                  .default_point = 180.0,
                  .risk_free_rate_cc = 0.03,
                  .horizon_years = 1.0,
                  .drift_annual = 0.03};
  const AssetSolution s = solve_asset(in);
  REQUIRE(s.usable());
  const MertonMeasures m = merton_measures(in, s.asset_value, s.asset_vol_annual);
  CHECK(m.pd > 0.0);
  CHECK(m.pd < 1e-15);
  const long double v = s.asset_value, sv = s.asset_vol_annual, t = 1.0L, r = 0.03L, dp = 180.0L;
  const long double st = sv * sqrtl(t);
  const long double dd = (logl(v / dp) + (r - 0.5L * sv * sv) * t) / st;
  const long double pd_ref = 0.5L * erfcl(dd / sqrtl(2.0L));
  CHECK(m.pd == doctest::Approx(static_cast<double>(pd_ref)).epsilon(1e-11).scale(0));
  // Spread from the put with log1p, against long double: s = -ln(1 - P/K)/T.
  const long double k = dp * expl(-r * t);
  const long double d1 = (logl(v / k) + 0.5L * st * st) / st, d2 = d1 - st;
  const long double put = k * 0.5L * erfcl(d2 / sqrtl(2.0L)) - v * 0.5L * erfcl(d1 / sqrtl(2.0L));
  const long double spread_bp = -log1pl(-put / k) / t * 1e4L;
  REQUIRE(spread_bp > 0);
  CHECK(m.spread_bp == doctest::Approx(static_cast<double>(spread_bp)).epsilon(1e-9).scale(0));
}

TEST_CASE("validate names the first broken constraint") {
  const MertonInputs good{.equity_value = 10,
                          .equity_vol_annual = 0.3,
                          .default_point = 5,
                          .risk_free_rate_cc = 0.02,
                          .horizon_years = 1,
                          .drift_annual = 0.02};
  CHECK(validate(good).ok());
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  struct Case {
    MertonInputs in;
    MertonField field;
  };
  auto with = [&](auto mutate) {
    MertonInputs in = good;
    mutate(in);
    return in;
  };
  const Case cases[] = {
      {with([](MertonInputs& i) { i.equity_value = 0; }), MertonField::equity_value},
      {with([](MertonInputs& i) { i.equity_value = -1; }), MertonField::equity_value},
      {with([&](MertonInputs& i) { i.equity_value = nan; }), MertonField::equity_value},
      {with([&](MertonInputs& i) { i.equity_value = inf; }), MertonField::equity_value},
      {with([](MertonInputs& i) { i.equity_vol_annual = 0; }), MertonField::equity_vol},
      {with([&](MertonInputs& i) { i.equity_vol_annual = nan; }), MertonField::equity_vol},
      {with([](MertonInputs& i) { i.default_point = 0; }), MertonField::default_point},
      {with([](MertonInputs& i) { i.default_point = -3; }), MertonField::default_point},
      {with([&](MertonInputs& i) { i.risk_free_rate_cc = nan; }), MertonField::rate},
      {with([](MertonInputs& i) { i.horizon_years = 0; }), MertonField::horizon},
      {with([&](MertonInputs& i) { i.horizon_years = -inf; }), MertonField::horizon},
      {with([&](MertonInputs& i) { i.drift_annual = inf; }), MertonField::drift},
  };
  for (const Case& c : cases) {
    const MertonInputCheck check = validate(c.in);
    CHECK(check.field == c.field);
    const AssetSolution s = solve_asset(c.in);
    CHECK(s.status == SolveStatus::invalid_input);
    CHECK_FALSE(s.usable());
    CHECK(s.input_check.field == c.field);
  }
  CHECK(to_string(MertonField::equity_vol) == "equity_vol");
}
