// Tests of the history estimators (src/history.cpp) against simulated truth, published
// definitions and independent computations.
#include "firmcall/estimate/history.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <utility>
#include <vector>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/normal.hpp"
#include "reference_solver.hpp"
#include "simulated_history.hpp"

using namespace firmcall;
using firmcall::testing::simulate;
using firmcall::testing::SimulatedHistory;
using firmcall::testing::SimulationSpec;

namespace {

EquityHistoryView view_of(const SimulatedHistory& s) {
  return {.equity_value = s.equity_value,
          .default_point = s.default_point,
          .trading_day = s.day,
          .risk_free_rate_cc = s.rate,
          .horizon_years = s.horizon};
}

AssetDynamics run(const SimulatedHistory& s, HistoryMethod m, const HistorySettings& settings = {}) {
  HistoryWorkspace ws;
  return estimate_asset_dynamics(view_of(s), {.method = m}, settings, ws);
}

// Asymptotic standard error of a volatility estimated from n Gaussian returns: sigma / sqrt(2n)
// (the variance of a sample variance is 2 sigma^4 / n, then the delta method; common practice).
double vol_se(double sigma, int returns) {
  return sigma / std::sqrt(2.0 * returns);
}

}  // namespace

TEST_CASE("equity volatility: simple estimator equals the textbook sample standard deviation") {
  // Independent check: two-pass sample variance (divisor n - 1) of daily log returns in long
  // double, times 252 (common practice).
  const std::vector<double> e = {100, 101.5, 99.8, 102.2, 103.0, 101.1, 104.7, 104.0, 106.3, 105.2};
  std::vector<double> dp(e.size(), 50.0);
  std::vector<std::int32_t> day(e.size());
  for (std::size_t i = 0; i < day.size(); ++i) day[i] = static_cast<std::int32_t>(i);
  HistorySettings settings;
  settings.min_observations = 3;
  const EquityVolEstimate v = estimate_equity_vol({e, dp, day, 0.03, 1.0}, settings);
  long double mean = 0;
  for (std::size_t i = 1; i < e.size(); ++i) mean += logl(static_cast<long double>(e[i]) / e[i - 1]);
  mean /= (e.size() - 1);
  long double ss = 0;
  for (std::size_t i = 1; i < e.size(); ++i) {
    const long double d = logl(static_cast<long double>(e[i]) / e[i - 1]) - mean;
    ss += d * d;
  }
  const double expected = static_cast<double>(sqrtl(ss / (e.size() - 2) * 252.0L));
  CHECK(v.simple_annual == doctest::Approx(expected).epsilon(1e-13));
  CHECK(v.returns == 9);
  CHECK(v.mean_log_return_annual == doctest::Approx(static_cast<double>(mean * 252.0L)).epsilon(1e-13));
}

TEST_CASE("equity volatility: EWMA equals the RiskMetrics recursion, normalised") {
  // RiskMetrics Technical Document (J.P. Morgan/Reuters 1996, from memory): zero-mean recursion
  // s2_t = lambda s2_(t-1) + (1 - lambda) r_t^2. Started at 0 its weights sum to 1 - lambda^n, so
  // the normalised estimate is s2_n / (1 - lambda^n). Computed here by the recursion, not by the
  // weighted sum the library uses.
  const std::vector<double> e = {50, 51, 49.5, 49.9, 52.3, 51.7, 53.0, 52.2, 50.8, 51.5, 52.9, 53.4};
  std::vector<double> dp(e.size(), 20.0);
  std::vector<std::int32_t> day(e.size());
  for (std::size_t i = 0; i < day.size(); ++i) day[i] = static_cast<std::int32_t>(i);
  HistorySettings settings;
  settings.min_observations = 3;
  const double lambda = settings.ewma_decay;
  long double s2 = 0;
  for (std::size_t i = 1; i < e.size(); ++i) {
    const long double r = logl(static_cast<long double>(e[i]) / e[i - 1]);
    s2 = lambda * s2 + (1 - lambda) * r * r;
  }
  s2 /= (1 - powl(lambda, e.size() - 1));
  const EquityVolEstimate v = estimate_equity_vol({e, dp, day, 0.03, 1.0}, settings);
  CHECK(v.ewma_annual == doctest::Approx(static_cast<double>(sqrtl(s2 * 252))).epsilon(1e-13));

  // Returns of constant size a give exactly a sqrt(252) whatever the weights.
  std::vector<double> zig;
  double x = 80.0;
  for (int i = 0; i < 40; ++i) {
    zig.push_back(x);
    x *= (i % 3 == 0) ? std::exp(0.02) : std::exp(-0.02);
  }
  std::vector<double> dp2(zig.size(), 10.0);
  std::vector<std::int32_t> day2(zig.size());
  for (std::size_t i = 0; i < day2.size(); ++i) day2[i] = static_cast<std::int32_t>(i);
  const EquityVolEstimate z = estimate_equity_vol({zig, dp2, day2, 0.0, 1.0}, settings);
  CHECK(z.ewma_annual == doctest::Approx(0.02 * std::sqrt(252.0)).epsilon(1e-13));
}

