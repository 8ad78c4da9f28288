// Backs Hull's Black-Scholes example out again through the umbrella header: the equity value
// E = c(S0 = 42, K = 40, r = 10%, sigma = 20%, T = 0.5) and the equity volatility
// N(d1) sigma S0 / E are the inputs, and the solver must return the asset value 42 and the asset
// volatility 20%. Prints the equity value and the solved asset value and volatility.
#include <cstdio>

#include "firmcall/firmcall.hpp"

int main() {
  firmcall::MertonInputs in;
  in.default_point = 40.0;
  in.risk_free_rate_cc = 0.10;
  in.horizon_years = 0.5;
  in.drift_annual = 0.10;
  in.equity_vol_annual = 0.2;
  const double asset_value = 42.0, asset_vol = 0.2;
  in.equity_value = firmcall::equity_value(in, asset_value, asset_vol);
  const firmcall::MertonMeasures m = firmcall::merton_measures(in, asset_value, asset_vol);
  in.equity_vol_annual = firmcall::norm_cdf(m.d1) * asset_vol * asset_value / in.equity_value;
  const firmcall::AssetSolution s = firmcall::solve_asset(in);
  std::printf("equity %.4f\nasset_value %.6f\nasset_vol %.6f\nusable %d\n", in.equity_value, s.asset_value,
              s.asset_vol_annual, s.usable() ? 1 : 0);
  return s.usable() ? 0 : 1;
}
