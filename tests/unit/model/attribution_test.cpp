// Tests of the Shapley attribution of PD changes. The reference for every check is the definition
// in Shapley (1953): the value of a player is its marginal contribution averaged over all orders of
// arrival, which this file computes independently by walking every permutation of the drivers.
#include <doctest/doctest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <numeric>
#include <vector>

#include "firmcall/model/attribution.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {

// PD of the Merton model at `in`, solved one obligor at a time.
double pd_at(const MertonInputs& in) {
  const AssetSolution s = solve_asset(in);
  REQUIRE(s.usable());
  return merton_measures(in, s.asset_value, s.asset_vol_annual).pd;
}

// Inputs with the drivers in `moved` at their new values. `drift_own`: the drift is a driver of
// its own (index 5); otherwise it follows the rate when it equals the rate in both runs, else it
// stays fixed (the rule stated in attribution.hpp).
MertonInputs mixed(const MertonInputs& a, const MertonInputs& b, const std::array<bool, 6>& moved,
                   bool drift_own) {
  MertonInputs m;
  m.equity_value = moved[0] ? b.equity_value : a.equity_value;
  m.equity_vol_annual = moved[1] ? b.equity_vol_annual : a.equity_vol_annual;
  m.default_point = moved[2] ? b.default_point : a.default_point;
  m.risk_free_rate_cc = moved[3] ? b.risk_free_rate_cc : a.risk_free_rate_cc;
  m.horizon_years = moved[4] ? b.horizon_years : a.horizon_years;
  if (drift_own) {
    m.drift_annual = moved[5] ? b.drift_annual : a.drift_annual;
  } else if (a.drift_annual == a.risk_free_rate_cc && b.drift_annual == b.risk_free_rate_cc) {
    m.drift_annual = m.risk_free_rate_cc;
  } else {
    m.drift_annual = a.drift_annual;
  }
  return m;
}

// Shapley values by brute force over all n! orders of moving the drivers one at a time.
std::vector<double> permutation_average(const MertonInputs& a, const MertonInputs& b, int n) {
  std::vector<int> order(static_cast<std::size_t>(n));
  std::iota(order.begin(), order.end(), 0);
  std::vector<double> sum(static_cast<std::size_t>(n), 0.0);
  int orders = 0;
  do {
    std::array<bool, 6> moved{};
    double prev = pd_at(mixed(a, b, moved, n == 6));
    for (int d : order) {
      moved[static_cast<std::size_t>(d)] = true;
      const double next = pd_at(mixed(a, b, moved, n == 6));
      sum[static_cast<std::size_t>(d)] += next - prev;
      prev = next;
    }
    ++orders;
  } while (std::next_permutation(order.begin(), order.end()));
  CHECK(orders == (n == 6 ? 720 : 120));
  for (double& s : sum) s /= orders;
  return sum;
}

MertonInputs deteriorating_before() {
  return {.equity_value = 1000.0,
          .equity_vol_annual = 0.35,
          .default_point = 800.0,
          .risk_free_rate_cc = 0.03,
          .horizon_years = 1.0,
          .drift_annual = 0.03};
}
MertonInputs deteriorating_after() {
  return {.equity_value = 620.0,
          .equity_vol_annual = 0.52,
          .default_point = 860.0,
          .risk_free_rate_cc = 0.036,
          .horizon_years = 1.0,
          .drift_annual = 0.036};
}

double contribution_sum(const PdAttribution& a) {
  return std::accumulate(a.contribution.begin(), a.contribution.end(), 0.0);
}

}  // namespace

TEST_CASE("Shapley attribution sums to the PD change and equals the average over all 120 orders") {
  const MertonInputs a = deteriorating_before();
  const MertonInputs b = deteriorating_after();
  const PdAttribution r = attribute_pd_change(a, b);
  REQUIRE(r.usable());
  CHECK(r.drivers == 5);
  // The endpoints are the PDs of the two runs (solve_asset_batch returns what solve_asset does).
  CHECK(r.pd_before == pd_at(a));
  CHECK(r.pd_after == pd_at(b));
  CHECK(r.pd_after > r.pd_before);
  // Efficiency (Shapley 1953): the values add up to the whole change.
  CHECK(std::fabs(contribution_sum(r) - r.total()) <= 1e-12);
  // Null player (Shapley 1953): the horizon did not move and gets exactly nothing; so does the drift,
  // which follows the rate here.
  CHECK(r.share(Driver::horizon) == 0.0);
  CHECK(r.share(Driver::drift) == 0.0);
  // Order independence: the same numbers as averaging over every order of the five drivers.
  const std::vector<double> brute = permutation_average(a, b, 5);
  for (std::size_t i = 0; i < 5; ++i) CHECK(std::fabs(r.contribution[i] - brute[i]) <= 1e-14);
  // Lower equity, higher volatility and a higher default point all raise the PD (Merton 1974
  // comparative statics, from memory).
  CHECK(r.share(Driver::equity_value) > 0.0);
  CHECK(r.share(Driver::equity_vol) > 0.0);
  CHECK(r.share(Driver::default_point) > 0.0);
}

