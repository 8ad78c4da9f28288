// Factor correlation matrices: checks and Cholesky factor (Eigen). See include/firmcall/factor_model.hpp.
#include "firmcall/portfolio/factor_model.hpp"

#include <Eigen/Cholesky>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>

namespace firmcall {

namespace {
constexpr double kMinEigenvalue = 1e-10;
constexpr double kSymmetryTolerance = 1e-12;
}  // namespace

std::string_view to_string(CorrelationStatus s) noexcept {
  switch (s) {
    case CorrelationStatus::ok:
      return "ok";
    case CorrelationStatus::not_square:
      return "not_square";
    case CorrelationStatus::not_finite:
      return "not_finite";
    case CorrelationStatus::bad_diagonal:
      return "bad_diagonal";
    case CorrelationStatus::out_of_range:
      return "out_of_range";
    case CorrelationStatus::not_symmetric:
      return "not_symmetric";
    case CorrelationStatus::not_positive_definite:
      return "not_positive_definite";
    case CorrelationStatus::failed:
      return "failed";
  }
  return "";
}

std::string CorrelationCheck::describe() const {
  char buf[200];
  char num[32];  // the entry as its shortest round-trip decimal
  *std::to_chars(num, num + sizeof num - 1, value).ptr = '\0';
  switch (status) {
    case CorrelationStatus::ok:
      return "ok";
    case CorrelationStatus::not_square:
      return "not a square matrix with one row and one column per factor";
    case CorrelationStatus::not_finite:
      std::snprintf(buf, sizeof buf, "entry (%zu, %zu) is not a finite number", row + 1, column + 1);
      return buf;
    case CorrelationStatus::bad_diagonal:
      std::snprintf(buf, sizeof buf, "diagonal entry (%zu, %zu) must be 1, got %s", row + 1, column + 1, num);
      return buf;
    case CorrelationStatus::out_of_range:
      std::snprintf(buf, sizeof buf, "entry (%zu, %zu) must lie in [-1, 1], got %s", row + 1, column + 1,
                    num);
      return buf;
    case CorrelationStatus::not_symmetric:
      std::snprintf(buf, sizeof buf, "not symmetric: entry (%zu, %zu) is %s but (%zu, %zu) differs", row + 1,
                    column + 1, num, column + 1, row + 1);
      return buf;
    case CorrelationStatus::not_positive_definite:
      std::snprintf(
          buf, sizeof buf,
          "not positive definite (smallest eigenvalue %.6g; a correlation matrix needs all eigenvalues "
          "above 1e-10 for its Cholesky factor)",
          smallest_eigenvalue);
      return buf;
    case CorrelationStatus::failed:
      return "the Cholesky factor could not be computed";
  }
  return "";
}

CorrelationCheck cholesky_of_correlation(std::span<const double> matrix, std::size_t factors,
                                         FactorCholesky& out) noexcept {
  CorrelationCheck c;
  out = FactorCholesky{};
  if (factors == 0 || matrix.size() != factors * factors) {
    c.status = CorrelationStatus::not_square;
    return c;
  }
  const std::size_t n = factors;
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t j = 0; j < n; ++j) {
      const double v = matrix[i * n + j];
      c.row = i;
      c.column = j;
      c.value = v;
      if (!std::isfinite(v)) {
        c.status = CorrelationStatus::not_finite;
        return c;
      }
      if (i == j && v != 1.0) {
        c.status = CorrelationStatus::bad_diagonal;
        return c;
      }
      if (i != j && !(v >= -1.0 && v <= 1.0)) {
        c.status = CorrelationStatus::out_of_range;
        return c;
      }
      if (j < i && std::fabs(v - matrix[j * n + i]) > kSymmetryTolerance) {
        c.status = CorrelationStatus::not_symmetric;
        return c;
      }
    }
  }
  c.row = c.column = 0;
  c.value = 0.0;
  try {
    Eigen::MatrixXd m(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(n));
    for (std::size_t i = 0; i < n; ++i) {
      for (std::size_t j = 0; j < n; ++j) {
        // The lower triangle is used, as Eigen's LLT does.
        m(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) =
            matrix[std::max(i, j) * n + std::min(i, j)];
      }
    }
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(m, Eigen::EigenvaluesOnly);
    if (eig.info() != Eigen::Success) {
      c.status = CorrelationStatus::failed;
      return c;
    }
    c.smallest_eigenvalue = eig.eigenvalues().minCoeff();
    c.value = c.smallest_eigenvalue;
    if (!(c.smallest_eigenvalue > kMinEigenvalue)) {
      c.status = CorrelationStatus::not_positive_definite;
      return c;
    }
    const Eigen::LLT<Eigen::MatrixXd> llt(m);
    if (llt.info() != Eigen::Success) {
      c.status = CorrelationStatus::not_positive_definite;
      return c;
    }
    const Eigen::MatrixXd l = llt.matrixL();
    out.factors = n;
    out.lower.assign(n * n, 0.0);
    for (std::size_t i = 0; i < n; ++i) {
      for (std::size_t j = 0; j <= i; ++j) {
        out.lower[i * n + j] = l(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j));
      }
    }
  } catch (...) {
    out = FactorCholesky{};
    c.status = CorrelationStatus::failed;
    return c;
  }
  c.status = CorrelationStatus::ok;
  return c;
}

FactorCholesky single_factor() noexcept {
  FactorCholesky f;
  try {
    f.factors = 1;
    f.lower = {1.0};
  } catch (...) {
    f = FactorCholesky{};
  }
  return f;
}

}  // namespace firmcall
