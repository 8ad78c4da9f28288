// Tests of the Merton inversion against an independent long-double reference solver
// (tests/support/reference_solver.hpp: nested bisection), over realistic and extreme inputs.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <vector>

#include "firmcall/model/merton_solver.hpp"
#include "reference_solver.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {
double rel(double x, long double ref) {
  return std::fabs(static_cast<double>((x - ref) / ref));
}
}  // namespace

TEST_CASE("default options pass and the solver reports its method") {
  const MertonSolveOptions o;
  CHECK(o.max_newton_iterations > 0);
  CHECK(o.residual_tolerance > 0);
  CHECK(to_string(SolveStatus::converged) == "converged");
  CHECK(to_string(SolveMethod::bracketed) == "bracketed");
}

TEST_CASE("generated obligors agree with the long-double reference within 1e-9 (2,000 obligors)") {
  double worst = 0.0;
  long iterations = 0;
  const auto book = testing::generated_obligors(2000, 20261201);
  for (const MertonInputs& in : book) {
    const AssetSolution s = solve_asset(in);
    REQUIRE(s.usable());
    const auto ref = testing::reference_solve(in.equity_value, in.equity_vol_annual, in.default_point,
                                              in.risk_free_rate_cc, in.horizon_years);
    const double e = std::max(rel(s.asset_value, ref.asset_value), rel(s.asset_vol_annual, ref.asset_vol));
    worst = std::max(worst, e);
    iterations += s.iterations;
    CHECK(e <= 1e-9);
  }
  MESSAGE("generated: worst relative error vs reference = " << worst << ", mean iterations = "
                                                            << double(iterations) / 2000.0);
  // Budget: realistic obligors need few steps from the start V0 = E + K. With the third-order
  // (Chebyshev) correction this book takes 1.9 steps on average; plain Newton steps to the same
  // stopping rule take 2.7, so a wrong second derivative shows here.
  CHECK(double(iterations) / 2000.0 < 2.1);
}

TEST_CASE("extreme grid: every valid input is solved, exact to 1e-10 against the reference") {
  // The range: DP/E 1e-4..1e4, equity vol 1%..300%, horizon one week..30 years, rate -2%..20%.
  const double leverage[] = {1e-4, 1e-3, 1e-2, 0.1, 0.5, 1, 2, 10, 100, 1e3, 1e4};
  const double vols[] = {0.01, 0.05, 0.2, 0.5, 1.0, 2.0, 3.0};
  const double horizons[] = {1.0 / 52, 0.25, 1, 5, 30};
  const double rates[] = {-0.02, 0.0, 0.05, 0.20};
  int n = 0, solved = 0;
  double worst = 0.0, worst_residual = 0.0;
  for (double lev : leverage)
    for (double se : vols)
      for (double t : horizons)
        for (double r : rates) {
          const MertonInputs in{.equity_value = 250.0,
                                .equity_vol_annual = se,
                                .default_point = 250.0 * lev,
                                .risk_free_rate_cc = r,
                                .horizon_years = t,
                                .drift_annual = r};
          ++n;
          const AssetSolution s = solve_asset(in);
          CAPTURE(lev);
          CAPTURE(se);
          CAPTURE(t);
          CAPTURE(r);
          CHECK(s.usable());
          if (!s.usable()) continue;
          ++solved;
          const auto ref = testing::reference_solve(in.equity_value, se, in.default_point, r, t);
          const double e =
              std::max(rel(s.asset_value, ref.asset_value), rel(s.asset_vol_annual, ref.asset_vol));
          worst = std::max(worst, e);
          CHECK(e <= 1e-10);
          // |E_model - E| <= 1e-12 (E + K), the residual requirement.
          const double k = in.default_point * std::exp(-r * t);
          const double gap = std::fabs(equity_value(in, s.asset_value, s.asset_vol_annual) - in.equity_value);
          worst_residual = std::max(worst_residual, gap / (in.equity_value + k));
          CHECK(gap <= 1e-12 * (in.equity_value + k));
          // The solution lies in the a-priori box.
          // (to rounding: at tiny volatility V equals E + K to double precision)
          CHECK(s.asset_value >= in.equity_value * (1 - 1e-15));
          CHECK(s.asset_value <= (in.equity_value + k) * (1 + 1e-15));
          CHECK(s.asset_vol_annual <= se * (1 + 1e-15));
          CHECK(s.asset_vol_annual >= se * in.equity_value / (in.equity_value + k) * (1 - 1e-15));
        }
  MESSAGE("extreme grid: solved " << solved << " of " << n << ", worst relative error " << worst
                                  << ", worst |E_model - E|/(E+K) " << worst_residual);
  CHECK(solved == n);
}

