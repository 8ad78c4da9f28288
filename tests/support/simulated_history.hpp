// Test-only simulation of "true" Merton histories: asset values follow geometric Brownian motion
// with known volatility and drift, and equity is priced from them as a Black-Scholes call
// (Merton 1974) with the long-double reference in reference_solver.hpp, written independently
// of src/. Normal draws are our own Box-Muller transform of std::mt19937_64 output, so the
// numbers are the same with every standard library.
#pragma once

#include <cmath>
#include <cstdint>
#include <numbers>
#include <random>
#include <vector>

#include "reference_solver.hpp"

namespace firmcall::testing {

/// Standard normal draw: Box-Muller (Box and Muller 1958) on two 53-bit uniforms in (0, 1).
inline double normal_draw(std::mt19937_64& gen) {
  const double u1 = (static_cast<double>(gen() >> 11) + 0.5) * 0x1.0p-53;
  const double u2 = (static_cast<double>(gen() >> 11) + 0.5) * 0x1.0p-53;
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

/// Black-Scholes call on V struck at DP exp(-rT) (Merton 1974), long double.
inline double reference_equity(double v, double sv, double dp, double r, double t) {
  const long double k = static_cast<long double>(dp) * expl(-static_cast<long double>(r) * t);
  return static_cast<double>(ref_call_gap(v, sv, 0.0L, k, t));
}

struct SimulatedHistory {
  std::vector<double> asset_value;
  std::vector<double> equity_value;
  std::vector<double> default_point;
  std::vector<std::int32_t> day;
  double rate = 0.0;
  double horizon = 1.0;
};

struct SimulationSpec {
  std::uint64_t seed = 1;
  int observations = 253;  ///< prices (returns + 1)
  double v0 = 1000.0;
  double asset_vol = 0.25;
  double drift = 0.08;
  double default_point = 600.0;
  double rate = 0.03;
  double horizon = 1.0;
  double days_per_year = 252.0;
  /// When > 0, the default point steps up by this factor every `dp_step_days` days.
  double dp_growth = 0.0;
  int dp_step_days = 63;
};

/// ln V_(t+1) = ln V_t + (mu - sV^2/2) h + sV sqrt(h) Z, h = 1/days_per_year.
inline SimulatedHistory simulate(const SimulationSpec& s) {
  std::mt19937_64 gen(s.seed);
  SimulatedHistory out;
  out.rate = s.rate;
  out.horizon = s.horizon;
  const double h = 1.0 / s.days_per_year;
  double log_v = std::log(s.v0);
  double dp = s.default_point;
  for (int i = 0; i < s.observations; ++i) {
    if (i > 0)
      log_v +=
          (s.drift - 0.5 * s.asset_vol * s.asset_vol) * h + s.asset_vol * std::sqrt(h) * normal_draw(gen);
    if (s.dp_growth > 0.0 && i > 0 && i % s.dp_step_days == 0) dp *= 1.0 + s.dp_growth;
    const double v = std::exp(log_v);
    out.asset_value.push_back(v);
    out.default_point.push_back(dp);
    out.equity_value.push_back(reference_equity(v, s.asset_vol, dp, s.rate, s.horizon));
    out.day.push_back(i);
  }
  return out;
}

}  // namespace firmcall::testing
