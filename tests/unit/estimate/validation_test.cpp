// Tests of the validation statistics (src/estimate/validation.cpp) against worked examples by
// hand, the 1988 definition of DeLong's variance computed pair by pair, and the definitions of KS,
// PSI and the traffic light. The comparisons with scikit-learn and scipy are in
// tests/cli/validate_check.py.
#include "firmcall/estimate/validation.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

using namespace firmcall;

namespace {

// psi(x, y) of DeLong, DeLong & Clarke-Pearson (1988): 1 when the defaulter's PD x is above the
// non-defaulter's y, 1/2 on a tie, else 0.
double psi(double x, double y) {
  return x > y ? 1.0 : (x == y ? 0.5 : 0.0);
}

struct PairwiseDeLong {
  double auc_a = 0.0;
  double auc_b = 0.0;
  double var_a = 0.0;
  double var_diff = 0.0;
};

// The 1988 definition pair by pair, O(m n): V10(x_i) = mean_j psi(x_i, y_j), V01(y_j) =
// mean_i psi(x_i, y_j); S10, S01 their sample (co)variances; var = S10 / m + S01 / n.
PairwiseDeLong pairwise(const std::vector<double>& a, const std::vector<double>& b,
                        const std::vector<std::uint8_t>& y) {
  std::vector<std::size_t> pos;
  std::vector<std::size_t> neg;
  for (std::size_t k = 0; k < y.size(); ++k) (y[k] ? pos : neg).push_back(k);
  const double m = static_cast<double>(pos.size());
  const double n = static_cast<double>(neg.size());
  std::vector<double> v10a(pos.size(), 0.0), v10b(pos.size(), 0.0), v01a(neg.size(), 0.0),
      v01b(neg.size(), 0.0);
  for (std::size_t i = 0; i < pos.size(); ++i) {
    for (std::size_t j = 0; j < neg.size(); ++j) {
      const double pa = psi(a[pos[i]], a[neg[j]]);
      const double pb = psi(b[pos[i]], b[neg[j]]);
      v10a[i] += pa / n;
      v10b[i] += pb / n;
      v01a[j] += pa / m;
      v01b[j] += pb / m;
    }
  }
  PairwiseDeLong r;
  for (double v : v10a) r.auc_a += v / m;
  for (double v : v10b) r.auc_b += v / m;
  double s10aa = 0, s10bb = 0, s10ab = 0, s01aa = 0, s01bb = 0, s01ab = 0;
  for (std::size_t i = 0; i < pos.size(); ++i) {
    s10aa += (v10a[i] - r.auc_a) * (v10a[i] - r.auc_a) / (m - 1);
    s10bb += (v10b[i] - r.auc_b) * (v10b[i] - r.auc_b) / (m - 1);
    s10ab += (v10a[i] - r.auc_a) * (v10b[i] - r.auc_b) / (m - 1);
  }
  for (std::size_t j = 0; j < neg.size(); ++j) {
    s01aa += (v01a[j] - r.auc_a) * (v01a[j] - r.auc_a) / (n - 1);
    s01bb += (v01b[j] - r.auc_b) * (v01b[j] - r.auc_b) / (n - 1);
    s01ab += (v01a[j] - r.auc_a) * (v01b[j] - r.auc_b) / (n - 1);
  }
  r.var_a = s10aa / m + s01aa / n;
  r.var_diff = (s10aa + s10bb - 2 * s10ab) / m + (s01aa + s01bb - 2 * s01ab) / n;
  return r;
}

}  // namespace

