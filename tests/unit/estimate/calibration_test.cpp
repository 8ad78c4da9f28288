// Tests of the PD calibration (src/estimate/calibration.cpp). The logistic fit and the
// pool-adjacent-violators values are also compared with statsmodels and scikit-learn on the
// sample history by tests/cli/calibration_reference_check.py (CTest calibration_reference).
#include "firmcall/estimate/calibration.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

using namespace firmcall;

namespace {

// Uniform in (0, 1) from the raw output of mt19937_64 (whose sequence the C++ standard fixes).
double uniform(std::mt19937_64& g) {
  return (static_cast<double>(g() >> 11) + 0.5) * 0x1.0p-53;
}

// Standard normal by Box-Muller.
double normal(std::mt19937_64& g) {
  const double u = uniform(g), v = uniform(g);
  return std::sqrt(-2.0 * std::log(u)) * std::cos(6.283185307179586 * v);
}

double true_pd(double a, double b, double dd) {
  return 1.0 / (1.0 + std::exp(-(a + b * dd)));
}

// A simulated history from the logistic link a + b DD with DD ~ N(3.4, 1.5).
void simulate(std::mt19937_64& g, std::size_t n, double a, double b, std::vector<double>& dd,
              std::vector<double>& y) {
  dd.resize(n);
  y.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    dd[i] = 3.4 + 1.5 * normal(g);
    y[i] = uniform(g) < true_pd(a, b, dd[i]) ? 1.0 : 0.0;
  }
}

}  // namespace

TEST_CASE("logistic calibration: the 95% interval covers the true PD in 93-97% of repetitions") {
  // 400 simulated histories of 4000 obligor-years from a known link (a = -1.6, b = -0.75; default
  // rate about 2.5%), seeds 1..400. The delta-method interval at DD = 3 covered the true PD in
  // 383 of 400 repetitions (95.75%); at the nominal 95% the count lies in [372, 388] (93-97%) with
  // probability about 0.93 (binomial(400, 0.95), from memory), so a broken interval fails.
  constexpr double kA = -1.6, kB = -0.75, kDd = 3.0;
  int covered = 0, usable = 0;
  std::vector<double> dd, y;
  for (std::uint64_t seed = 1; seed <= 400; ++seed) {
    std::mt19937_64 g(seed);
    simulate(g, 4000, kA, kB, dd, y);
    const PdCalibration c = calibrate_pd({dd, y, {}}, {.method = CalibrationMethod::logistic});
    if (!c.ok()) continue;
    ++usable;
    const CalibratedPd p = c.evaluate(kDd);
    const double truth = true_pd(kA, kB, kDd);
    if (p.lower <= truth && truth <= p.upper) ++covered;
  }
  CHECK(usable == 400);
  CHECK(covered >= 372);
  CHECK(covered <= 388);
  MESSAGE("covered " << covered << " of 400");
}

TEST_CASE("logistic calibration: weights act as repeated observations") {
  // Common practice (a frequency weight w counts an observation w times): the weighted fit of the
  // distinct rows equals the unweighted fit of the rows repeated.
  const std::vector<double> dd = {0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0};
  const std::vector<double> y = {1, 0, 1, 0, 1, 0, 0, 0};
  const std::vector<double> w = {2, 1, 3, 1, 1, 2, 1, 4};
  std::vector<double> dd_rep, y_rep;
  for (std::size_t i = 0; i < dd.size(); ++i) {
    for (int k = 0; k < static_cast<int>(w[i]); ++k) {
      dd_rep.push_back(dd[i]);
      y_rep.push_back(y[i]);
    }
  }
  const PdCalibration a = calibrate_pd({dd, y, w}, {});
  const PdCalibration b = calibrate_pd({dd_rep, y_rep, {}}, {});
  REQUIRE(a.ok());
  REQUIRE(b.ok());
  CHECK(a.logistic.intercept == doctest::Approx(b.logistic.intercept).epsilon(1e-10));
  CHECK(a.logistic.slope == doctest::Approx(b.logistic.slope).epsilon(1e-10));
  CHECK(a.logistic.slope_se == doctest::Approx(b.logistic.slope_se).epsilon(1e-10));
  CHECK(a.logistic.log_likelihood == doctest::Approx(b.logistic.log_likelihood).epsilon(1e-10));
}

TEST_CASE("calibrated PD is non-increasing in DD (logistic, isotonic, between and beyond blocks)") {
  std::mt19937_64 g(7);
  std::vector<double> dd, y;
  simulate(g, 5000, -1.6, -0.75, dd, y);
  for (CalibrationMethod m : {CalibrationMethod::logistic, CalibrationMethod::isotonic}) {
    CAPTURE(to_string(m));
    const PdCalibration c = calibrate_pd({dd, y, {}}, {.method = m});
    REQUIRE(c.ok());
    double last = 2.0;
    for (double x = c.dd_min - 2.0; x <= c.dd_max + 2.0; x += 0.001) {
      const CalibratedPd p = c.evaluate(x);
      REQUIRE(p.pd <= last);
      REQUIRE(p.lower <= p.pd);
      REQUIRE(p.pd <= p.upper);
      CHECK(p.extrapolated == (x < c.dd_min || x > c.dd_max));
      last = p.pd;
    }
  }
}

