// Tests of the one-factor closed forms and the large-portfolio limit (src/vasicek.cpp) against
// published identities and independent integrals with Boost.Math.
#include <doctest/doctest.h>

#include <boost/math/distributions/normal.hpp>
#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <cmath>
#include <numbers>
#include <vector>

#include "firmcall/portfolio/irb.hpp"
#include "firmcall/portfolio/vasicek.hpp"

using namespace firmcall;

namespace {
const boost::math::normal_distribution<double> kNormal;

// P(X <= a, Y <= b; r) as the integral over Y of N((a - r y) / sqrt(1 - r^2)) phi(y), by Boost's
// adaptive Gauss-Kronrod rule, split at the step y = a / r.
double bvn_reference(double a, double b, double r) {
  const double s = std::sqrt(1.0 - r * r);
  const auto f = [&](double y) {
    return boost::math::cdf(kNormal, (a - r * y) / s) * boost::math::pdf(kNormal, y);
  };
  using GK = boost::math::quadrature::gauss_kronrod<double, 61>;
  const double lo = -40.0;
  const double mid = std::clamp(a / r, lo, b);
  return GK::integrate(f, lo, mid, 15, 1e-13) + GK::integrate(f, mid, b, 15, 1e-13);
}
}  // namespace

TEST_CASE("bivariate normal distribution function: Sheppard's formula and an independent integral") {
  // Ref: Sheppard (1898): P(X <= 0, Y <= 0) = 1/4 + asin(r) / (2 pi), exact.
  for (double r : {-0.9, -0.3, 0.0, 0.2, 0.5, 0.9, 0.95, 0.999}) {
    CAPTURE(r);
    CHECK(bivariate_normal_cdf(0.0, 0.0, r) ==
          doctest::Approx(0.25 + std::asin(r) / (2.0 * std::numbers::pi)).epsilon(1e-13));
  }
  // Independent computation: Boost.Math Gauss-Kronrod over the conditioning variable.
  for (double r : {0.05, 0.49, 0.92, 0.93, 0.995}) {
    for (double a : {-6.0, -3.1, 0.4, 2.5}) {
      for (double b : {-4.5, -0.5, 1.7}) {
        CAPTURE(r);
        CAPTURE(a);
        CAPTURE(b);
        const double ref = bvn_reference(a, b, r);
        CHECK(bivariate_normal_cdf(a, b, r) == doctest::Approx(ref).epsilon(1e-11).scale(0));
      }
    }
  }
  // Independence and the margins.
  CHECK(bivariate_normal_cdf(-1.0, 0.5, 0.0) ==
        doctest::Approx(boost::math::cdf(kNormal, -1.0) * boost::math::cdf(kNormal, 0.5)).epsilon(1e-15));
  CHECK(bivariate_normal_cdf(INFINITY, 0.5, 0.4) == doctest::Approx(boost::math::cdf(kNormal, 0.5)));
  CHECK(bivariate_normal_cdf(-INFINITY, 0.5, 0.4) == 0.0);
  CHECK(std::isnan(bivariate_normal_cdf(0.0, 0.0, 1.0)));
}

TEST_CASE("Vasicek distribution: quantile, complements and expected shortfall") {
  // Ref: Vasicek (2002): the default rate p(Z) is below q_a exactly when Z is above G(1 - a), so
  // the distribution function at the quantile is the level.
  for (double pd : {0.0005, 0.01, 0.2}) {
    for (double rho : {0.05, 0.12, 0.24, 0.6}) {
      for (double tail : {0.1, 0.01, 0.001, 1e-5}) {
        CAPTURE(pd);
        CAPTURE(rho);
        CAPTURE(tail);
        const double q = vasicek_quantile_tail(tail, pd, rho);
        CHECK(vasicek_exceedance(q, pd, rho) == doctest::Approx(tail).epsilon(1e-10).scale(0));
        CHECK(vasicek_cdf(q, pd, rho) == doctest::Approx(1.0 - tail).epsilon(1e-12));
        // The quantile is the conditional PD at the factor's lower tail quantile.
        CHECK(q ==
              doctest::Approx(conditional_pd(pd, rho, boost::math::quantile(kNormal, tail))).epsilon(1e-12));
        // Independent computation: ES = (1/tail) int_{-inf}^{G(tail)} p(z) phi(z) dz (Boost Gauss-Kronrod).
        const double zt = boost::math::quantile(kNormal, tail);
        const auto f = [&](double z) {
          return boost::math::cdf(kNormal, (boost::math::quantile(kNormal, pd) - std::sqrt(rho) * z) /
                                               std::sqrt(1.0 - rho)) *
                 boost::math::pdf(kNormal, z);
        };
        const double es_ref =
            boost::math::quadrature::gauss_kronrod<double, 61>::integrate(f, -40.0, zt, 20, 1e-14) / tail;
        const double es = vasicek_expected_shortfall_tail(tail, pd, rho);
        CHECK(es == doctest::Approx(es_ref).epsilon(1e-10));
        CHECK(es >= q);
      }
    }
  }
  // The mean default rate is the PD: ES over the whole distribution (tail -> 1).
  CHECK(vasicek_expected_shortfall_tail(0.999999, 0.03, 0.2) == doctest::Approx(0.03).epsilon(1e-5));
  CHECK(std::isnan(vasicek_quantile_tail(0.0, 0.01, 0.2)));
  CHECK(std::isnan(vasicek_cdf(0.5, 0.01, 1.0)));
}