TEST_CASE("AUC, KS and AR on a worked example with a tie") {
  // Defaulters {0.3, 0.2}, non-defaulters {0.2, 0.1, 0.05}: pairs above 3 + 2, one tie (1/2):
  // AUC = 5.5 / 6 (by hand). F_D(0.1) = 0, F_N(0.1) = 2/3: KS = 2/3 at PD 0.1 (by hand).
  const std::vector<double> pd{0.3, 0.2, 0.2, 0.1, 0.05};
  const std::vector<std::uint8_t> y{1, 1, 0, 0, 0};
  const Discrimination d = discrimination(pd, y, true);
  REQUIRE(d.status == ValidationStatus::ok);
  CHECK(d.auc == doctest::Approx(5.5 / 6.0).epsilon(1e-15));
  CHECK(d.accuracy_ratio == doctest::Approx(2.0 * 5.5 / 6.0 - 1.0).epsilon(1e-15));
  CHECK(d.ks == doctest::Approx(2.0 / 3.0).epsilon(1e-15));
  CHECK(d.ks_threshold_pd == 0.1);
  CHECK(d.observations == 5);
  CHECK(d.defaults == 2);
  // Curve: start (0, 0, 0), then thresholds 0.3, 0.2, 0.1, 0.05 (by hand).
  REQUIRE(d.curve.size() == 5);
  CHECK(d.curve[1].hit_rate == doctest::Approx(0.5));
  CHECK(d.curve[1].false_positive_rate == 0.0);
  CHECK(d.curve[2].hit_rate == 1.0);
  CHECK(d.curve[2].false_positive_rate == doctest::Approx(1.0 / 3.0));
  CHECK(d.curve[2].population_share == doctest::Approx(0.6));
  CHECK(d.curve[4].population_share == 1.0);
}

TEST_CASE("DeLong variance and the two-column test agree with the 1988 definition pair by pair") {
  std::mt19937_64 rng(42);
  std::normal_distribution<double> z(0.0, 1.0);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> a, b;
  std::vector<std::uint8_t> y;
  for (int k = 0; k < 800; ++k) {
    const double score = z(rng);
    const double pd = std::round(1000.0 / (1.0 + std::exp(4.0 - score))) / 1000.0;  // rounded: ties
    const double alt = std::round(1000.0 / (1.0 + std::exp(4.0 - score - z(rng)))) / 1000.0;
    a.push_back(pd);
    b.push_back(alt);
    y.push_back(u(rng) < 1.0 / (1.0 + std::exp(3.5 - 1.2 * score)) ? 1 : 0);
  }
  const PairwiseDeLong ref = pairwise(a, b, y);  // reference: DeLong et al. (1988), pair by pair
  const Discrimination d = discrimination(a, y);
  REQUIRE(d.status == ValidationStatus::ok);
  CHECK(std::fabs(d.auc - ref.auc_a) < 1e-13);
  CHECK(std::fabs(d.auc_se - std::sqrt(ref.var_a)) < 1e-13);
  CHECK(d.auc_lower == doctest::Approx(d.auc - 1.959963984540054 * d.auc_se).epsilon(1e-14));
  const AucComparison c = compare_auc(a, b, y);
  REQUIRE(c.status == ValidationStatus::ok);
  CHECK(std::fabs(c.auc_second - ref.auc_b) < 1e-13);
  CHECK(std::fabs(c.difference_se - std::sqrt(ref.var_diff)) < 1e-13);
  // p two-sided = erfc(|z| / sqrt 2) (definition of the normal tail).
  CHECK(c.p_value == doctest::Approx(std::erfc(std::fabs(c.z) / std::sqrt(2.0))).epsilon(1e-14));
}

TEST_CASE("discrimination refuses one class and bad values") {
  const std::vector<double> pd{0.1, 0.2};
  CHECK(discrimination(pd, std::vector<std::uint8_t>{0, 0}).status == ValidationStatus::one_class);
  CHECK(discrimination(pd, std::vector<std::uint8_t>{1, 1}).status == ValidationStatus::one_class);
  CHECK(discrimination(pd, std::vector<std::uint8_t>{1, 2}).status == ValidationStatus::invalid_input);
  CHECK(discrimination(std::vector<double>{0.1, std::nan("")}, std::vector<std::uint8_t>{1, 0}).status ==
        ValidationStatus::invalid_input);
  CHECK(discrimination(std::vector<double>{0.1, 1.5}, std::vector<std::uint8_t>{1, 0}).status ==
        ValidationStatus::invalid_input);
  CHECK(discrimination(pd, std::vector<std::uint8_t>{1}).status == ValidationStatus::invalid_input);
}

