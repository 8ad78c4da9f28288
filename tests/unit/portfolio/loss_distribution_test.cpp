// Tests of the exact one-factor loss distribution (src/loss_distribution.cpp) against independent
// computations: enumeration of every default pattern (with and without correlation, the latter
// integrated over the factor by Boost.Math's adaptive Gauss-Kronrod), and the Vasicek limit with
// Gordy's granularity adjustment.
#include <doctest/doctest.h>

#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <cmath>
#include <random>
#include <vector>

#include "firmcall/portfolio/loss_distribution.hpp"
#include "firmcall/portfolio/vasicek.hpp"

using namespace firmcall;

namespace {

// The distribution of an integer-valued portfolio loss and each obligor's E[X_i 1{L > v}] and
// E[X_i 1{L = v}], by enumerating all 2^n default patterns. `pattern_probability(mask)` gives
// the probability of exactly the defaults in mask.
struct Enumerated {
  std::vector<double> probability;         // P(L = k)
  std::vector<std::vector<double>> above;  // [v][i]: E[X_i 1{L > v}]
  std::vector<std::vector<double>> at;     // [v][i]: E[X_i 1{L = v}]
};

template <class PatternProbability>
Enumerated enumerate(const std::vector<FactorExposure>& book, PatternProbability&& pattern_probability) {
  const std::size_t n = book.size();
  int total = 0;
  for (const auto& e : book) total += static_cast<int>(e.loss_amount);
  Enumerated r;
  r.probability.assign(static_cast<std::size_t>(total) + 1, 0.0);
  std::vector<double> prob(std::size_t{1} << n);
  std::vector<int> loss(std::size_t{1} << n);
  for (std::size_t mask = 0; mask < prob.size(); ++mask) {
    int l = 0;
    for (std::size_t i = 0; i < n; ++i) {
      if (mask >> i & 1U) l += static_cast<int>(book[i].loss_amount);
    }
    loss[mask] = l;
    prob[mask] = pattern_probability(mask);
    r.probability[static_cast<std::size_t>(l)] += prob[mask];
  }
  r.above.assign(r.probability.size(), std::vector<double>(n, 0.0));
  r.at.assign(r.probability.size(), std::vector<double>(n, 0.0));
  for (std::size_t v = 0; v < r.probability.size(); ++v) {
    for (std::size_t mask = 0; mask < prob.size(); ++mask) {
      for (std::size_t i = 0; i < n; ++i) {
        if (!(mask >> i & 1U)) continue;
        if (loss[mask] > static_cast<int>(v)) r.above[v][i] += book[i].loss_amount * prob[mask];
        if (loss[mask] == static_cast<int>(v)) r.at[v][i] += book[i].loss_amount * prob[mask];
      }
    }
  }
  return r;
}

// VaR, ES and contributions from an enumerated distribution (Acerbi and Tasche 2002, written out
// independently of the program).
struct Measures {
  std::size_t var = 0;
  double es = 0.0;
  std::vector<double> contributions;
};
Measures measures_of(const Enumerated& e, double level) {
  const double tail = 1.0 - level;
  Measures m;
  // Exceedance P(L > v) from the top.
  std::vector<double> exceed(e.probability.size(), 0.0);
  double run = 0.0;
  for (std::size_t k = e.probability.size(); k-- > 0;) {
    exceed[k] = run;
    run += e.probability[k];
  }
  while (exceed[m.var] > tail) ++m.var;
  const std::size_t n = e.above[0].size();
  m.contributions.assign(n, 0.0);
  double es = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double c =
        (e.above[m.var][i] + e.at[m.var][i] / e.probability[m.var] * (tail - exceed[m.var])) / tail;
    m.contributions[i] = c;
    es += c;
  }
  m.es = es;
  return m;
}

std::vector<FactorExposure> small_book(double rho) {
  // Integer losses so that a grid of unit 1 holds them exactly; PDs from 0.2% to 55% so that the
  // conditional PDs cross 0.4 at adverse factor values (both ways of taking an obligor out run).
  return {{0.002, 7.0, rho}, {0.01, 3.0, rho}, {0.03, 5.0, rho}, {0.05, 2.0, rho}, {0.08, 4.0, rho},
          {0.12, 1.0, rho},  {0.2, 6.0, rho},  {0.3, 3.0, rho},  {0.55, 2.0, rho}, {0.004, 9.0, rho}};
}

}  // namespace