TEST_CASE("equity volatility: gaps are returns over several days, not extra volatility") {
  // Simulated truth: equity of a firm with no debt to speak of moves like its assets (GBM,
  // sigma 0.30). Dropping every fifth day leaves returns over 2 days; the span-weighted
  // estimator must still find sigma within 4 asymptotic standard errors (sigma / sqrt(2n)).
  SimulationSpec spec{.seed = 11, .observations = 1001, .asset_vol = 0.30, .default_point = 1e-3};
  const SimulatedHistory s = simulate(spec);
  SimulatedHistory g;
  g.rate = s.rate;
  g.horizon = s.horizon;
  for (std::size_t i = 0; i < s.day.size(); ++i) {
    if (i % 5 == 3) continue;
    g.equity_value.push_back(s.equity_value[i]);
    g.default_point.push_back(s.default_point[i]);
    g.day.push_back(s.day[i]);
  }
  const EquityVolEstimate v = estimate_equity_vol(view_of(g), HistorySettings{});
  CHECK(v.returns == static_cast<int>(g.day.size()) - 1);
  CHECK(std::fabs(v.simple_annual - 0.30) < 4.0 * vol_se(0.30, v.returns));
  CHECK(std::fabs(v.ewma_annual - 0.30) < 0.30 * 0.5);  // effective sample ~ 30 days
  CHECK(v.years == doctest::Approx(1000.0 / 252.0));
}

TEST_CASE("naive distance to default matches a hand computation (Bharath and Shumway 2008)") {
  // Definition (Bharath and Shumway 2008, Review of Financial Studies 21(3), section 3, from
  // memory): naive sD = 0.05 + 0.25 sE; naive sV = E/(E+F) sE + F/(E+F) naive sD;
  // naive DD = [ln((E+F)/F) + (r_prev - naive sV^2 / 2) T] / (naive sV sqrt(T)).
  // E = 400, F = 700, sE = 0.45, r_prev = 0.10, T = 1, worked by hand:
  //   sD = 0.05 + 0.1125 = 0.1625
  //   sV = (4/11) 0.45 + (7/11) 0.1625 = 0.163636.. + 0.103409.. = 0.2670454545..
  //   ln(1100/700) = 0.4519851237..;  sV^2/2 = 0.0356566374..
  //   DD = (0.4519851237 + 0.10 - 0.0356566374) / 0.2670454545 = 0.5163284863 / 0.2670454545
  //      = 1.933485..
  const NaiveDistance d = naive_distance_to_default(400.0, 700.0, 0.45, 0.10, 1.0);
  CHECK(d.debt_vol_annual == doctest::Approx(0.1625).epsilon(1e-15));
  CHECK(d.asset_vol_annual == doctest::Approx(0.2670454545).epsilon(1e-10));
  CHECK(d.asset_value == 1100.0);
  CHECK(d.distance_to_default == doctest::Approx(1.933485).epsilon(1e-6));
  // PD = N(-DD); N(-1.9335) = 0.02659 (normal table, Abramowitz and Stegun 26.2, interpolated).
  CHECK(d.pd == doctest::Approx(0.02659).epsilon(5e-4));
}

