// The umbrella header is self-contained and the public names of the solver keep their spelling
// (firmcall::solve_asset, MertonInputs, asset_value, asset_vol_annual, usable()).
#include "firmcall/firmcall.hpp"

#include <doctest/doctest.h>

#include <cmath>

namespace {
double phi(double x) {
  return 0.5 * std::erfc(-x / std::sqrt(2.0));
}
}  // namespace

TEST_CASE("umbrella header: solve_asset prices the equity back through Black-Scholes") {
  firmcall::MertonInputs in;
  in.equity_value = 4000.0;
  in.equity_vol_annual = 0.30;
  in.default_point = 2000.0;
  in.risk_free_rate_cc = 0.03;
  in.horizon_years = 1.0;
  const firmcall::AssetSolution s = firmcall::solve_asset(in);
  REQUIRE(s.usable());
  // Reference: the Black-Scholes call written out here (Merton 1974; formula from memory),
  // E = V N(d1) - DP exp(-rT) N(d2) and sE = (V / E) N(d1) sV, with the C library's erfc.
  const double v = s.asset_value;
  const double sv = s.asset_vol_annual;
  const double d1 = (std::log(v / in.default_point) + (in.risk_free_rate_cc + 0.5 * sv * sv)) / sv;
  const double d2 = d1 - sv;
  const double equity = v * phi(d1) - in.default_point * std::exp(-in.risk_free_rate_cc) * phi(d2);
  const double equity_vol = v / in.equity_value * phi(d1) * sv;
  CHECK(equity == doctest::Approx(in.equity_value).epsilon(1e-12));
  CHECK(equity_vol == doctest::Approx(in.equity_vol_annual).epsilon(1e-12));
}