TEST_CASE("group calibration at the edges") {
  // No defaults: P(X >= 0) = 1 (definition). PD 0 with a default: P = 0 (definition).
  CHECK(group_calibration(10, 0, 0.01).binomial_p == 1.0);
  CHECK(group_calibration(10, 1, 0.0).binomial_p == 0.0);
  // One obligor, PD p, defaulted: P(X >= 1) = p (definition).
  CHECK(group_calibration(1, 1, 0.3).binomial_p == doctest::Approx(0.3).epsilon(1e-14));
  // n = 2, d = 1, p = 0.1: P(X >= 1) = 1 - 0.9^2 = 0.19 (by hand).
  CHECK(group_calibration(2, 1, 0.1).binomial_p == doctest::Approx(0.19).epsilon(1e-14));
  // Jeffreys: F_Beta(5.5, 95.5)(0.01) = 0.00138336 (scipy.stats.beta.cdf; the full comparison is in
  // tests/cli/validate_check.py).
  const GroupCalibration g = group_calibration(100, 5, 0.01);
  CHECK(g.jeffreys_p == doctest::Approx(0.0013833629001407629).epsilon(1e-10));
  CHECK(g.binomial_p == doctest::Approx(0.0034323215877545207).epsilon(1e-10));
  CHECK(g.light ==
        TrafficLight::yellow);  // P(X >= 5 | 100, 1%) = 0.0034323 (scipy.stats.binom.sf(4, 100, 0.01))
  CHECK(std::isnan(group_calibration(0, 0, 0.1).mean_pd));
}

TEST_CASE("traffic light thresholds") {
  // Zones green p > 5%, yellow 0.01% < p <= 5%, red p <= 0.01% (Basel Committee 1996 backtesting
  // traffic light applied to the binomial p-value; from memory).
  CHECK(traffic_light(0.0501) == TrafficLight::green);
  CHECK(traffic_light(0.05) == TrafficLight::yellow);
  CHECK(traffic_light(0.00011) == TrafficLight::yellow);
  CHECK(traffic_light(0.0001) == TrafficLight::red);
  CHECK(to_string(TrafficLight::red) == "red");
}

TEST_CASE("calibration: Brier, Spiegelhalter and Hosmer-Lemeshow on a worked example") {
  // Grade 0: PDs 0.1, 0.1, outcomes 0, 1. Grade 1: PDs 0.5, 0.5, outcomes 1, 1.
  const std::vector<double> pd{0.1, 0.1, 0.5, 0.5};
  const std::vector<std::uint8_t> y{0, 1, 1, 1};
  const std::vector<int> g{0, 0, 1, 1};
  const CalibrationTests c = calibration_tests(pd, y, g, 3);
  REQUIRE(c.status == ValidationStatus::ok);
  // Brier = (0.01 + 0.81 + 0.25 + 0.25) / 4 = 0.33 (by hand).
  CHECK(c.brier == doctest::Approx(0.33).epsilon(1e-14));
  // Spiegelhalter: num = -0.1*0.8 + 0.9*0.8 + 0 + 0 = 0.64; den = 2 * 0.64 * 0.09 = 0.1152;
  // z = 0.64 / sqrt(0.1152) = 1.885618 (by hand).
  CHECK(c.spiegelhalter_z == doctest::Approx(0.64 / std::sqrt(0.1152)).epsilon(1e-14));
  // HL: grade 0: (1 - 0.2)^2 / (2 * 0.1 * 0.9) = 3.5556; grade 1: (2 - 1)^2 / 0.5 = 2;
  // sum 5.5556 with 2 degrees of freedom (one per grade with obligors; by hand). The chi-square
  // tail with 2 df is exp(-x/2) (definition).
  CHECK(c.hosmer_lemeshow == doctest::Approx(0.64 / 0.18 + 2.0).epsilon(1e-14));
  CHECK(c.hosmer_lemeshow_df == 2);
  CHECK(c.hosmer_lemeshow_p == doctest::Approx(std::exp(-(0.64 / 0.18 + 2.0) / 2.0)).epsilon(1e-12));
  REQUIRE(c.grades.size() == 3);
  CHECK(c.grades[2].observations == 0);
  CHECK(c.grades[1].default_rate == 1.0);
  CHECK(calibration_tests(pd, y, std::vector<int>{0, 0, 1, 3}, 3).status == ValidationStatus::invalid_input);
}

