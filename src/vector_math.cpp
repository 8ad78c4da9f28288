// See include/firmcall/vector_math.hpp. The libmvec entry points follow the x86_64 vector
// function ABI names (_ZGV, then e: AVX-512 or d: AVX2, N8/N4: lanes, v: one vector argument).
#include "firmcall/vector_math.hpp"

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

__attribute__((target("avx512f"))) void run8(V8 f, const double* x, double* y) noexcept {
  _mm512_storeu_pd(y, f(_mm512_loadu_pd(x)));
}

__attribute__((target("avx2,fma"))) void run4(V4 f, const double* x, double* y) noexcept {
  _mm256_storeu_pd(y, f(_mm256_loadu_pd(x)));
  _mm256_storeu_pd(y + 4, f(_mm256_loadu_pd(x + 4)));
}

template <typename Scalar>
void apply(V8 f8, V4 f4, Scalar f, const double* x, double* y) noexcept {
  switch (isa()) {
    case Isa::avx512:
      run8(f8, x, y);
      return;
    case Isa::avx2:
      run4(f4, x, y);
      return;
    case Isa::scalar:
      for (std::size_t i = 0; i < kBlock; ++i) y[i] = f(x[i]);
      return;
  }
}

}  // namespace

void exp(const double* x, double* y) noexcept {
  apply(
      _ZGVeN8v_exp, _ZGVdN4v_exp, [](double v) { return std::exp(v); }, x, y);
}
void expm1(const double* x, double* y) noexcept {
  apply(
      _ZGVeN8v_expm1, _ZGVdN4v_expm1, [](double v) { return std::expm1(v); }, x, y);
}
void log(const double* x, double* y) noexcept {
  apply(
      _ZGVeN8v_log, _ZGVdN4v_log, [](double v) { return std::log(v); }, x, y);
}
void log1p(const double* x, double* y) noexcept {
  apply(
      _ZGVeN8v_log1p, _ZGVdN4v_log1p, [](double v) { return std::log1p(v); }, x, y);
}
void erfc(const double* x, double* y) noexcept {
  apply(
      _ZGVeN8v_erfc, _ZGVdN4v_erfc, [](double v) { return std::erfc(v); }, x, y);
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
