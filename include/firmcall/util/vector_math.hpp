// Elementwise exp, expm1, log, log1p and erfc on blocks of eight doubles, for the solver's hot
// path. They come from glibc's vector math library (libmvec, part of the C library, maximum error
// 4 ulp by its documentation): the AVX-512 versions when the processor has AVX-512F, else the
// AVX2 versions on two halves, else the scalar C library one value at a time. The choice is made
// once per process, so a given machine always computes the same values, whatever the block
// holds next to each value and however the work is split over threads.
//
// **Example**:
//   double x[firmcall::vmath::kBlock] = {...}, y[firmcall::vmath::kBlock];
//   const firmcall::vmath::Kernels& k = firmcall::vmath::kernels();  // once, outside the loop
//   k.exp(x, y);  // y[i] = e^x[i]
#pragma once

#include <cstddef>
#include <string_view>

namespace firmcall::vmath {

inline constexpr std::size_t kBlock = 8;  ///< values per call

/// The implementation in use on this machine: "avx512", "avx2" or "scalar".
std::string_view implementation() noexcept;

/// The five functions as chosen for this machine, each on x[0..kBlock) into y[0..kBlock): exp
/// (e^x), expm1 (e^x - 1), log (ln x), log1p (ln(1 + x)) and erfc. One indirect call each, no
/// dispatch.
struct Kernels {
  using Fn = void (*)(const double*, double*) noexcept;
  Fn exp, expm1, log, log1p, erfc;
};
const Kernels& kernels() noexcept;

}  // namespace firmcall::vmath
