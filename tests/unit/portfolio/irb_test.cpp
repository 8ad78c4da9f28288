// Tests of the Basel II IRB corporate capital formula (src/irb.cpp) against the illustrative risk
// weights the Basel framework publishes, and against an independent evaluation with Boost.Math.
#include <doctest/doctest.h>

#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <string>

#include "firmcall/portfolio/irb.hpp"

using namespace firmcall;

TEST_CASE("IRB risk weights match the Basel illustrative table for corporate exposures") {
  // Ref: BCBS, International Convergence of Capital Measurement and Capital Standards (June 2006),
  // Annex 5, "Illustrative IRB risk weights", corporate exposures, LGD 45%, M 2.5 years (values
  // quoted from memory; the table prints risk weights in percent with two decimals). The tolerance
  // is 0.01 percentage points: half a unit of the printed precision plus the table's own rounding
  // (at PD 2%, 5% and 15% the printed value and the formula differ by 0.006-0.007 points).
  struct Row {
    double pd;
    double risk_weight_pct;
  };
  const Row table[] = {{0.0003, 14.44},  {0.0005, 19.65},  {0.0010, 29.65},  {0.0025, 49.47},
                       {0.0040, 62.72},  {0.0050, 69.61},  {0.0075, 82.78},  {0.0100, 92.32},
                       {0.0130, 100.95}, {0.0150, 105.59}, {0.0200, 114.86}, {0.0250, 122.16},
                       {0.0300, 128.44}, {0.0400, 139.58}, {0.0500, 149.86}, {0.0600, 159.61},
                       {0.1000, 193.09}, {0.1500, 221.54}, {0.2000, 238.23}};
  for (const Row& row : table) {
    CAPTURE(row.pd);
    const IrbResult r = irb_corporate({.pd = row.pd, .lgd = 0.45, .ead = 1000.0, .maturity_years = 2.5});
    REQUIRE(r.ok());
    CHECK(std::fabs(100.0 * r.risk_weight - row.risk_weight_pct) <= 0.01);
    // RWA = 12.5 K EAD and capital = K EAD (para 272), whatever the exposure.
    CHECK(r.rwa == doctest::Approx(12.5 * r.capital_ratio * 1000.0).epsilon(1e-15));
    CHECK(r.capital == doctest::Approx(r.capital_ratio * 1000.0).epsilon(1e-15));
  }
}

TEST_CASE("IRB PD floor, maturity bounds and correlation range follow the framework") {
  // Ref: BCBS 2006 para 285: PD is at least 0.03%. A PD below the floor gets the floor's weight.
  const IrbResult floored = irb_corporate({.pd = 0.00001, .lgd = 0.45, .ead = 1.0});
  const IrbResult at_floor = irb_corporate({.pd = 0.0003, .lgd = 0.45, .ead = 1.0});
  REQUIRE(floored.ok());
  CHECK(floored.pd == 0.0003);
  CHECK(floored.risk_weight == at_floor.risk_weight);
  // Ref: para 272: R runs from 0.24 (PD -> 0) to 0.12 (high PD); e^-50 is below double resolution
  // next to 1, so R(1) is 0.12 to rounding.
  CHECK(irb_corporate_correlation(0.0) == doctest::Approx(0.24).epsilon(1e-15));
  CHECK(irb_corporate_correlation(1.0) == doctest::Approx(0.12).epsilon(1e-15));
  CHECK(irb_corporate_correlation(0.01) < irb_corporate_correlation(0.001));
  // Ref: para 320: M is held to [1, 5] years.
  const IrbResult short_m = irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 1.0, .maturity_years = 0.25});
  const IrbResult one_year = irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 1.0, .maturity_years = 1.0});
  const IrbResult long_m = irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 1.0, .maturity_years = 30.0});
  const IrbResult five = irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 1.0, .maturity_years = 5.0});
  CHECK(short_m.maturity_years == 1.0);
  CHECK(short_m.risk_weight == one_year.risk_weight);
  CHECK(long_m.maturity_years == 5.0);
  CHECK(long_m.risk_weight == five.risk_weight);
  CHECK(one_year.risk_weight < five.risk_weight);
  // A defaulted exposure (PD = 1) has no unexpected loss left in the formula: K = 0.
  const IrbResult defaulted = irb_corporate({.pd = 1.0, .lgd = 0.45, .ead = 1.0});
  REQUIRE(defaulted.ok());
  CHECK(defaulted.capital_ratio == 0.0);
  // LGD scales K linearly (the formula is LGD x [...]).
  const IrbResult half = irb_corporate({.pd = 0.01, .lgd = 0.225, .ead = 1.0});
  const IrbResult full = irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 1.0});
  CHECK(half.capital_ratio == doctest::Approx(0.5 * full.capital_ratio).epsilon(1e-14));
}

TEST_CASE("IRB maturity adjustment agrees with an independent evaluation of para 272") {
  // Independent computation: the para 272 formula written out with Boost.Math's normal quantile.
  const boost::math::normal_distribution<double> z;
  for (double pd : {0.0003, 0.002, 0.01, 0.07, 0.3}) {
    for (double m : {1.0, 2.5, 3.7, 5.0}) {
      CAPTURE(pd);
      CAPTURE(m);
      const double w = (1.0 - std::exp(-50.0 * pd)) / (1.0 - std::exp(-50.0));
      const double r = 0.12 * w + 0.24 * (1.0 - w);
      const double b = std::pow(0.11852 - 0.05478 * std::log(pd), 2.0);
      const double x = boost::math::quantile(z, pd) / std::sqrt(1.0 - r) +
                       std::sqrt(r / (1.0 - r)) * boost::math::quantile(z, 0.999);
      const double k = (0.4 * boost::math::cdf(z, x) - pd * 0.4) * (1.0 + (m - 2.5) * b) / (1.0 - 1.5 * b);
      const IrbResult got = irb_corporate({.pd = pd, .lgd = 0.4, .ead = 250.0, .maturity_years = m});
      REQUIRE(got.ok());
      CHECK(got.correlation == doctest::Approx(r).epsilon(1e-13));
      CHECK(got.maturity_slope == doctest::Approx(b).epsilon(1e-13));
      CHECK(got.capital_ratio == doctest::Approx(k).epsilon(1e-12));
      CHECK(got.rwa == doctest::Approx(12.5 * k * 250.0).epsilon(1e-12));
    }
  }
}

TEST_CASE("IRB inputs out of range are refused with the field named") {
  CHECK(std::string(irb_corporate({.pd = 1.5, .lgd = 0.45, .ead = 1.0}).message) ==
        "field 'pd': must be a probability in [0, 1]");
  CHECK(std::string(irb_corporate({.pd = 0.01, .lgd = -0.1, .ead = 1.0}).message) ==
        "field 'lgd': must be a decimal in [0, 1]");
  CHECK(std::string(irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = -1.0}).message) ==
        "field 'ead': must be non-negative and finite");
  CHECK(std::string(irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 1.0, .maturity_years = 0.0}).message) ==
        "field 'maturity': must be positive years");
  CHECK_FALSE(irb_corporate({.pd = std::nan(""), .lgd = 0.45, .ead = 1.0}).ok());
  CHECK_FALSE(irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = INFINITY}).ok());
  CHECK(irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 0.0}).ok());
}
