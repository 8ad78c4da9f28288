// Reading sector correlation files (YAML) for the portfolio model.
//
//   description: Invented sector factors for the demo book      # optional
//   factors:                                                     # required, a non-empty list
//     - {sector: Energy, asset_correlation: 0.22}                # asset_correlation optional, [0, 1)
//     - {sector: Utilities}
//   factor_correlation:                                          # optional; rows in `factors` order
//     - [1.00, 0.40]
//     - [0.40, 1.00]
//
// Each obligor is assigned to the factor of its `sector` (exact, case-sensitive). An obligor's
// asset correlation rho is the weight of its sector factor: X = sqrt(rho) Y_sector +
// sqrt(1 - rho) e. `factor_correlation` correlates the sector factors (Monte Carlo); without it all
// sectors share a single factor, as in the exact one-factor model. The matrix must be a
// correlation matrix and positive definite (factor_model.hpp). Every problem is an InputError
// naming the file, line and key, e.g.
//   corr.yaml:9: factor_correlation: not positive definite (smallest eigenvalue -0.2; ...)
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/portfolio/factor_model.hpp"

namespace firmcall {

/// One sector factor as written.
struct SectorFactor {
  std::string sector;
  std::optional<double> asset_correlation;  ///< rho of the sector's obligors, [0, 1)
  std::size_t line = 0;
};

/// A parsed correlation file.
struct CorrelationFile {
  std::string origin;  ///< file name used in messages
  std::string description;
  std::vector<SectorFactor> factors;
  std::vector<double> matrix;  ///< factors x factors, row-major; empty when factor_correlation is absent
  std::size_t matrix_line = 0;
  FactorCholesky cholesky;  ///< of `matrix`; a single factor when it is absent
  /// Index of the factor of `sector`, or nullopt.
  std::optional<std::size_t> find(std::string_view sector) const;
  /// Whether the sector factors are correlated by a matrix (else one factor for all).
  bool multi_factor() const noexcept { return !matrix.empty(); }
};

/// Parses correlation YAML; throws InputError ("file:line: ...") on any problem.
CorrelationFile parse_correlation_file(const std::string& yaml_text, const std::string& origin);

/// Correlation files are YAML parsed whole; larger ones are refused before reading. The cap
/// leaves room for the largest matrix accepted (1000 factors, numbers of up to 14 characters).
inline constexpr std::size_t kMaxCorrelationFileBytes = std::size_t{16} << 20;

/// Reads and parses a correlation file (InputError above kMaxCorrelationFileBytes).
CorrelationFile load_correlation_file(const std::string& path);

}  // namespace firmcall
