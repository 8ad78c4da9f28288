// Test-only generator of Merton inputs over a wide range, from a fixed seed. SplitMix64 (Steele,
// Lea and Flood 2014) is spelled out here so that the sample is the same on every platform (the
// standard library's distributions are not specified bit for bit).
#pragma once

#include <cmath>
#include <cstdint>

#include "firmcall/model/merton.hpp"

namespace firmcall::testing {

class SampleGenerator {
 public:
  explicit SampleGenerator(std::uint64_t seed) : state_(seed) {}

  /// Uniform on [0, 1) with 53 random bits.
  double uniform() {
    state_ += 0x9E3779B97F4A7C15ULL;
    std::uint64_t z = state_;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    z ^= z >> 31;
    return static_cast<double>(z >> 11) * 0x1.0p-53;
  }
  double uniform(double lo, double hi) { return lo + (hi - lo) * uniform(); }
  double log_uniform(double lo, double hi) { return std::exp(uniform(std::log(lo), std::log(hi))); }

  /// One obligor: E log-uniform on [1, 1e5]; DP/E log-uniform on [0.01, 30]; sE log-uniform on
  /// [0.05, 2]; r uniform on [-0.01, 0.12]; T log-uniform on [0.25, 10]; drift equal to r for
  /// about half (drift_follows_rate), else r plus a uniform [-0.05, 0.15].
  MertonInputs obligor(bool& drift_follows_rate) {
    MertonInputs in;
    in.equity_value = log_uniform(1.0, 1e5);
    in.default_point = in.equity_value * log_uniform(0.01, 30.0);
    in.equity_vol_annual = log_uniform(0.05, 2.0);
    in.risk_free_rate_cc = uniform(-0.01, 0.12);
    in.horizon_years = log_uniform(0.25, 10.0);
    drift_follows_rate = uniform() < 0.5;
    in.drift_annual = drift_follows_rate ? in.risk_free_rate_cc : in.risk_free_rate_cc + uniform(-0.05, 0.15);
    return in;
  }

 private:
  std::uint64_t state_;
};

}  // namespace firmcall::testing