TEST_CASE("naive method over a history uses the window's volatility and return") {
  // The history wrapper must feed Bharath and Shumway's formula with the simple estimate of sE,
  // r_prev = E_n / E_0 - 1 over a one-year window, and F = the last day's default point.
  const SimulatedHistory s = simulate({.seed = 5, .observations = 253});
  HistorySettings settings;
  settings.drift_shrinkage = 0.0;  // the drift rule off: Bharath and Shumway's r_prev as it stands
  settings.drift_cap = 10.0;
  const AssetDynamics a = run(s, HistoryMethod::naive, settings);
  REQUIRE(a.usable());
  const EquityVolEstimate v = estimate_equity_vol(view_of(s), settings);
  const double r_prev = s.equity_value.back() / s.equity_value.front() - 1.0;
  const NaiveDistance d =
      naive_distance_to_default(s.equity_value.back(), s.default_point.back(), v.simple_annual, r_prev, 1.0);
  CHECK(a.drift_annual == doctest::Approx(r_prev).epsilon(1e-12));
  CHECK(a.distance_to_default == doctest::Approx(d.distance_to_default).epsilon(1e-12));
  CHECK(a.asset_vol_annual == doctest::Approx(d.asset_vol_annual).epsilon(1e-12));
  CHECK(std::isnan(a.asset_vol_se));
}

TEST_CASE("one-day inversion matches the long-double reference") {
  // Reference: tests/support/reference_solver.hpp, nested bisection in long double (independent code).
  struct Case {
    double e, dp, r, t, sv;
  };
  const Case cases[] = {{400, 700, 0.03, 1, 0.2},     {5, 1000, 0.01, 1, 0.1},  {9000, 100, 0.05, 2, 0.4},
                        {120, 150, -0.005, 0.5, 0.6}, {1.5, 30, 0.04, 1, 0.05}, {800, 790, 0.02, 5, 0.15}};
  for (const Case& c : cases) {
    const long double k = c.dp * expl(-static_cast<long double>(c.r) * c.t);
    const double ref = static_cast<double>(firmcall::testing::ref_asset_value(c.sv, c.e, k, c.t));
    for (double guess : {0.0, c.e * 1.5, 1e300}) {
      const double v = asset_value_from_equity(c.e, c.dp, c.r, c.t, c.sv, guess);
      CHECK(v == doctest::Approx(ref).epsilon(1e-14));
    }
  }
  CHECK(std::isnan(asset_value_from_equity(-1.0, 700, 0.03, 1, 0.2, 0)));
  CHECK(std::isnan(asset_value_from_equity(400, 700, 0.03, 1, 0.0, 0)));
}

TEST_CASE("iterative and mle recover the simulated asset volatility") {
  // Simulated truth (tests/support/simulated_history.hpp). Tolerance: 4 asymptotic standard errors
  // sigma / sqrt(2n) for n returns; each check fails by chance with probability ~6e-5.
  struct Case {
    double sv, dp, mu;
  };
  const Case cases[] = {{0.25, 600, 0.08}, {0.15, 850, 0.03}, {0.40, 300, 0.12}, {0.20, 950, 0.05}};
  std::uint64_t seed = 100;
  for (const Case& c : cases) {
    const SimulatedHistory s = simulate(
        {.seed = ++seed, .observations = 253, .asset_vol = c.sv, .drift = c.mu, .default_point = c.dp});
    const int n = 252;
    for (HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle}) {
      CAPTURE(to_string(m));
      CAPTURE(c.sv);
      CAPTURE(c.dp);
      const AssetDynamics a = run(s, m);
      REQUIRE(a.usable());
      const double err = a.asset_vol_annual - c.sv;
      MESSAGE(to_string(m), " sV true ", c.sv, " DP ", c.dp, ": estimate ", a.asset_vol_annual, ", error ",
              err, " (", err / vol_se(c.sv, n), " asymptotic SE)");
      CHECK(std::fabs(err) < 4.0 * vol_se(c.sv, n));
      // Last-day asset value: the true V_n, to the precision sV carries into the inversion.
      CHECK(a.asset_value == doctest::Approx(s.asset_value.back()).epsilon(0.02));
    }
  }
}

