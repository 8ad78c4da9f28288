// Block math against the scalar C library (glibc libm, an independent implementation: correctly
// rounded or within 1 ulp for these functions). libmvec documents a maximum error of 4 ulp; the
// checks allow 4 ulp in the range where the results are normal numbers.
#include "firmcall/util/vector_math.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <functional>
#include <limits>
#include <string>

namespace {

using firmcall::vmath::kBlock;
using Block = firmcall::vmath::Kernels::Fn;

// Largest error in units of the last place over n points evenly spread on [lo, hi].
double worst_ulps(Block f, const std::function<double(double)>& ref, double lo, double hi, int n = 200000) {
  double worst = 0.0;
  double x[kBlock], y[kBlock];
  for (int i = 0; i < n; i += static_cast<int>(kBlock)) {
    for (std::size_t j = 0; j < kBlock; ++j) x[j] = lo + (hi - lo) * (i + static_cast<double>(j)) / n;
    f(x, y);
    for (std::size_t j = 0; j < kBlock; ++j) {
      const double r = ref(x[j]);
      if (r == 0.0 || !std::isfinite(r)) {
        CHECK(y[j] == r);
        continue;
      }
      const double ulp = std::nextafter(std::fabs(r), std::numeric_limits<double>::infinity()) - std::fabs(r);
      worst = std::max(worst, std::fabs(y[j] - r) / ulp);
    }
  }
  return worst;
}

}  // namespace

TEST_CASE("block math agrees with the C library within 4 ulp") {
  namespace vm = firmcall::vmath;
  const vm::Kernels& k = vm::kernels();
  const std::string impl(vm::implementation());
  CHECK((impl == "avx512" || impl == "avx2" || impl == "scalar"));
  struct Case {
    const char* name;
    Block f;
    std::function<double(double)> ref;
    double lo, hi;
  };
  const Case cases[] = {
      {"exp", k.exp, [](double v) { return std::exp(v); }, -700.0, 700.0},
      {"exp (Newton range)", k.exp, [](double v) { return std::exp(v); }, -5.0, 1.0},
      {"expm1", k.expm1, [](double v) { return std::expm1(v); }, -40.0, 40.0},
      {"expm1 near 0", k.expm1, [](double v) { return std::expm1(v); }, -1e-3, 1e-3},
      {"log", k.log, [](double v) { return std::log(v); }, 1e-300, 1e300},
      {"log near 1", k.log, [](double v) { return std::log(v); }, 0.5, 2.0},
      {"log1p", k.log1p, [](double v) { return std::log1p(v); }, -0.9, 1e6},
      {"log1p near 0", k.log1p, [](double v) { return std::log1p(v); }, -1e-4, 1e-4},
      // erfc(26.5) ~ 1e-307: beyond it the values are subnormal and lose relative precision.
      {"erfc", k.erfc, [](double v) { return std::erfc(v); }, -6.0, 26.5},
  };
  for (const Case& c : cases) {
    const double w = worst_ulps(c.f, c.ref, c.lo, c.hi);
    MESSAGE(std::string(c.name) << " (" << impl << "): worst " << w << " ulp");
    CAPTURE(c.name);
    CHECK(w <= 4.0);
  }
}

TEST_CASE("block math: a value's result does not depend on its lane or its neighbours") {
  namespace vm = firmcall::vmath;
  double x[kBlock], y[kBlock];
  const double probes[] = {-3.7, 0.123456789, 1.0, 2.5, 17.25};
  for (double v : probes) {
    double first = 0.0;
    for (std::size_t lane = 0; lane < kBlock; ++lane) {
      for (std::size_t j = 0; j < kBlock; ++j) x[j] = 0.01 * static_cast<double>(j * lane + 1);
      x[lane] = v;
      vm::kernels().erfc(x, y);
      if (lane == 0) first = y[0];
      CHECK(y[lane] == first);
    }
  }
}
