// Tests of the factor correlation checks and Cholesky factor (src/factor_model.cpp).
#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "firmcall/portfolio/factor_model.hpp"

using namespace firmcall;

TEST_CASE("the Cholesky factor reproduces the correlation matrix") {
  // Ref: a 2x2 correlation matrix [[1, r], [r, 1]] has the factor [[1, 0], [r, sqrt(1 - r^2)]]
  // (textbook identity).
  FactorCholesky a;
  REQUIRE(cholesky_of_correlation(std::vector<double>{1.0, 0.6, 0.6, 1.0}, 2, a).ok());
  CHECK(a.factors == 2);
  CHECK(a.lower[0] == doctest::Approx(1.0));
  CHECK(a.lower[1] == 0.0);
  CHECK(a.lower[2] == doctest::Approx(0.6).epsilon(1e-15));
  CHECK(a.lower[3] == doctest::Approx(0.8).epsilon(1e-15));
  // A 4x4 sector matrix: L L^T equals C to rounding.
  const std::vector<double> c = {1.0, 0.5, 0.3, 0.2, 0.5, 1.0, 0.4, 0.1,
                                 0.3, 0.4, 1.0, 0.6, 0.2, 0.1, 0.6, 1.0};
  const CorrelationCheck check = cholesky_of_correlation(c, 4, a);
  REQUIRE(check.ok());
  CHECK(check.smallest_eigenvalue > 0.0);
  for (std::size_t i = 0; i < 4; ++i) {
    for (std::size_t j = 0; j < 4; ++j) {
      double v = 0.0;
      for (std::size_t k = 0; k < 4; ++k) v += a.lower[i * 4 + k] * a.lower[j * 4 + k];
      CHECK(v == doctest::Approx(c[i * 4 + j]).epsilon(1e-15));
    }
  }
  CHECK(single_factor().lower == std::vector<double>{1.0});
}

TEST_CASE("a matrix that is not a correlation matrix is refused with the place and value") {
  FactorCholesky a;
  CorrelationCheck c = cholesky_of_correlation(std::vector<double>{1.0, 0.5, 0.5}, 2, a);
  CHECK(c.status == CorrelationStatus::not_square);
  c = cholesky_of_correlation(std::vector<double>{1.0, 0.5, 0.5, 0.9}, 2, a);
  CHECK(c.status == CorrelationStatus::bad_diagonal);
  CHECK(c.describe() == "diagonal entry (2, 2) must be 1, got 0.9");
  c = cholesky_of_correlation(std::vector<double>{1.0, 1.5, 1.5, 1.0}, 2, a);
  CHECK(c.status == CorrelationStatus::out_of_range);
  CHECK(c.describe() == "entry (1, 2) must lie in [-1, 1], got 1.5");
  c = cholesky_of_correlation(std::vector<double>{1.0, 0.5, 0.4, 1.0}, 2, a);
  CHECK(c.status == CorrelationStatus::not_symmetric);
  CHECK(c.describe() == "not symmetric: entry (2, 1) is 0.4 but (1, 2) differs");
  c = cholesky_of_correlation(std::vector<double>{1.0, NAN, NAN, 1.0}, 2, a);
  CHECK(c.status == CorrelationStatus::not_finite);
  // Ref: the equicorrelation matrix of size n with correlation r has eigenvalues 1 + (n - 1) r and
  // 1 - r (textbook identity): n = 3, r = -0.6 gives -0.2, so it is not positive definite.
  const std::vector<double> eq = {1.0, -0.6, -0.6, -0.6, 1.0, -0.6, -0.6, -0.6, 1.0};
  c = cholesky_of_correlation(eq, 3, a);
  CHECK(c.status == CorrelationStatus::not_positive_definite);
  CHECK(c.smallest_eigenvalue == doctest::Approx(-0.2).epsilon(1e-12));
  CHECK(c.describe() ==
        "not positive definite (smallest eigenvalue -0.2; a correlation matrix needs all eigenvalues above "
        "1e-10 for its Cholesky factor)");
  CHECK(a.factors == 0);
  // Perfect correlation (eigenvalue 0) is positive semi-definite only: refused as well.
  c = cholesky_of_correlation(std::vector<double>{1.0, 1.0, 1.0, 1.0}, 2, a);
  CHECK(c.status == CorrelationStatus::not_positive_definite);
  CHECK(std::fabs(c.smallest_eigenvalue) < 1e-12);
}
