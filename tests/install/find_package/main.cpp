// Prices Hull's Black-Scholes example with the installed model layer: equity is a call on the
// assets (Merton 1974), so S0 = 42 is the asset value, K = 40 the default point, r = 10%,
// sigma = 20%, T = 0.5 years. Prints the call, d1, d2 and the put (K e^-rT minus the debt value).
#include <cmath>
#include <cstdio>

#include "firmcall/model/merton.hpp"

int main() {
  firmcall::MertonInputs in;
  in.equity_value = 1.0;  // not used for pricing
  in.equity_vol_annual = 0.2;
  in.default_point = 40.0;
  in.risk_free_rate_cc = 0.10;
  in.horizon_years = 0.5;
  in.drift_annual = 0.10;
  const double call = firmcall::equity_value(in, 42.0, 0.2);
  const firmcall::MertonMeasures m = firmcall::merton_measures(in, 42.0, 0.2);
  const double put = in.default_point * std::exp(-in.risk_free_rate_cc * in.horizon_years) - m.debt_value;
  std::printf("call %.4f\nd1 %.4f\nd2 %.4f\nput %.4f\n", call, m.d1, m.d2, put);
  return 0;
}
