// See include/firmcall/vector_math.hpp. The libmvec entry points follow the x86_64 vector
// function ABI names (_ZGV, then e: AVX-512 or d: AVX2, N8/N4: lanes, v: one vector argument).
#include "firmcall/util/vector_math.hpp"

#include <immintrin.h>

#include <cmath>

// The declarations pass vectors wider than the baseline x86-64 target; they are only called from
// functions compiled for the matching instruction set.
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wpsabi"
#endif

extern "C" {
__m512d _ZGVeN8v_exp(__m512d);
__m512d _ZGVeN8v_expm1(__m512d);
__m512d _ZGVeN8v_log(__m512d);
__m512d _ZGVeN8v_log1p(__m512d);
__m512d _ZGVeN8v_erfc(__m512d);
__m256d _ZGVdN4v_exp(__m256d);
__m256d _ZGVdN4v_expm1(__m256d);
__m256d _ZGVdN4v_log(__m256d);
__m256d _ZGVdN4v_log1p(__m256d);
__m256d _ZGVdN4v_erfc(__m256d);
}

namespace firmcall::vmath {

namespace {

enum class Isa { scalar, avx2, avx512 };

Isa detect() noexcept {
  __builtin_cpu_init();
  if (__builtin_cpu_supports("avx512f")) return Isa::avx512;
  if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma")) return Isa::avx2;
  return Isa::scalar;
}

Isa isa() noexcept {
  static const Isa chosen = detect();
  return chosen;
}

using V8 = __m512d (*)(__m512d);
using V4 = __m256d (*)(__m256d);

template <V8 F>
__attribute__((target("avx512f"))) void run8(const double* x, double* y) noexcept {
  _mm512_storeu_pd(y, F(_mm512_loadu_pd(x)));
}

template <V4 F>
__attribute__((target("avx2,fma"))) void run4(const double* x, double* y) noexcept {
  _mm256_storeu_pd(y, F(_mm256_loadu_pd(x)));
  _mm256_storeu_pd(y + 4, F(_mm256_loadu_pd(x + 4)));
}

template <double (*F)(double)>
void run1(const double* x, double* y) noexcept {
  for (std::size_t i = 0; i < kBlock; ++i) y[i] = F(x[i]);
}

double exp1(double v) {
  return std::exp(v);
}
double expm1_1(double v) {
  return std::expm1(v);
}
double log_1(double v) {
  return std::log(v);
}
double log1p_1(double v) {
  return std::log1p(v);
}
double erfc1(double v) {
  return std::erfc(v);
}

Kernels choose() noexcept {
  switch (isa()) {
    case Isa::avx512:
      return {run8<_ZGVeN8v_exp>, run8<_ZGVeN8v_expm1>, run8<_ZGVeN8v_log>, run8<_ZGVeN8v_log1p>,
              run8<_ZGVeN8v_erfc>};
    case Isa::avx2:
      return {run4<_ZGVdN4v_exp>, run4<_ZGVdN4v_expm1>, run4<_ZGVdN4v_log>, run4<_ZGVdN4v_log1p>,
              run4<_ZGVdN4v_erfc>};
    case Isa::scalar:
      break;
  }
  return {run1<exp1>, run1<expm1_1>, run1<log_1>, run1<log1p_1>, run1<erfc1>};
}

}  // namespace

const Kernels& kernels() noexcept {
  static const Kernels chosen = choose();
  return chosen;
}

std::string_view implementation() noexcept {
  switch (isa()) {
    case Isa::avx512:
      return "avx512";
    case Isa::avx2:
      return "avx2";
    case Isa::scalar:
      return "scalar";
  }
  return "scalar";
}

}  // namespace firmcall::vmath

#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic pop
#endif