TEST_CASE("population stability index on worked examples") {
  // Shares a = (0.5, 0.3, 0.2), e = (0.4, 0.4, 0.2):
  // PSI = 0.1 ln 1.25 - 0.1 ln 0.75 = 0.1 (0.2231435513 + 0.2876820725) = 0.05108256238 (by hand).
  CHECK(population_stability_index(std::vector<std::size_t>{50, 30, 20},
                                   std::vector<std::size_t>{40, 40, 20}) ==
        doctest::Approx(0.05108256238).epsilon(1e-10));
  // An empty grade: 0.5 added to every count of both samples (common practice).
  // a = (3.5, 0.5) / 4, e = (1.5, 1.5) / 3: PSI = 0.375 ln 1.75 + 0.375 ln 4 = 0.375 (0.5596157879 +
  // 1.3862943611) = 0.7297163059 (by hand).
  CHECK(population_stability_index(std::vector<std::size_t>{3, 0}, std::vector<std::size_t>{1, 1}) ==
        doctest::Approx(0.7297163059).epsilon(1e-10));
  CHECK(population_stability_index(std::vector<std::size_t>{1, 1}, std::vector<std::size_t>{1, 1}) == 0.0);
  // A grade empty in both samples is left out: the same 0.7297163059 (by hand, as above).
  CHECK(population_stability_index(std::vector<std::size_t>{3, 0, 0}, std::vector<std::size_t>{1, 0, 1}) ==
        doctest::Approx(0.7297163059).epsilon(1e-10));
  CHECK(
      std::isnan(population_stability_index(std::vector<std::size_t>{0, 0}, std::vector<std::size_t>{1, 1})));
}

TEST_CASE("migration counts") {
  const std::vector<std::size_t> m =
      migration_counts(std::vector<int>{0, 0, 1, 2, 5}, std::vector<int>{0, 1, 1, 0, 0}, 3);
  REQUIRE(m.size() == 9);
  CHECK(m[0 * 3 + 0] == 1);
  CHECK(m[0 * 3 + 1] == 1);
  CHECK(m[1 * 3 + 1] == 1);
  CHECK(m[2 * 3 + 0] == 1);  // the pair with grade 5 is out of range and not counted
  std::size_t total = 0;
  for (std::size_t v : m) total += v;
  CHECK(total == 4);
}

TEST_CASE("compare_columns gives both columns' figures from one ranking each") {
  std::mt19937_64 rng(7);
  std::normal_distribution<double> z(0.0, 1.0);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> a, b;
  std::vector<std::uint8_t> y;
  for (int k = 0; k < 600; ++k) {
    const double score = z(rng);
    a.push_back(std::round(100.0 / (1.0 + std::exp(3.0 - score))) / 100.0);  // two decimals: many ties
    b.push_back(std::round(100.0 / (1.0 + std::exp(3.0 - score - z(rng)))) / 100.0);
    y.push_back(u(rng) < 1.0 / (1.0 + std::exp(3.0 - score)) ? 1 : 0);
  }
  const PairwiseDeLong ref = pairwise(a, b, y);  // reference: DeLong et al. (1988), pair by pair
  const ColumnComparison c = compare_columns(a, b, y, true);
  REQUIRE(c.comparison.status == ValidationStatus::ok);
  CHECK(std::fabs(c.first.auc - ref.auc_a) < 1e-13);
  CHECK(std::fabs(c.second.auc - ref.auc_b) < 1e-13);
  CHECK(std::fabs(c.first.auc_se - std::sqrt(ref.var_a)) < 1e-13);
  CHECK(std::fabs(c.comparison.difference_se - std::sqrt(ref.var_diff)) < 1e-13);
  CHECK(c.first.defaults == c.second.defaults);
  CHECK(!c.first.curve.empty());
  CHECK(c.second.curve.empty());
  // A bad value in the second column makes the test invalid (definition of the status).
  b[3] = 1.5;
  const ColumnComparison bad = compare_columns(a, b, y);
  CHECK(bad.first.status == ValidationStatus::ok);
  CHECK(bad.second.status == ValidationStatus::invalid_input);
  CHECK(bad.comparison.status == ValidationStatus::invalid_input);
  CHECK(compare_columns(a, std::vector<double>{0.1}, y).comparison.status == ValidationStatus::invalid_input);
}