TEST_CASE("zero correlation gives the independent (Poisson-binomial) distribution exactly") {
  // Independent computation: enumeration of all 2^10 default patterns with independent defaults.
  const std::vector<FactorExposure> book = small_book(0.0);
  const Enumerated ref = enumerate(book, [&](std::size_t mask) {
    double p = 1.0;
    for (std::size_t i = 0; i < book.size(); ++i) p *= (mask >> i & 1U) ? book[i].pd : 1.0 - book[i].pd;
    return p;
  });
  OneFactorOptions opt;
  opt.loss_unit = 1.0;
  opt.confidence_levels = {0.9, 0.99, 0.999};
  const LossDistribution d = one_factor_loss_distribution(book, opt);
  REQUIRE(d.status == LossStatus::ok);
  REQUIRE(d.probability.size() >= ref.probability.size());
  for (std::size_t k = 0; k < ref.probability.size(); ++k) {
    CAPTURE(k);
    // The factor integral of a constant is the normal mass, which the weights hold to rounding.
    CHECK(d.probability[k] == doctest::Approx(ref.probability[k]).epsilon(1e-12).scale(0));
  }
  for (std::size_t l = 0; l < opt.confidence_levels.size(); ++l) {
    const Measures m = measures_of(ref, opt.confidence_levels[l]);
    CAPTURE(opt.confidence_levels[l]);
    CHECK(d.tails[l].var_index == m.var);
    CHECK(d.tails[l].es == doctest::Approx(m.es).epsilon(1e-11));
    for (std::size_t i = 0; i < book.size(); ++i) {
      CAPTURE(i);
      CHECK(d.es_contributions[l * book.size() + i] ==
            doctest::Approx(m.contributions[i]).epsilon(1e-10).scale(m.es));
    }
  }
  CHECK(d.expected_loss == doctest::Approx(0.002 * 7 + 0.01 * 3 + 0.03 * 5 + 0.05 * 2 + 0.08 * 4 + 0.12 +
                                           0.2 * 6 + 0.3 * 3 + 0.55 * 2 + 0.004 * 9)
                               .epsilon(1e-15));
}

TEST_CASE("correlated distribution and ES contributions match enumeration integrated over the factor") {
  // Independent computation: each default pattern's probability is the integral over the factor
  // of the product of conditional probabilities, done with Boost.Math's adaptive 61-point
  // Gauss-Kronrod rule on [-10, 10] (the normal mass beyond is below 1e-23).
  const std::vector<FactorExposure> book = small_book(0.25);
  const boost::math::normal_distribution<double> normal;
  const auto cond = [&](double pd, double z) {
    const double rho = 0.25;
    return boost::math::cdf(normal,
                            (boost::math::quantile(normal, pd) - std::sqrt(rho) * z) / std::sqrt(1.0 - rho));
  };
  const Enumerated ref = enumerate(book, [&](std::size_t mask) {
    const auto f = [&](double z) {
      double p = boost::math::pdf(normal, z);
      for (std::size_t i = 0; i < book.size(); ++i) {
        const double q = cond(book[i].pd, z);
        p *= (mask >> i & 1U) ? q : 1.0 - q;
      }
      return p;
    };
    return boost::math::quadrature::gauss_kronrod<double, 61>::integrate(f, -10.0, 10.0, 15, 1e-13);
  });
  OneFactorOptions opt;
  opt.loss_unit = 1.0;
  opt.tolerance = 1e-7;
  opt.confidence_levels = {0.95, 0.99, 0.999};
  const LossDistribution d = one_factor_loss_distribution(book, opt);
  REQUIRE(d.status == LossStatus::ok);
  CAPTURE(d.nodes);
  CHECK(d.transition_nodes > 0);
  double ref_exceed = 0.0;
  for (std::size_t k = ref.probability.size(); k-- > 0;) {
    CAPTURE(k);
    CHECK(std::fabs(d.probability[k] - ref.probability[k]) <= 1e-6 * ref.probability[k] + 1e-14);
    CHECK(std::fabs(d.exceedance[k] - ref_exceed) <= 1e-6 * ref_exceed + 1e-14);
    ref_exceed += ref.probability[k];
  }
  for (std::size_t l = 0; l < opt.confidence_levels.size(); ++l) {
    const Measures m = measures_of(ref, opt.confidence_levels[l]);
    CAPTURE(opt.confidence_levels[l]);
    CHECK(d.tails[l].var_index == m.var);
    CHECK(d.tails[l].es == doctest::Approx(m.es).epsilon(1e-5));
    double sum = 0.0;
    for (std::size_t i = 0; i < book.size(); ++i) {
      CAPTURE(i);
      const double c = d.es_contributions[l * book.size() + i];
      CHECK(c == doctest::Approx(m.contributions[i]).epsilon(1e-5).scale(m.es));
      sum += c;
    }
    CHECK(sum == doctest::Approx(d.tails[l].es).epsilon(1e-12));
  }
}

