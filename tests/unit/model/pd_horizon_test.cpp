// One-year PDs from PDs over other horizons (pd_horizon.hpp).
#include <doctest/doctest.h>

#include <cmath>
#include <initializer_list>
#include <limits>

#include "firmcall/model/pd_horizon.hpp"

using firmcall::pd_one_year;

namespace {

// The naive formula 1 - (1 - pd)^(1/T) in long double (64-bit significand): at moderate PDs the
// cancellation costs log10(1/pd) of its 19 digits, so it is an independent reference there.
long double naive_long(double pd, double horizon) {
  return 1.0L - std::pow(1.0L - static_cast<long double>(pd), 1.0L / static_cast<long double>(horizon));
}

// Binomial series of 1 - (1 - p)^a, a = 1/T: a p - a(a-1)/2 p^2 + a(a-1)(a-2)/6 p^3 (exact Taylor
// series; for p = 1e-15 the first omitted term is below 1e-45 of the first).
long double binomial_series(double pd, double horizon) {
  const long double a = 1.0L / static_cast<long double>(horizon);
  const long double p = pd;
  return a * p - a * (a - 1.0L) / 2.0L * p * p + a * (a - 1.0L) * (a - 2.0L) / 6.0L * p * p * p;
}

double relative_error(double got, long double ref) {
  return static_cast<double>(std::fabs((static_cast<long double>(got) - ref) / ref));
}

}  // namespace

TEST_CASE("pd_one_year matches the naive formula in long double at moderate PDs") {
  for (double horizon : {0.25, 0.5, 2.0, 3.0, 5.0, 10.0}) {
    for (double pd : {1e-3, 0.01, 0.05, 0.2, 0.5, 0.9, 0.999}) {
      CAPTURE(horizon);
      CAPTURE(pd);
      const double got = pd_one_year(pd, horizon);
      // Ref: 1 - (1 - pd)^(1/T) (constant annual default intensity, common practice), long double.
      CHECK(relative_error(got, naive_long(pd, horizon)) < 1e-14);
      // Ref: the defining identity (1 - PD1)^T = 1 - PD_T, checked in long double (away from PD1
      // near 1, where 1 - PD1 itself carries too few digits for the check).
      if (got > 0.99) continue;
      const long double back = 1.0L - std::pow(1.0L - static_cast<long double>(got), horizon);
      CHECK(relative_error(pd, back) < 1e-14);
    }
  }
  // Ref: 1 - 0.95^(1/5) = 0.0102062183... (a five-year PD of 5% is about 1.02% a year; arithmetic).
  CHECK(pd_one_year(0.05, 5.0) == doctest::Approx(0.0102062183).epsilon(1e-9));
}

TEST_CASE("a PD of 1e-15 at horizon 5 keeps at least 14 significant digits") {
  const double got = pd_one_year(1e-15, 5.0);
  // Ref: binomial series of 1 - (1 - p)^(1/5) = p/5 + 0.08 p^2 + ...
  CHECK(relative_error(got, binomial_series(1e-15, 5.0)) < 5e-15);
  for (double pd : {1e-300, 1e-100, 1e-20, 1e-12, 1e-8}) {
    for (double horizon : {0.5, 2.0, 5.0, 30.0}) {
      CAPTURE(pd);
      CAPTURE(horizon);
      CHECK(relative_error(pd_one_year(pd, horizon), binomial_series(pd, horizon)) < 5e-15);
    }
  }
  // The naive double formula loses the digits the function keeps (1 - 1e-15 is rounded to 1.1e-16).
  const double naive = 1.0 - std::pow(1.0 - 1e-15, 0.2);
  CHECK(relative_error(naive, binomial_series(1e-15, 5.0)) > 1e-4);
}

TEST_CASE("pd_one_year edges: 0, 1, horizon 1 and inputs outside its contract") {
  CHECK(pd_one_year(0.0, 5.0) == 0.0);
  CHECK(pd_one_year(1.0, 5.0) == 1.0);
  CHECK(pd_one_year(1.0, 0.5) == 1.0);
  for (double pd : {1e-15, 0.00123456789, 0.3, 1.0 - 1e-16})
    CHECK(pd_one_year(pd, 1.0) == pd);  // bit for bit
  // Monotone in pd and on the expected side of pd (common practice: a longer horizon, a lower rate).
  CHECK(pd_one_year(0.02, 5.0) < 0.02);
  CHECK(pd_one_year(0.02, 0.5) > 0.02);
  CHECK(pd_one_year(0.021, 5.0) > pd_one_year(0.02, 5.0));
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  CHECK(std::isnan(pd_one_year(-1e-9, 1.0)));
  CHECK(std::isnan(pd_one_year(1.0000001, 2.0)));
  CHECK(std::isnan(pd_one_year(nan, 2.0)));
  CHECK(std::isnan(pd_one_year(0.01, 0.0)));
  CHECK(std::isnan(pd_one_year(0.01, -1.0)));
  CHECK(std::isnan(pd_one_year(0.01, inf)));
  CHECK(std::isnan(pd_one_year(0.01, nan)));
}