TEST_CASE("iterative method reports passes and stays within its budget") {
  // Grid of leverages; the fixed point contracts faster at low leverage. Budget: 60 passes at
  // the default tolerance 1e-8 (the default cap is 200).
  std::uint64_t seed = 300;
  for (double dp : {100.0, 500.0, 900.0, 1200.0}) {
    const SimulatedHistory s = simulate({.seed = ++seed, .default_point = dp});
    const AssetDynamics a = run(s, HistoryMethod::iterative);
    CAPTURE(dp);
    REQUIRE(a.usable());
    CHECK(a.iterations >= 2);
    CHECK(a.iterations <= 60);
    CHECK(a.last_change < 1e-8);
  }
  // A budget of one pass cannot meet 1e-8 from the naive start: status max_iterations.
  HistorySettings tight;
  tight.max_iterations = 1;
  const AssetDynamics b = run(simulate({.seed = 9, .default_point = 800}), HistoryMethod::iterative, tight);
  CHECK(b.status == EstimateStatus::max_iterations);
  CHECK_FALSE(b.usable());
}

TEST_CASE("mle recovers the drift within its sampling error") {
  // The drift of GBM observed over Y years has standard error sigma / sqrt(Y) (common
  // practice); with Y = 4 years and 4 such errors as tolerance.
  const SimulatedHistory s = simulate({.seed = 77, .observations = 1009, .asset_vol = 0.2, .drift = 0.1});
  const AssetDynamics a = run(s, HistoryMethod::mle);
  REQUIRE(a.usable());
  CHECK(std::fabs(a.drift_annual - 0.1) < 4.0 * 0.2 / std::sqrt(4.0));
  // The reported standard error is the observed-information one; for the drift it must equal
  // sigma_hat / sqrt(Y) (d2L/dmu2 = -sum h / sigma^2), up to the sV-mu correlation term.
  CHECK(a.drift_se == doctest::Approx(a.asset_vol_annual / std::sqrt(1008.0 / 252.0)).epsilon(0.02));
}

TEST_CASE("iterative and mle agree on Merton-consistent data") {
  // Both are consistent for the same sV; they differ by the Jacobian term and the n - 1 divisor.
  // Tolerance (ours): a quarter of the asymptotic standard error sigma / sqrt(2n).
  std::uint64_t seed = 500;
  for (double dp : {200.0, 600.0, 900.0}) {
    const SimulatedHistory s = simulate({.seed = ++seed, .observations = 253, .default_point = dp});
    const AssetDynamics it = run(s, HistoryMethod::iterative);
    const AssetDynamics ml = run(s, HistoryMethod::mle);
    REQUIRE(it.usable());
    REQUIRE(ml.usable());
    MESSAGE("DP ", dp, ": iterative ", it.asset_vol_annual, ", mle ", ml.asset_vol_annual);
    CHECK(std::fabs(it.asset_vol_annual - ml.asset_vol_annual) < 0.25 * vol_se(ml.asset_vol_annual, 252));
    CHECK(it.asset_value == doctest::Approx(ml.asset_value).epsilon(1e-3));
  }
}

TEST_CASE("constant debt: the last day's asset value equals the scoring solver's") {
  // The scoring solver (merton_solver.hpp) given E_n and the equity volatility the model implies
  // at the estimate, sE = N(d1) sV V / E (Ito's lemma), must return the same V_n and sV.
  const SimulatedHistory s = simulate({.seed = 21, .default_point = 700});
  HistorySettings raw;  // DD with the estimated drift as it stands, as the solver is given it
  raw.drift_shrinkage = 0.0;
  raw.drift_cap = 10.0;
  const AssetDynamics a = run(s, HistoryMethod::iterative, raw);
  REQUIRE(a.usable());
  MertonInputs in{.equity_value = s.equity_value.back(),
                  .equity_vol_annual = 0.0,
                  .default_point = s.default_point.back(),
                  .risk_free_rate_cc = s.rate,
                  .horizon_years = s.horizon,
                  .drift_annual = a.drift_annual};
  const MertonMeasures m = merton_measures(in, a.asset_value, a.asset_vol_annual);
  in.equity_vol_annual = norm_cdf(m.d1) * a.asset_vol_annual * a.asset_value / in.equity_value;
  const AssetSolution sol = solve_asset(in);
  REQUIRE(sol.usable());
  CHECK(sol.asset_value == doctest::Approx(a.asset_value).epsilon(1e-10));
  CHECK(sol.asset_vol_annual == doctest::Approx(a.asset_vol_annual).epsilon(1e-9));
  const MertonMeasures ms = merton_measures(in, sol.asset_value, sol.asset_vol_annual);
  CHECK(ms.distance_to_default == doctest::Approx(a.distance_to_default).epsilon(1e-8));
}