TEST_CASE("the Basel IRB capital at one year is the Vasicek 99.9% quantile less the PD, times LGD") {
  // Ref: BCBS, An Explanatory Note on the Basel II IRB Risk Weight Functions (2005): the formula
  // is the ASRF (Vasicek) conditional PD at 99.9% minus PD, scaled by LGD; at M = 1 the maturity
  // factor (1 + (M - 2.5) b) / (1 - 1.5 b) is exactly 1.
  for (double pd : {0.001, 0.01, 0.05}) {
    const IrbResult irb = irb_corporate({.pd = pd, .lgd = 0.45, .ead = 1.0, .maturity_years = 1.0});
    const double q = vasicek_quantile_tail(0.001, pd, irb.correlation);
    CHECK(irb.capital_ratio == doctest::Approx(0.45 * (q - pd)).epsilon(1e-12));
  }
}

TEST_CASE("large-portfolio measures: the Vasicek quantile for a homogeneous book, additive shares") {
  std::vector<FactorExposure> homogeneous(40, FactorExposure{0.02, 2.5, 0.18});
  const std::vector<double> levels = {0.99, 0.999};
  const LargePortfolioResult lp = large_portfolio_measures(homogeneous, levels);
  REQUIRE(lp.ok);
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const double tail = 1.0 - levels[l];
    CHECK(lp.tails[l].var == doctest::Approx(100.0 * vasicek_quantile_tail(tail, 0.02, 0.18)).epsilon(1e-12));
    CHECK(lp.tails[l].es ==
          doctest::Approx(100.0 * vasicek_expected_shortfall_tail(tail, 0.02, 0.18)).epsilon(1e-12));
  }
  CHECK(lp.expected_loss == doctest::Approx(40 * 0.02 * 2.5).epsilon(1e-14));
  // Heterogeneous: VaR is the conditional expected loss at z_a, and the shares add up.
  const std::vector<FactorExposure> book = {
      {0.001, 10.0, 0.24}, {0.05, 3.0, 0.12}, {0.3, 1.0, 0.0}, {1.0, 2.0, 0.1}};
  const LargePortfolioResult h = large_portfolio_measures(book, levels);
  REQUIRE(h.ok);
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const double z = boost::math::quantile(kNormal, 1.0 - levels[l]);
    CHECK(h.tails[l].var == doctest::Approx(large_portfolio_loss(book, z)).epsilon(1e-14));
    double var_sum = 0.0;
    double es_sum = 0.0;
    for (std::size_t i = 0; i < book.size(); ++i) {
      var_sum += h.var_contributions[l * book.size() + i];
      es_sum += h.es_contributions[l * book.size() + i];
    }
    CHECK(var_sum == doctest::Approx(h.tails[l].var).epsilon(1e-14));
    CHECK(es_sum == doctest::Approx(h.tails[l].es).epsilon(1e-14));
    // rho = 0 adds its expected loss; a certain default its whole loss.
    CHECK(h.es_contributions[l * book.size() + 2] == doctest::Approx(0.3).epsilon(1e-13));
    CHECK(h.es_contributions[l * book.size() + 3] == doctest::Approx(2.0).epsilon(1e-13));
  }
  const std::vector<double> bad_levels = {1.0};
  CHECK_FALSE(large_portfolio_measures(book, bad_levels).ok);
}

TEST_CASE("large-portfolio exceedance follows the Vasicek exceedance of a homogeneous book") {
  std::vector<FactorExposure> homogeneous(10, FactorExposure{0.01, 1.0, 0.2});
  std::vector<double> losses;
  for (double x = 0.0; x <= 10.0; x += 0.05) losses.push_back(x);
  std::vector<double> out(losses.size());
  large_portfolio_exceedance(homogeneous, losses, out);
  for (std::size_t j = 0; j < losses.size(); ++j) {
    const double ref = vasicek_exceedance(losses[j] / 10.0, 0.01, 0.2);
    CAPTURE(losses[j]);
    // Linear interpolation of z between table points 0.05 apart (documented as for plotting).
    CHECK(std::fabs(out[j] - ref) <= 1e-3 * ref + 1e-9);
  }
}