TEST_CASE("isotonic calibration: pool-adjacent-violators by hand") {
  // Robertson, Wright and Dykstra (1988), by hand: the outcomes 0, 1, 0, 0 in increasing DD violate
  // a non-increasing PD at the first pair, which pools to 1/2; the last two pool to 0, whose PD is
  // the Jeffreys estimate (0 + 0.5) / (2 + 1) = 1/6.
  const std::vector<double> dd = {2.0, 1.0, 4.0, 3.0};
  const std::vector<double> y = {1, 0, 0, 0};
  const PdCalibration c = calibrate_pd({dd, y, {}}, {.method = CalibrationMethod::isotonic});
  REQUIRE(c.ok());
  REQUIRE(c.blocks.size() == 2);
  CHECK(c.blocks[0].dd_lower == 1.0);
  CHECK(c.blocks[0].dd_upper == 2.0);
  CHECK(c.blocks[0].pd_raw == 0.5);
  CHECK(c.blocks[0].pd == 0.5);
  CHECK(c.blocks[1].pd_raw == 0.0);
  CHECK(c.blocks[1].pd == doctest::Approx(1.0 / 6.0).epsilon(1e-15));
  // Between the blocks (DD 2 to 3) the PD runs linearly from 1/2 to 1/6 (docs/calibration.md).
  CHECK(c.evaluate(2.5).pd == doctest::Approx(0.5 * (0.5 + 1.0 / 6.0)).epsilon(1e-15));
  CHECK(c.evaluate(1.5).pd == 0.5);
  CHECK(c.evaluate(0.0).extrapolated);
}

TEST_CASE("Jeffreys interval matches scipy's beta quantiles") {
  // scipy.stats.beta.ppf(0.025, 3.5, 97.5) and beta.isf(0.025, 3.5, 97.5); beta.isf(0.025, 0.5, 50.5).
  double lo = 0.0, hi = 0.0;
  jeffreys_interval(3.0, 100.0, 0.95, lo, hi);
  CHECK(lo == doctest::Approx(0.00852028310740358).epsilon(1e-12));
  CHECK(hi == doctest::Approx(0.07788756942640257).epsilon(1e-12));
  jeffreys_interval(0.0, 50.0, 0.95, lo, hi);
  CHECK(lo == 0.0);  // Brown, Cai and DasGupta (2001): lower bound 0 when there is no default
  CHECK(hi == doctest::Approx(0.04875845944407139).epsilon(1e-12));
}

TEST_CASE("binned calibration: bands of about equal counts with their default rates") {
  // By hand: 10 observations at distinct DD in 5 bands of 2; rates from the outcomes.
  const std::vector<double> dd = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10};
  const std::vector<double> y = {1, 1, 1, 0, 0, 1, 0, 0, 0, 0};
  const PdCalibration c = calibrate_pd({dd, y, {}}, {.method = CalibrationMethod::binned, .bins = 5});
  REQUIRE(c.ok());
  REQUIRE(c.blocks.size() == 5);
  CHECK(c.blocks[0].pd_raw == 1.0);
  CHECK(c.blocks[1].pd_raw == 0.5);
  CHECK(c.blocks[2].pd_raw == 0.5);
  CHECK(c.blocks[3].pd_raw == 0.0);
  CHECK(c.blocks[3].pd == doctest::Approx(0.5 / 3.0).epsilon(1e-15));  // Jeffreys estimate
  CHECK(c.blocks[4].dd_lower == 9.0);
}

TEST_CASE("calibration refuses unusable samples with a status") {
  const std::vector<double> dd = {1.0, 2.0, 3.0};
  const auto status = [](std::vector<double> x, std::vector<double> y) {
    return calibrate_pd({x, y, {}}, {}).status;
  };
  CHECK(status(dd, {0, 0, 0}) == CalibrationStatus::no_defaults);
  CHECK(status(dd, {1, 1, 1}) == CalibrationStatus::no_survivors);
  CHECK(status(dd, {1, 2, 0}) == CalibrationStatus::bad_input);
  CHECK(status({1.0, std::nan(""), 3.0}, {1, 0, 0}) == CalibrationStatus::bad_input);
  CHECK(status({1.0, 2.0}, {1, 0, 0}) == CalibrationStatus::bad_input);
  // Defaults all below DD 2, survivors all above: the likelihood has no maximum (separation).
  CHECK(status({1.0, 1.5, 2.5, 3.0}, {1, 1, 0, 0}) == CalibrationStatus::not_converged);
  // More defaults at high DD: the fitted slope is positive.
  const std::vector<double> up_dd = {1, 2, 3, 4, 5, 6}, up_y = {0, 1, 0, 1, 1, 0};
  const PdCalibration up = calibrate_pd({up_dd, up_y, {}}, {});
  CHECK(up.status == CalibrationStatus::slope_not_negative);
  CHECK(up.logistic.slope > 0.0);
  CHECK(std::isnan(up.evaluate(1.0).pd));
  CHECK(CalibrationOptions{.confidence_level = 1.0}.validate()->field == "confidence_level");
  CHECK(CalibrationOptions{.bins = 0}.validate()->field == "bins");
  CHECK_FALSE(CalibrationOptions{}.validate());
}