TEST_CASE("a default point that changes over time is followed day by day") {
  // Simulated truth with the default point stepping up 15% each quarter. Using the right DP_t
  // recovers sV (4 asymptotic SEs); freezing DP at its last value must not be what the
  // estimator does, so its V_0 must match the true V_0.
  const SimulatedHistory s =
      simulate({.seed = 31, .asset_vol = 0.22, .default_point = 500, .dp_growth = 0.15, .dp_step_days = 63});
  for (HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle}) {
    HistoryWorkspace ws;
    const AssetDynamics a = estimate_asset_dynamics(view_of(s), {.method = m}, HistorySettings{}, ws);
    REQUIRE(a.usable());
    CHECK(std::fabs(a.asset_vol_annual - 0.22) < 4.0 * vol_se(0.22, 252));
    CHECK(ws.asset_value.front() == doctest::Approx(s.asset_value.front()).epsilon(0.02));
    CHECK(a.default_point == s.default_point.back());
  }
}

TEST_CASE("mle interval for sV covers the truth at close to its nominal rate") {
  // Over M independent simulated histories the 95% Wald interval (observed information) should
  // cover the true sV in a fraction p close to 0.95. Tolerance: 3 binomial standard errors
  // sqrt(0.95 x 0.05 / M) (common practice). Also the delta-method DD interval against the true
  // DD (true V_n, sV, mu), and the mean reported SE of sV against the spread of the estimates.
  constexpr int kRuns = 400;
  int covered_sv = 0;
  int covered_dd = 0;
  double sum_se = 0.0;
  double sum_est = 0.0;
  double sum_est2 = 0.0;
  const double sv = 0.25;
  const double mu = 0.06;
  for (int i = 0; i < kRuns; ++i) {
    const SimulatedHistory s = simulate(
        {.seed = 10000u + static_cast<std::uint64_t>(i), .asset_vol = sv, .drift = mu, .default_point = 700});
    HistorySettings raw;  // the interval of DD with the estimated drift, which the truth uses
    raw.drift_shrinkage = 0.0;
    raw.drift_cap = 10.0;
    const AssetDynamics a = run(s, HistoryMethod::mle, raw);
    REQUIRE(a.usable());
    if (a.asset_vol_lo <= sv && sv <= a.asset_vol_hi) ++covered_sv;
    const double dd_true =
        (std::log(s.asset_value.back() / s.default_point.back()) + (mu - 0.5 * sv * sv)) / sv;
    if (a.dd_lo <= dd_true && dd_true <= a.dd_hi) ++covered_dd;
    sum_se += a.asset_vol_se;
    sum_est += a.asset_vol_annual;
    sum_est2 += a.asset_vol_annual * a.asset_vol_annual;
  }
  const double p_sv = static_cast<double>(covered_sv) / kRuns;
  const double p_dd = static_cast<double>(covered_dd) / kRuns;
  const double tol = 3.0 * std::sqrt(0.95 * 0.05 / kRuns);
  const double mean_est = sum_est / kRuns;
  const double sd_est = std::sqrt((sum_est2 - kRuns * mean_est * mean_est) / (kRuns - 1));
  MESSAGE("mle 95% interval coverage over ", kRuns, " runs: sV ", p_sv, ", DD ", p_dd, " (tolerance +-", tol,
          "); mean SE(sV) ", sum_se / kRuns, " vs spread of estimates ", sd_est, " vs sigma/sqrt(2n) ",
          vol_se(sv, 252));
  CHECK(std::fabs(p_sv - 0.95) <= tol);
  CHECK(std::fabs(p_dd - 0.95) <= tol);
  // Spread of M estimates has relative standard error ~ 1/sqrt(2(M-1)) = 3.5%; allow 4 of them.
  CHECK(sum_se / kRuns == doctest::Approx(sd_est).epsilon(0.14));
}

