// Tests of the standard normal functions against a published table and an independent library.
#include <doctest/doctest.h>

#include <boost/math/distributions/normal.hpp>
#include <cmath>

#include "firmcall/model/normal.hpp"

using firmcall::norm_cdf;
using firmcall::norm_pdf;
using firmcall::norm_sf;

TEST_CASE("normal distribution function matches Abramowitz and Stegun Table 26.1") {
  // Ref: Abramowitz & Stegun, Handbook of Mathematical Functions (1964), Table 26.1, P(x) to 15
  // decimals (values quoted from memory): P(1) = 0.841344746068543, P(2) = 0.977249868051821,
  // P(3) = 0.998650101968370; P(0) = 0.5 exactly by symmetry.
  CHECK(norm_cdf(0.0) == 0.5);
  CHECK(norm_cdf(1.0) == doctest::Approx(0.841344746068543).epsilon(1e-14));
  CHECK(norm_cdf(2.0) == doctest::Approx(0.977249868051821).epsilon(1e-14));
  CHECK(norm_cdf(3.0) == doctest::Approx(0.998650101968370).epsilon(1e-14));
  CHECK(norm_cdf(-1.0) == doctest::Approx(1.0 - 0.841344746068543).epsilon(1e-13));
  // Ref: density at 0 is 1/sqrt(2 pi) = 0.398942280401433 (A&S 26.1.26, from memory).
  CHECK(norm_pdf(0.0) == doctest::Approx(0.398942280401433).epsilon(1e-15));
}

TEST_CASE("upper tail keeps full relative accuracy far out (complements, not 1 - N)") {
  // Ref: upper-tail values Q(x) = N(-x) (A&S Table 26.2 and standard tables; from memory):
  // Q(5) = 2.866515718791939e-7, Q(10) = 7.619853024160527e-24.
  CHECK(norm_sf(5.0) == doctest::Approx(2.866515718791939e-7).epsilon(1e-13).scale(0));
  CHECK(norm_sf(10.0) == doctest::Approx(7.619853024160527e-24).epsilon(1e-13).scale(0));
  // 1 - N(10) in double is exactly 0: the complement is what keeps a PD of 1e-24 alive.
  CHECK(1.0 - norm_cdf(10.0) == 0.0);
  CHECK(norm_sf(38.0) > 0.0);   // Q(38) ~ 2.9e-316: a subnormal, still positive
  CHECK(norm_sf(40.0) == 0.0);  // Q(40) ~ 3.7e-350 is below the double range: exactly 0, never NaN
}

TEST_CASE("normal functions agree with Boost.Math over a wide range") {
  // Independent implementation: Boost.Math normal distribution, cdf and cdf(complement(...)).
  const boost::math::normal_distribution<double> z;
  for (double x = -37.0; x <= 37.0; x += 0.173) {
    const double ref_cdf = boost::math::cdf(z, x);
    const double ref_sf = boost::math::cdf(boost::math::complement(z, x));
    CAPTURE(x);
    // The tail's relative condition number is about x^2 (d ln Q / dx ~ -x): rounding x/sqrt(2)
    // alone moves Q(x) by ~x^2 * 1.1e-16 relative, so the tolerance grows with x^2.
    const double tol = 1e-14 + 4e-16 * x * x;
    CHECK(norm_cdf(x) == doctest::Approx(ref_cdf).epsilon(tol).scale(0));
    CHECK(norm_sf(x) == doctest::Approx(ref_sf).epsilon(tol).scale(0));
    CHECK(norm_pdf(x) == doctest::Approx(boost::math::pdf(z, x)).epsilon(tol).scale(0));
  }
}

TEST_CASE("normal quantile inverts the distribution function and matches published critical values") {
  using firmcall::norm_quantile;
  using firmcall::norm_quantile_upper;
  // Ref: standard normal critical values (common tables, from memory): N^-1(0.975) = 1.959963984540054,
  // N^-1(0.999) = 3.090232306167813, N^-1(0.5) = 0.
  CHECK(norm_quantile(0.975) == doctest::Approx(1.959963984540054).epsilon(1e-14));
  CHECK(norm_quantile(0.999) == doctest::Approx(3.090232306167813).epsilon(1e-14));
  CHECK(norm_quantile(0.5) == doctest::Approx(0.0).epsilon(1e-15));
  CHECK(norm_quantile_upper(0.001) == doctest::Approx(3.090232306167813).epsilon(1e-14));
  // Independent implementation: Boost.Math quantile of the normal distribution, lower and upper tail.
  const boost::math::normal_distribution<double> z;
  for (double lp = -300.0; lp < 0.0; lp += 7.3) {
    const double p = std::pow(10.0, lp);
    CAPTURE(p);
    CHECK(norm_quantile(p) == doctest::Approx(boost::math::quantile(z, p)).epsilon(1e-14));
    CHECK(norm_quantile_upper(p) ==
          doctest::Approx(boost::math::quantile(boost::math::complement(z, p))).epsilon(1e-14));
    // Round trip through the complements (the tail's relative condition number grows like x^2).
    CHECK(firmcall::norm_sf(norm_quantile_upper(p)) == doctest::Approx(p).epsilon(1e-12).scale(0));
  }
  CHECK(std::isinf(norm_quantile(0.0)));
  CHECK(norm_quantile(0.0) < 0.0);
  CHECK(std::isinf(norm_quantile(1.0)));
  CHECK(std::isnan(norm_quantile(1.5)));
  CHECK(std::isnan(norm_quantile(-0.1)));
  CHECK(std::isnan(norm_quantile(std::nan(""))));
  CHECK(std::isnan(norm_quantile_upper(2.0)));
}