TEST_CASE("ES contributions add up to ES on a heterogeneous book, whatever the thread count") {
  // A book with non-integer losses (split between grid points), PDs from 1e-6 to 60%, a certain
  // default, a zero PD and a zero exposure, and obligor correlations from 0 to 0.4.
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::lognormal_distribution<double> size(0.0, 1.2);
  std::vector<FactorExposure> book;
  for (int i = 0; i < 400; ++i) {
    book.push_back({std::exp(std::log(1e-6) + u(rng) * std::log(6e5)), 0.45 * size(rng), 0.4 * u(rng)});
  }
  book.push_back({1.0, 3.5, 0.2});
  book.push_back({0.0, 10.0, 0.2});
  book.push_back({0.05, 0.0, 0.2});
  OneFactorOptions opt;
  opt.threads = 1;
  const LossDistribution one = one_factor_loss_distribution(book, opt);
  opt.threads = 3;
  const LossDistribution three = one_factor_loss_distribution(book, opt);
  REQUIRE(one.status == LossStatus::ok);
  REQUIRE(three.status == LossStatus::ok);
  CHECK(one.probability == three.probability);  // bit for bit
  CHECK(one.es_contributions == three.es_contributions);
  const std::size_t n = book.size();
  for (std::size_t l = 0; l < one.tails.size(); ++l) {
    double sum = 0.0;
    for (std::size_t i = 0; i < n; ++i) sum += one.es_contributions[l * n + i];
    // Euler allocation of ES is exact: the sum equals ES up to rounding (common practice, Tasche 1999).
    CHECK(sum == doctest::Approx(one.tails[l].es).epsilon(1e-10));
    CHECK(one.es_contributions[l * n + n - 2] == 0.0);  // PD 0
    CHECK(one.es_contributions[l * n + n - 1] == 0.0);  // no exposure
    // The certain default contributes its whole loss to every tail, up to the grid: its loss is
    // split between the two neighbouring grid points, and the tail favours the upper one.
    CHECK(std::fabs(one.es_contributions[l * n + n - 3] - 3.5) <= one.loss_unit);
    CHECK(one.tails[l].es >= one.tails[l].var);
    CHECK(one.tails[l].exceedance <= 1.0 - one.tails[l].confidence_level);
  }
  // Probabilities sum to one; exceedance and cumulative are complements of each other.
  double total = 0.0;
  for (double p : one.probability) total += p;
  CHECK(total == doctest::Approx(1.0).epsilon(1e-12));
  for (std::size_t k = 0; k + 1 < one.probability.size(); k += 97) {
    CHECK(one.exceedance[k] + one.cumulative[k] == doctest::Approx(1.0).epsilon(1e-12));
  }
}