TEST_CASE("bad histories fail cleanly with a status, never a throw") {
  // Boost.Math test_normal.cpp style (common practice): non-positive, NaN and infinite inputs.
  const SimulatedHistory good = simulate({.seed = 3});
  HistorySettings settings;
  const double bad_values[] = {0.0, -1.0, std::numeric_limits<double>::quiet_NaN(),
                               std::numeric_limits<double>::infinity()};
  for (double b : bad_values) {
    SimulatedHistory s = good;
    s.equity_value[17] = b;
    const AssetDynamics a = run(s, HistoryMethod::mle);
    CHECK(a.status == EstimateStatus::invalid_input);
    CHECK(a.bad_index == 17);
    SimulatedHistory d = good;
    d.default_point[40] = b;
    CHECK(run(d, HistoryMethod::iterative).status == EstimateStatus::invalid_input);
  }
  SimulatedHistory u = good;
  std::swap(u.day[10], u.day[11]);
  CHECK(run(u, HistoryMethod::naive).status == EstimateStatus::invalid_input);
  SimulatedHistory shortened = good;
  shortened.equity_value.resize(119);
  shortened.default_point.resize(119);
  shortened.day.resize(119);
  const AssetDynamics a = run(shortened, HistoryMethod::iterative);
  CHECK(a.status == EstimateStatus::too_short);
  CHECK(std::string_view(a.message).find("min_observations") != std::string_view::npos);
  SimulatedHistory flat = good;
  std::fill(flat.equity_value.begin(), flat.equity_value.end(), 100.0);
  CHECK(run(flat, HistoryMethod::iterative).status == EstimateStatus::invalid_input);
  HistorySettings wrong;
  wrong.ewma_decay = 1.0;
  CHECK(run(good, HistoryMethod::iterative, wrong).status == EstimateStatus::invalid_input);
  CHECK(validate(view_of(good), HistorySettings{}).ok());  // default settings pass
}

TEST_CASE("two-sided normal quantile") {
  // Standard normal table (Abramowitz and Stegun 26.2, from memory): 1.959963985 for 95%,
  // 2.575829304 for 99%, 1.644853627 for 90%.
  CHECK(two_sided_normal_quantile(0.95) == doctest::Approx(1.959963985).epsilon(1e-9));
  CHECK(two_sided_normal_quantile(0.99) == doctest::Approx(2.575829304).epsilon(1e-9));
  CHECK(two_sided_normal_quantile(0.90) == doctest::Approx(1.644853627).epsilon(1e-9));
  CHECK(std::isnan(two_sided_normal_quantile(1.0)));
}

TEST_CASE("random and extreme histories end with a status and finite usable estimates") {
  // Robustness grid (common practice, no reference value): equity from far out of the money to
  // far in the money, volatilities from 1% to 150%, every method. Whatever the status, a usable
  // result must be finite and a failed one must say why.
  std::mt19937_64 gen(2024);
  int usable = 0;
  for (int i = 0; i < 120; ++i) {
    std::uniform_real_distribution<double> u(0.0, 1.0);
    const double sv = 0.01 + 1.49 * u(gen);
    const double dp = 1000.0 * std::pow(10.0, -2.0 + 4.0 * u(gen));  // DP/V0 from 0.01 to 100
    SimulationSpec spec{.seed = 7000u + static_cast<std::uint64_t>(i),
                        .observations = 130,
                        .asset_vol = sv,
                        .drift = -0.2 + 0.4 * u(gen),
                        .default_point = dp};
    SimulatedHistory s = simulate(spec);
    bool positive = true;
    for (double e : s.equity_value) positive = positive && e > 0.0 && std::isfinite(e);
    if (!positive) continue;  // equity rounded to zero: not a history anyone could observe
    for (HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle, HistoryMethod::naive}) {
      CAPTURE(i);
      CAPTURE(to_string(m));
      const AssetDynamics a = run(s, m);
      if (a.usable()) {
        ++usable;
        CHECK(std::isfinite(a.asset_vol_annual));
        CHECK(a.asset_vol_annual > 0.0);
        CHECK(std::isfinite(a.asset_value));
        CHECK(std::isfinite(a.distance_to_default));
        CHECK(a.pd >= 0.0);
        CHECK(a.pd <= 1.0);
      } else {
        CHECK(std::string_view(a.message).size() > 0);
      }
    }
  }
  MESSAGE("usable estimates on the random grid: ", usable);
  CHECK(usable > 200);
}

