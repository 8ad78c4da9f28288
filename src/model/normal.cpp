// Inverse standard normal distribution. See include/firmcall/normal.hpp.
#include "firmcall/model/normal.hpp"

#include <boost/math/special_functions/erf.hpp>
#include <limits>
#include <numbers>

#include "firmcall/model/math_policy.hpp"

namespace firmcall {

namespace {
constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
}  // namespace

double norm_quantile(double p) noexcept {
  if (!(p >= 0.0 && p <= 1.0)) return kNaN;
  if (p == 0.0) return -kInf;
  if (p == 1.0) return kInf;
  // N(x) = erfc(-x/sqrt 2)/2, so x = -sqrt(2) erfc_inv(2p); erfc_inv keeps relative accuracy for
  // small arguments, i.e. in the lower tail.
  return -std::numbers::sqrt2 * boost::math::erfc_inv(2.0 * p, NoThrowPolicy());
}

double norm_quantile_upper(double q) noexcept {
  if (!(q >= 0.0 && q <= 1.0)) return kNaN;
  if (q == 0.0) return kInf;
  if (q == 1.0) return -kInf;
  return std::numbers::sqrt2 * boost::math::erfc_inv(2.0 * q, NoThrowPolicy());
}

}  // namespace firmcall