TEST_CASE("an exhausted budget is never reported as converged") {
  // A hard corner (leverage 1e4, sE = 1.5, T = 5) needs the fallback; starve both methods.
  const MertonInputs in{.equity_value = 1.0,
                        .equity_vol_annual = 1.5,
                        .default_point = 1e4,
                        .risk_free_rate_cc = 0.0,
                        .horizon_years = 5.0,
                        .drift_annual = 0.0};
  MertonSolveOptions starve;
  starve.max_newton_iterations = 1;
  starve.max_fallback_iterations = 3;
  const AssetSolution s = solve_asset(in, starve);
  CHECK(s.status == SolveStatus::max_iterations);
  CHECK_FALSE(s.usable());
  CHECK(s.residual > starve.residual_tolerance);
  // With the default budget the same obligor is solved.
  CHECK(solve_asset(in).usable());
}

TEST_CASE("the solver allocates nothing") {
  const auto book = testing::generated_obligors(200, 5);
  double sink = 0.0;
  const long before = testing::g_allocations.load();
  for (const MertonInputs& in : book) sink += solve_asset(in).asset_value;
  // Include a fallback case.
  sink += solve_asset({1.0, 1.5, 1e4, 0.0, 5.0, 0.0}).asset_value;
  const long after = testing::g_allocations.load();
  CHECK(sink > 0.0);
  CHECK(after == before);
}

TEST_CASE("the batch solver returns exactly what the one-at-a-time solver returns") {
  std::vector<MertonInputs> book = testing::generated_obligors(3000, 314);
  // Mix in hard corners (fallback), invalid inputs and trivial ones.
  book.push_back({1.0, 1.5, 1e4, 0.0, 5.0, 0.0});
  book.push_back({250.0, 0.2, 2.5e6, -0.02, 30.0, -0.02});
  book.push_back({-1.0, 0.3, 1.0, 0.0, 1.0, 0.0});
  book.push_back({100.0, 0.3, 1e-3, 0.01, 1.0, 0.01});
  book.insert(book.begin() + 17, {1.0, 0.0, 1.0, 0.0, 1.0, 0.0});
  std::vector<AssetSolution> batch(book.size());
  solve_asset_batch(book.data(), batch.data(), book.size());
  std::size_t same = 0;
  for (std::size_t i = 0; i < book.size(); ++i) {
    const AssetSolution one = solve_asset(book[i]);
    const bool eq = one.status == batch[i].status && one.method == batch[i].method &&
                    one.iterations == batch[i].iterations && one.asset_value == batch[i].asset_value &&
                    one.asset_vol_annual == batch[i].asset_vol_annual && one.residual == batch[i].residual &&
                    one.input_check.field == batch[i].input_check.field;
    same += eq;
  }
  CHECK(same == book.size());
  CHECK(batch[17].status == SolveStatus::invalid_input);
  CHECK(batch[3001].method == SolveMethod::bracketed);  // the leverage-1e4 corner
  solve_asset_batch(book.data(), batch.data(), 0);      // empty batch is fine
}

TEST_CASE("the batch solver refuses exactly the inputs validate() refuses, with validate()'s field") {
  // Every field at the edges of its domain: zero, negative, infinite, NaN, the largest double, and
  // rate x horizon at +-700 (validate's bound) and just inside it. Rules from merton.hpp.
  const double inf = std::numeric_limits<double>::infinity();
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double big = std::numeric_limits<double>::max();
  const double edges[] = {0.0, -0.0, -1.0, inf, -inf, nan, big, 1e-300, 0.5};
  const MertonInputs base{400.0, 0.45, 700.0, 0.03, 1.0, 0.03};
  std::vector<MertonInputs> book;
  for (int field = 0; field < 6; ++field) {
    for (const double v : edges) {
      MertonInputs m = base;
      double* f[] = {&m.equity_value,      &m.equity_vol_annual, &m.default_point,
                     &m.risk_free_rate_cc, &m.horizon_years,     &m.drift_annual};
      *f[field] = v;
      book.push_back(m);
    }
  }
  for (const double rt : {700.0, -700.0, 699.0, -699.0})
    book.push_back({400.0, 0.45, 700.0, rt / 10.0, 10.0, 0.0});
  std::vector<AssetSolution> batch(book.size());
  solve_asset_batch(book.data(), batch.data(), book.size());
  int refused = 0;
  for (std::size_t i = 0; i < book.size(); ++i) {
    const MertonInputCheck check = validate(book[i]);
    CHECK(batch[i].input_check.field == check.field);
    CHECK((batch[i].status == SolveStatus::invalid_input) == !check.ok());
    refused += !check.ok();
  }
  CHECK(refused == 34);  // 6 fields x 9 edges minus the valid ones, plus rate x horizon = +-700
}