namespace {

// Merton (1974) distance to default and PD written out here, independently of src/:
// DD = [ln(V/DP) + (mu - sV^2/2) T] / (sV sqrt T), PD = N(-DD) = erfc(DD / sqrt 2) / 2 (C library).
double reference_dd(double v, double dp, double mu, double sv, double t) {
  return (std::log(v / dp) + (mu - 0.5 * sv * sv) * t) / (sv * std::sqrt(t));
}
double reference_pd(double dd) {
  return 0.5 * std::erfc(dd / std::numbers::sqrt2);
}

// The drift rule of history.hpp written out: r + clamp((1 - w)(mu - r), -cap, cap).
double reference_drift(double mu, double r, double w, double cap) {
  return r + std::clamp((1.0 - w) * (mu - r), -cap, cap);
}

}  // namespace

TEST_CASE("drift in DD: estimate, shrunk, capped and the rate") {
  // Hand computations of the rule (common practice: shrink the estimate towards r, cap it).
  HistorySettings s;  // shrinkage 0.5, cap 0.10
  DriftInDistance d = drift_in_distance(0.30, 0.03, false, s);
  CHECK(d.source == DriftSource::capped);  // 0.5 x 0.27 = 0.135 > 0.10
  CHECK(d.drift == doctest::Approx(0.13).epsilon(1e-15));
  CHECK(d.slope == 0.0);
  d = drift_in_distance(-0.30, 0.03, false, s);  // 0.5 x -0.33 = -0.165 < -0.10
  CHECK(d.source == DriftSource::capped);
  CHECK(d.drift == doctest::Approx(-0.07).epsilon(1e-15));
  d = drift_in_distance(0.11, 0.03, false, s);  // 0.03 + 0.5 x 0.08 = 0.07
  CHECK(d.source == DriftSource::shrunk);
  CHECK(d.drift == doctest::Approx(0.07).epsilon(1e-15));
  CHECK(d.slope == 0.5);
  d = drift_in_distance(0.30, 0.03, true, s);
  CHECK(d.source == DriftSource::rate);
  CHECK(d.drift == 0.03);
  s.drift_shrinkage = 0.0;
  s.drift_cap = 0.5;
  d = drift_in_distance(0.30, 0.03, false, s);
  CHECK(d.source == DriftSource::estimate);
  CHECK(d.drift == 0.30);
  CHECK(d.slope == 1.0);
  CHECK(to_string(DriftSource::capped) == "capped");
  CHECK(to_string(DriftSource::rate) == "rate");
}

