// Standard normal distribution: density, distribution function and its complement.
//
// Tail probabilities must be computed as complements: norm_sf(x) = N(-x) keeps full relative
// accuracy far in the upper tail, where 1 - N(x) would cancel to 0 (Boost.Math, "Why and when
// to use complements?"). Both are built on std::erfc, which is accurate in relative terms
// down to the smallest subnormal double.
#pragma once

#include <cmath>

namespace firmcall {

inline constexpr double kInvSqrt2 = 0.70710678118654752440;    ///< 1/sqrt(2)
inline constexpr double kInvSqrt2Pi = 0.39894228040143267794;  ///< 1/sqrt(2*pi)

/// Standard normal density phi(x) = exp(-x^2/2)/sqrt(2*pi).
inline double norm_pdf(double x) noexcept {
  return kInvSqrt2Pi * std::exp(-0.5 * x * x);
}

/// Standard normal distribution function N(x) = P(Z <= x), accurate in relative terms for x << 0.
inline double norm_cdf(double x) noexcept {
  return 0.5 * std::erfc(-x * kInvSqrt2);
}

/// Upper tail N(-x) = P(Z > x), accurate in relative terms for x >> 0 (never computed as 1 - N(x)).
inline double norm_sf(double x) noexcept {
  return 0.5 * std::erfc(x * kInvSqrt2);
}

/// Inverse of N: the x with N(x) = p (Boost.Math erfc_inv). p = 0 gives -inf, p = 1 gives +inf,
/// anything outside [0, 1] or NaN gives NaN. Accurate in relative terms for tiny p.
double norm_quantile(double p) noexcept;

/// Inverse of the upper tail: the x with N(-x) = q, accurate for tiny q (a tail probability given
/// as itself, never as 1 - q). q = 0 gives +inf, q = 1 gives -inf, anything else outside gives NaN.
double norm_quantile_upper(double q) noexcept;

}  // namespace firmcall