TEST_CASE("a PD of -0 ties with 0, and PDs 0 and 1 rank at the ends") {
  // Defaulters {0, 1}, non-defaulters {-0, 0.5}: pairs (0 vs -0) tie 1/2, (0 vs 0.5) 0,
  // (1 vs -0) 1, (1 vs 0.5) 1: AUC = 2.5 / 4 (by hand).
  const std::vector<double> pd{0.0, 1.0, -0.0, 0.5};
  const std::vector<std::uint8_t> y{1, 1, 0, 0};
  const Discrimination d = discrimination(pd, y, true);
  REQUIRE(d.status == ValidationStatus::ok);
  CHECK(d.auc == 2.5 / 4.0);
  REQUIRE(d.curve.size() == 4);  // (0, 0, 0), then thresholds 1, 0.5, 0 (by hand)
  CHECK(d.curve[3].threshold_pd == 0.0);
  CHECK(d.curve[1].threshold_pd == 1.0);
}

TEST_CASE("validation by group: each group's AUC and calibration on its own rows") {
  // Group 0: defaulters {0.4, 0.2}, non-defaulters {0.2, 0.1}: pairs above 2 + 1, one tie:
  //   AUC = 3.5 / 4 (by hand); n = 4, d = 2, mean PD 0.225.
  // Group 1: PDs 0.1, 0.3, no defaults: AUC undefined (one class), P(X >= 0) = 1 (definition).
  // Group 2: no rows.
  const std::vector<double> pd{0.4, 0.1, 0.2, 0.3, 0.2, 0.1};
  const std::vector<std::uint8_t> y{1, 0, 1, 0, 0, 0};
  const std::vector<int> g{0, 1, 0, 1, 0, 0};
  const GroupedValidation r = validation_by_group(pd, y, g, 3);
  REQUIRE(r.status == ValidationStatus::ok);
  REQUIRE(r.groups.size() == 3);
  const GroupValidation& g0 = r.groups[0];
  REQUIRE(g0.discrimination.status == ValidationStatus::ok);
  CHECK(g0.discrimination.auc == 3.5 / 4.0);
  CHECK(g0.calibration.observations == 4);
  CHECK(g0.calibration.defaults == 2);
  CHECK(g0.calibration.mean_pd == doctest::Approx(0.225).epsilon(1e-15));
  // P(X >= 2), X ~ Binomial(4, 0.225) = 1 - 0.775^4 - 4 0.225 0.775^3 (by hand).
  const double q = 0.775;
  CHECK(g0.calibration.binomial_p ==
        doctest::Approx(1.0 - q * q * q * q - 4.0 * 0.225 * q * q * q).epsilon(1e-13));
  const GroupValidation& g1 = r.groups[1];
  CHECK(g1.discrimination.status == ValidationStatus::one_class);
  CHECK(g1.discrimination.defaults == 0);
  CHECK(g1.calibration.observations == 2);
  CHECK(g1.calibration.binomial_p == 1.0);
  CHECK(r.groups[2].calibration.observations == 0);
  CHECK(r.groups[2].discrimination.status == ValidationStatus::one_class);
  CHECK(validation_by_group(pd, y, std::vector<int>{0, 1, 0, 3, 0, 0}, 3).status ==
        ValidationStatus::invalid_input);
  CHECK(validation_by_group(pd, y, std::vector<int>{0, 1}, 3).status == ValidationStatus::invalid_input);
}
