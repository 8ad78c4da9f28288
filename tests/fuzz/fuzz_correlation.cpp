// libFuzzer target: the sector correlation reader (portfolio command) must accept or refuse any
// text with an InputError, never crash or hang; what it accepts is a finite correlation matrix
// with asset correlations in [0, 1).
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/correlation_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const firmcall::CorrelationFile c = firmcall::parse_correlation_file(text, "fuzz.yaml");
    const std::size_t n = c.factors.size();
    if (n == 0) std::abort();
    for (std::size_t i = 0; i < n; ++i) {
      const auto& rho = c.factors[i].asset_correlation;
      if (rho && (!std::isfinite(*rho) || *rho < 0.0 || *rho >= 1.0)) std::abort();
      if (c.find(c.factors[i].sector) != i) std::abort();  // sectors are unique
    }
    if (c.multi_factor()) {
      if (c.matrix.size() != n * n) std::abort();
      for (std::size_t i = 0; i < n; ++i) {
        if (c.matrix[i * n + i] != 1.0) std::abort();
        for (std::size_t j = 0; j < n; ++j) {
          const double v = c.matrix[i * n + j];
          if (!std::isfinite(v) || v < -1.0 || v > 1.0) std::abort();
          if (std::fabs(v - c.matrix[j * n + i]) > 1e-12) std::abort();  // the reader's tolerance
        }
      }
    }
  } catch (const firmcall::InputError&) {
  }
  return 0;
}
