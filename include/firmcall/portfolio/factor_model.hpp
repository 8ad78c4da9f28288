// Factor correlation matrices for the multi-factor (sector) default model.
//
// Obligor i in sector s(i) has asset return X_i = sqrt(rho_i) Y_s(i) + sqrt(1 - rho_i) e_i. The
// sector factors Y are standard normal with correlation matrix C; they are drawn as Y = A G with
// G independent standard normal and C = A A^T (Cholesky factor, Eigen's LLT). Two obligors in
// sectors s and t then have asset correlation sqrt(rho_i rho_j) C_st.
//
// C must be a correlation matrix: square, symmetric, unit diagonal, entries in [-1, 1], and
// positive definite (its smallest eigenvalue above 1e-10, so that the factor is well defined).
//
// Pure numerics: no I/O, nothing throws.
//
// **Example**:
//   std::vector<double> c = {1.0, 0.5, 0.5, 1.0};
//   firmcall::FactorCholesky a;
//   auto check = firmcall::cholesky_of_correlation(c, 2, a);   // check.ok(); a.lower = {1, 0, .5, .866}
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace firmcall {

/// What is wrong with a correlation matrix (ok when nothing is).
enum class CorrelationStatus : std::uint8_t {
  ok,
  not_square,             ///< the entry count is not factors x factors, or there are no factors
  not_finite,             ///< an entry is NaN or infinite
  bad_diagonal,           ///< a diagonal entry is not 1
  out_of_range,           ///< an off-diagonal entry is outside [-1, 1]
  not_symmetric,          ///< C(i, j) != C(j, i)
  not_positive_definite,  ///< the smallest eigenvalue is at most 1e-10
  failed,                 ///< the decomposition could not be computed (out of memory)
};
std::string_view to_string(CorrelationStatus s) noexcept;

/// The first problem found, with where it is (0-based row and column) and the value.
struct CorrelationCheck {
  CorrelationStatus status = CorrelationStatus::failed;
  std::size_t row = 0;
  std::size_t column = 0;
  double value = 0.0;                ///< the offending entry (or the smallest eigenvalue)
  double smallest_eigenvalue = 0.0;  ///< always computed when the matrix is square and finite
  bool ok() const noexcept { return status == CorrelationStatus::ok; }
  /// One line for messages, e.g. "not positive definite (smallest eigenvalue -0.0423)".
  std::string describe() const;
};

/// The lower-triangular Cholesky factor of a factor correlation matrix.
struct FactorCholesky {
  std::size_t factors = 0;
  std::vector<double> lower;  ///< row-major factors x factors; zero above the diagonal
};

/// Checks `matrix` (row-major, factors x factors) and computes its Cholesky factor into `out`.
CorrelationCheck cholesky_of_correlation(std::span<const double> matrix, std::size_t factors,
                                         FactorCholesky& out) noexcept;

/// The one-factor model as a factor model: a single factor with correlation 1.
FactorCholesky single_factor() noexcept;

}  // namespace firmcall