TEST_CASE("going back from the new run to the old one negates every share") {
  // Shapley values are linear in the game (Shapley 1953); reversing the move gives the game
  // v'(S) = v(N \ S) - v(N) shifted, whose values are the negatives.
  const PdAttribution fwd = attribute_pd_change(deteriorating_before(), deteriorating_after());
  const PdAttribution back = attribute_pd_change(deteriorating_after(), deteriorating_before());
  REQUIRE(fwd.usable());
  REQUIRE(back.usable());
  for (std::size_t i = 0; i < kDriverCount; ++i)
    CHECK(std::fabs(fwd.contribution[i] + back.contribution[i]) <= 1e-15);
}

TEST_CASE("a single moved driver carries the whole change") {
  MertonInputs b = deteriorating_before();
  b.equity_vol_annual = 0.45;
  const PdAttribution r = attribute_pd_change(deteriorating_before(), b);
  REQUIRE(r.usable());
  // Shapley (1953), null player and efficiency: all of it goes to the one player that moved.
  CHECK(r.share(Driver::equity_vol) == doctest::Approx(r.total()).epsilon(1e-14));
  for (Driver d :
       {Driver::equity_value, Driver::default_point, Driver::rate, Driver::horizon, Driver::drift}) {
    CHECK(r.share(d) == 0.0);
  }
}

TEST_CASE("a drift that moves on its own is a sixth driver, checked over all 720 orders") {
  MertonInputs a = deteriorating_before();
  a.drift_annual = 0.07;  // the obligor gives its own expected asset return
  MertonInputs b = deteriorating_after();
  b.drift_annual = 0.02;
  b.horizon_years = 2.0;
  const PdAttribution r = attribute_pd_change(a, b);
  REQUIRE(r.usable());
  CHECK(r.drivers == 6);
  CHECK(std::fabs(contribution_sum(r) - r.total()) <= 1e-12);
  CHECK(r.share(Driver::drift) > 0.0);  // a lower drift raises the physical PD (DD formula)
  const std::vector<double> brute = permutation_average(a, b, 6);
  for (std::size_t i = 0; i < 6; ++i) CHECK(std::fabs(r.contribution[i] - brute[i]) <= 1e-14);
}

TEST_CASE("sums to the change over a grid of random obligor pairs, agrees with the order average") {
  const auto base = testing::generated_obligors(40, 11);
  std::mt19937_64 rng(5);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  int checked = 0;
  for (std::size_t k = 0; k < base.size(); ++k) {
    const MertonInputs& a = base[k];
    MertonInputs b = a;
    b.equity_value *= std::exp(0.4 * u(rng));
    b.equity_vol_annual *= std::exp(0.3 * u(rng));
    b.default_point *= std::exp(0.2 * u(rng));
    b.risk_free_rate_cc += 0.01 * u(rng);
    b.drift_annual = b.risk_free_rate_cc + (a.drift_annual - a.risk_free_rate_cc);
    const PdAttribution r = attribute_pd_change(a, b);
    REQUIRE(r.usable());
    CHECK(std::fabs(contribution_sum(r) - r.total()) <= 1e-12);
    if (k % 8 == 0) {  // the brute force is 600 solves; a sample of the grid is enough
      const std::vector<double> brute = permutation_average(a, b, r.drivers);
      for (std::size_t i = 0; i < brute.size(); ++i) CHECK(std::fabs(r.contribution[i] - brute[i]) <= 1e-13);
      ++checked;
    }
  }
  CHECK(checked == 5);
}

TEST_CASE("invalid inputs are reported, not attributed, nothing is allocated") {
  MertonInputs bad = deteriorating_after();
  bad.equity_vol_annual = 0.0;
  const long before = testing::g_allocations.load();
  const PdAttribution r = attribute_pd_change(deteriorating_before(), bad);
  const PdAttribution ok = attribute_pd_change(deteriorating_before(), deteriorating_after());
  CHECK(testing::g_allocations.load() == before);
  CHECK(r.status == AttributionStatus::invalid_input);
  CHECK(std::isnan(r.total()));
  CHECK(ok.usable());
}