TEST_CASE("a 30% asset drift: the cap binds and DD, PD follow the drift used under each measure") {
  // Invented series: assets drift at 30% a year with sV = 10% over two years, so the estimate
  // (standard error about 0.10 / sqrt 2) stays far above r + 2 x cap = 0.23 for this seed.
  const SimulatedHistory sim = simulate({.seed = 31,
                                         .observations = 505,
                                         .asset_vol = 0.10,
                                         .drift = 0.30,
                                         .default_point = 700,
                                         .rate = 0.03});
  struct Rule {
    bool risk_neutral;
    double shrinkage;
    double cap;
    DriftSource source;
  };
  const Rule rules[] = {{false, 0.5, 0.10, DriftSource::capped},
                        {false, 0.5, 1.0, DriftSource::shrunk},
                        {false, 0.0, 1.0, DriftSource::estimate},
                        {true, 0.5, 0.10, DriftSource::rate}};
  for (HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle, HistoryMethod::naive}) {
    for (const Rule& rule : rules) {
      CAPTURE(to_string(m));
      CAPTURE(rule.risk_neutral);
      CAPTURE(rule.shrinkage);
      CAPTURE(rule.cap);
      HistorySettings settings;
      settings.drift_shrinkage = rule.shrinkage;
      settings.drift_cap = rule.cap;
      HistoryWorkspace ws;
      const AssetDynamics a = estimate_asset_dynamics(
          view_of(sim), {.method = m, .risk_neutral = rule.risk_neutral}, settings, ws);
      REQUIRE(a.usable());
      REQUIRE(a.drift_annual > 0.23);
      CHECK(a.drift_source == rule.source);
      const double mu =
          rule.risk_neutral ? 0.03 : reference_drift(a.drift_annual, 0.03, rule.shrinkage, rule.cap);
      CHECK(a.drift_used == doctest::Approx(mu).epsilon(1e-15));
      if (rule.source == DriftSource::capped) CHECK(a.drift_used == doctest::Approx(0.13).epsilon(1e-15));
      // The naive DD takes V = E + F and its own sV (Bharath and Shumway 2008), not the Merton V.
      const double dd = reference_dd(a.asset_value, a.default_point, mu, a.asset_vol_annual, 1.0);
      CHECK(a.distance_to_default == doctest::Approx(dd).epsilon(1e-12));
      CHECK(a.pd == doctest::Approx(reference_pd(dd)).epsilon(1e-12));
      CHECK(ws.distance_to_default.back() == a.distance_to_default);
      if (m == HistoryMethod::mle) {
        // Delta method through mu_used: capped or risk-neutral, DD no longer moves with mu, so
        // se(DD) comes from sV alone and is smaller than with the estimate as it stands.
        CHECK(a.dd_se > 0.0);
        CHECK(a.pd_lo <= a.pd);
        CHECK(a.pd <= a.pd_hi);
      }
    }
  }
}

TEST_CASE("mle: se(DD) goes through the drift used") {
  // se(DD)^2 = g' C g with g_mu = slope x sqrt(T)/sV (delta method; Duan 1994 for C). With the
  // rate, g_mu = 0 and only sV's uncertainty remains; with the estimate as it stands, the drift's
  // (se(mu) about sV / sqrt(years), common practice) adds about 1 to se(DD) over one year, and
  // (sV, mu) are close to uncorrelated for geometric Brownian motion (from memory).
  const SimulatedHistory sim = simulate({.seed = 8, .asset_vol = 0.20});
  HistorySettings raw;
  raw.drift_shrinkage = 0.0;
  raw.drift_cap = 10.0;
  HistoryWorkspace ws;
  const AssetDynamics est = estimate_asset_dynamics(view_of(sim), {.method = HistoryMethod::mle}, raw, ws);
  const AssetDynamics rn =
      estimate_asset_dynamics(view_of(sim), {.method = HistoryMethod::mle, .risk_neutral = true}, raw, ws);
  REQUIRE(est.usable());
  REQUIRE(rn.usable());
  CHECK(est.drift_source == DriftSource::estimate);
  CHECK(rn.drift_source == DriftSource::rate);
  CHECK(est.asset_vol_se == rn.asset_vol_se);  // the estimates do not depend on the measure
  CHECK(est.drift_annual == rn.drift_annual);
  CHECK(rn.dd_se > 0.0);
  CHECK(est.dd_se > rn.dd_se + 0.5);
}

TEST_CASE("drift settings out of range are refused with a status") {
  const SimulatedHistory sim = simulate({.seed = 3});
  for (auto [w, cap] : {std::pair{-0.1, 0.1}, std::pair{1.5, 0.1}, std::pair{0.5, -0.01},
                        std::pair{0.5, std::numeric_limits<double>::quiet_NaN()}}) {
    HistorySettings s;
    s.drift_shrinkage = w;
    s.drift_cap = cap;
    CHECK(s.validate().has_value());
    const AssetDynamics a = run(sim, HistoryMethod::iterative, s);
    CHECK(a.status == EstimateStatus::invalid_input);
  }
  HistorySettings s;
  s.drift_cap = -1.0;
  CHECK(s.validate()->field == "drift_cap");
}
