// Test-only Monte Carlo of an asset path against an exponential barrier, written independently of
// src/: the asset is stepped exactly (log-normal increments), and between two grid dates the path
// may cross the barrier unseen. With X = ln(V_t / H(t)) a Brownian motion with drift, the
// probability that the Brownian bridge from x_a > 0 to x_b > 0 over a step dt dips below 0 is
// exp(-2 x_a x_b / (sV^2 dt)), whatever the drift (Brownian-bridge crossing correction; e.g.
// Glasserman, Monte Carlo Methods in Financial Engineering, 2004, from memory). Multiplying the
// step survival probabilities along a path gives an estimator of P(tau > t) that is unbiased for any
// step size, so only the sampling error remains; it is reported as a standard error.
#pragma once

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

namespace firmcall::testing {

struct BarrierPathSpec {
  double asset_value;     // V at time 0
  double asset_vol;       // sV
  double drift;           // m: mu (physical) or r (risk-neutral)
  double barrier;         // H0
  double barrier_growth;  // g: H(t) = H0 exp(g t)
};

/// Estimate and its standard error.
struct McEstimate {
  double mean = 0.0;
  double se = 0.0;
};

/// P(tau <= t) at each of `horizons` (increasing), with `steps_per_year` grid dates a year.
inline std::vector<McEstimate> mc_first_passage(const BarrierPathSpec& s, const std::vector<double>& horizons,
                                                int paths, int steps_per_year, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> z(0.0, 1.0);
  const double t_end = horizons.back();
  const int steps = static_cast<int>(std::ceil(t_end * steps_per_year));
  const double dt = t_end / steps;
  std::vector<double> sum(horizons.size(), 0.0), sum2(horizons.size(), 0.0);
  for (int p = 0; p < paths; ++p) {
    double log_v = std::log(s.asset_value);
    double x = log_v - std::log(s.barrier);
    double survival = 1.0;
    std::size_t next = 0;
    for (int k = 1; k <= steps && next < horizons.size(); ++k) {
      log_v += (s.drift - 0.5 * s.asset_vol * s.asset_vol) * dt + s.asset_vol * std::sqrt(dt) * z(rng);
      const double t = k * dt;
      const double x_new = log_v - std::log(s.barrier) - s.barrier_growth * t;
      if (x_new <= 0.0) {
        survival = 0.0;
      } else if (survival > 0.0) {
        survival *= -std::expm1(-2.0 * x * x_new / (s.asset_vol * s.asset_vol * dt));
      }
      x = x_new;
      // Horizons that fall inside this step are read at its end (the tests put them on the grid).
      while (next < horizons.size() && horizons[next] <= t + 1e-12) {
        const double hit = 1.0 - survival;
        sum[next] += hit;
        sum2[next] += hit * hit;
        ++next;
      }
    }
  }
  std::vector<McEstimate> out(horizons.size());
  for (std::size_t i = 0; i < horizons.size(); ++i) {
    const double m = sum[i] / paths;
    const double var = (sum2[i] / paths - m * m) * paths / (paths - 1.0);
    out[i] = {m, std::sqrt(std::max(var, 0.0) / paths)};
  }
  return out;
}

/// Value of a down-and-out call: e^(-rT) E[(V_T - K)^+ 1{no touch}] under the risk-neutral drift
/// s.drift = r, with the same bridge-corrected survival weights.
inline McEstimate mc_down_and_out_call(const BarrierPathSpec& s, double strike, double maturity, int paths,
                                       int steps, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> z(0.0, 1.0);
  const double dt = maturity / steps;
  double sum = 0.0, sum2 = 0.0;
  for (int p = 0; p < paths; ++p) {
    double log_v = std::log(s.asset_value);
    double x = log_v - std::log(s.barrier);
    double survival = 1.0;
    for (int k = 1; k <= steps; ++k) {
      log_v += (s.drift - 0.5 * s.asset_vol * s.asset_vol) * dt + s.asset_vol * std::sqrt(dt) * z(rng);
      const double x_new = log_v - std::log(s.barrier) - s.barrier_growth * (k * dt);
      if (x_new <= 0.0) {
        survival = 0.0;
      } else if (survival > 0.0) {
        survival *= -std::expm1(-2.0 * x * x_new / (s.asset_vol * s.asset_vol * dt));
      }
      x = x_new;
    }
    const double payoff = std::exp(-s.drift * maturity) * std::max(std::exp(log_v) - strike, 0.0) * survival;
    sum += payoff;
    sum2 += payoff * payoff;
  }
  const double m = sum / paths;
  const double var = (sum2 / paths - m * m) * paths / (paths - 1.0);
  return {m, std::sqrt(std::max(var, 0.0) / paths)};
}

}  // namespace firmcall::testing
