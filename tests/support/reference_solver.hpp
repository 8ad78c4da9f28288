// Test-only reference for the Merton inversion, written independently of src/: plain nested
// bisection in long double (64-bit mantissa) with erfcl from the C library. Slow (thousands of
// evaluations) but simple enough to check by eye, and three decimal digits more precise than the
// double-precision solver it checks.
#pragma once

#include <cmath>

namespace firmcall::testing {

struct ReferenceSolution {
  long double asset_value;
  long double asset_vol;
};

inline long double ref_ncdf(long double x) {
  return 0.5L * erfcl(-x / sqrtl(2.0L));
}

// Call price C(V) - E, with the in-the-money form (V - K) + put when d2 > 0.
inline long double ref_call_gap(long double v, long double sv, long double e, long double k, long double t) {
  const long double st = sv * sqrtl(t);
  const long double d1 = (logl(v / k) + 0.5L * st * st) / st;
  const long double d2 = d1 - st;
  if (d2 > 0) return (v - k) + (k * ref_ncdf(-d2) - v * ref_ncdf(-d1)) - e;
  return v * ref_ncdf(d1) - k * ref_ncdf(d2) - e;
}

inline long double ref_asset_value(long double sv, long double e, long double k, long double t) {
  long double lo = e;      // C(E) < E
  long double hi = e + k;  // C(E + K) > E
  for (int i = 0; i < 200 && lo < hi; ++i) {
    const long double mid = 0.5L * (lo + hi);
    if (mid <= lo || mid >= hi) break;
    if (ref_call_gap(mid, sv, e, k, t) < 0)
      lo = mid;
    else
      hi = mid;
  }
  return 0.5L * (lo + hi);
}

/// Solves E = C(V, sV), sE E = N(d1) sV V by nested bisection on sV in (sE E/(E+K), sE).
inline ReferenceSolution reference_solve(double e_in, double se_in, double dp_in, double r_in, double t_in) {
  const long double e = e_in, se = se_in, t = t_in;
  const long double k = static_cast<long double>(dp_in) * expl(-static_cast<long double>(r_in) * t);
  long double lo = se * e / (e + k);
  long double hi = se;
  const auto g = [&](long double sv) {
    const long double v = ref_asset_value(sv, e, k, t);
    const long double st = sv * sqrtl(t);
    const long double d1 = (logl(v / k) + 0.5L * st * st) / st;
    return ref_ncdf(d1) * sv * v - se * e;
  };
  for (int i = 0; i < 200 && lo < hi; ++i) {
    const long double mid = 0.5L * (lo + hi);
    if (mid <= lo || mid >= hi) break;
    if (g(mid) < 0)
      lo = mid;
    else
      hi = mid;
  }
  const long double sv = 0.5L * (lo + hi);
  return {ref_asset_value(sv, e, k, t), sv};
}

}  // namespace firmcall::testing