TEST_CASE("a large homogeneous portfolio approaches the Vasicek limit with the granularity adjustment") {
  // Ref: Vasicek (2002), "The distribution of loan portfolio value" (limit quantile); Gordy (2004),
  // "Granularity adjustment in portfolio credit risk measurement" (first-order correction, from
  // memory): q_N = q + GA / N with GA = -1/(2 f(q)) d/dx [f(x) x (1 - x)] at x = q, f the Vasicek
  // density and x (1 - x) the conditional variance of a unit default indicator. The default rate
  // lives on a lattice of step 1/N, so the gap is compared within half a step.
  const double pd = 0.01;
  const double rho = 0.15;
  const double level = 0.999;
  const double q = vasicek_quantile_tail(1.0 - level, pd, rho);
  const boost::math::normal_distribution<double> normal;
  const auto density = [&](double x) {
    const double gx = boost::math::quantile(normal, x);
    const double arg = (std::sqrt(1.0 - rho) * gx - boost::math::quantile(normal, pd)) / std::sqrt(rho);
    return std::sqrt((1.0 - rho) / rho) * boost::math::pdf(normal, arg) / boost::math::pdf(normal, gx);
  };
  const double h = 1e-5;
  const auto g = [&](double x) { return density(x) * x * (1.0 - x); };
  const double ga = -(g(q + h) - g(q - h)) / (2.0 * h) / (2.0 * density(q));
  std::vector<double> gaps;
  for (int n : {250, 1000, 4000}) {
    std::vector<FactorExposure> book(static_cast<std::size_t>(n), FactorExposure{pd, 1.0, rho});
    OneFactorOptions opt;
    opt.loss_unit = 1.0;
    opt.confidence_levels = {level};
    opt.contributions = false;
    const LossDistribution d = one_factor_loss_distribution(book, opt);
    REQUIRE(d.status == LossStatus::ok);
    const double rate = d.tails[0].var / n;
    CAPTURE(n);
    CAPTURE(rate);
    CAPTURE(q);
    // Half a lattice step, plus a tenth of one for the second-order terms.
    CHECK(std::fabs(rate - (q + ga / n)) <= 0.6 / n);
    if (n >= 1000) CHECK(std::fabs((rate - q) * n / ga - 1.0) < 0.25);
    gaps.push_back(std::fabs(rate - q));
  }
  // The gap shrinks like 1/N towards the closed form.
  CHECK(gaps[2] < gaps[1]);
  CHECK(gaps[1] < gaps[0]);
}

TEST_CASE("bad exposures and options are refused with a message") {
  OneFactorOptions opt;
  std::vector<FactorExposure> bad = {{0.01, 1.0, 0.2}, {1.2, 1.0, 0.2}};
  LossDistribution d = one_factor_loss_distribution(bad, opt);
  CHECK(d.status == LossStatus::invalid_input);
  CHECK(d.message ==
        "exposure 2: PD must lie in [0, 1], asset correlation in [0, 1) and the loss amount be finite and "
        "non-negative");
  bad = {{0.01, -1.0, 0.2}};
  CHECK(one_factor_loss_distribution(bad, opt).status == LossStatus::invalid_input);
  bad = {{0.01, 1.0, 1.0}};
  CHECK(one_factor_loss_distribution(bad, opt).status == LossStatus::invalid_input);
  bad = {{0.01, std::nan(""), 0.2}};
  CHECK(one_factor_loss_distribution(bad, opt).status == LossStatus::invalid_input);
  const std::vector<FactorExposure> good = {{0.01, 1.0, 0.2}};
  opt.confidence_levels = {0.999, 0.99};
  d = one_factor_loss_distribution(good, opt);
  CHECK(d.status == LossStatus::invalid_input);
  CHECK(d.message == "confidence levels must be distinct, ascending and inside (0, 1)");
  opt.confidence_levels = {0.99, 1.0};
  CHECK(one_factor_loss_distribution(good, opt).status == LossStatus::invalid_input);
}

TEST_CASE("a fixed loss unit too small for the tail reports grid_too_short, an empty book a zero loss") {
  std::vector<FactorExposure> book(50, FactorExposure{0.2, 1.0, 0.3});
  OneFactorOptions opt;
  opt.loss_unit = 1.0;
  opt.grid_points = 16;  // losses of 15 or more share the last point
  const LossDistribution d = one_factor_loss_distribution(book, opt);
  CHECK(d.status == LossStatus::grid_too_short);
  CHECK(d.message.find("lies on the last grid point") != std::string::npos);
  const LossDistribution empty =
      one_factor_loss_distribution(std::vector<FactorExposure>{}, OneFactorOptions{});
  REQUIRE(empty.status == LossStatus::ok);
  CHECK(empty.tails[2].var == 0.0);
  CHECK(empty.tails[2].es == 0.0);
  CHECK(empty.expected_loss == 0.0);
}
