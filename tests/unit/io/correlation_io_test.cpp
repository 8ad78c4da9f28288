// Tests of the sector correlation file reader (src/correlation_io.cpp), fed from in-memory text.
#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/correlation_io.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {
using E = InputError;
}

TEST_CASE("a correlation file gives the sectors, their correlations and the Cholesky factor") {
  const CorrelationFile f = parse_correlation_file(
      "description: two sectors\n"
      "factors:\n"
      "  - {sector: Energy, asset_correlation: 0.2}\n"
      "  - {sector: Real Estate}\n"
      "factor_correlation:\n"
      "  - [1.0, 0.6]\n"
      "  - [0.6, 1.0]\n",
      "c.yaml");
  CHECK(f.description == "two sectors");
  REQUIRE(f.factors.size() == 2);
  CHECK(f.factors[0].sector == "Energy");
  CHECK(f.factors[0].asset_correlation == 0.2);
  CHECK(f.factors[0].line == 3);
  CHECK_FALSE(f.factors[1].asset_correlation.has_value());
  CHECK(f.find("Real Estate") == 1);
  CHECK_FALSE(f.find("real estate").has_value());  // exact, case-sensitive
  CHECK(f.multi_factor());
  // Ref: the Cholesky factor of [[1, r], [r, 1]] is [[1, 0], [r, sqrt(1 - r^2)]] (textbook identity).
  CHECK(f.cholesky.lower[2] == doctest::Approx(0.6));
  CHECK(f.cholesky.lower[3] == doctest::Approx(0.8));
  // Without a matrix: one factor for every sector.
  const CorrelationFile one = parse_correlation_file("factors: [{sector: A}, {sector: B}]\n", "c.yaml");
  CHECK_FALSE(one.multi_factor());
  CHECK(one.cholesky.factors == 1);
  // The shipped sample reads, and its matrix is positive definite.
  const CorrelationFile sample =
      load_correlation_file(testing::source_dir() + "/samples/sector_correlations.yaml");
  CHECK(sample.factors.size() == 11);
  CHECK(sample.multi_factor());
}

TEST_CASE("correlation file errors name the file, line and key") {
  CHECK_THROWS_WITH_AS(parse_correlation_file("factor: []\n", "c.yaml"),
                       "c.yaml:1: correlation file: unknown key 'factor' (did you mean 'factors'?)", E);
  CHECK_THROWS_WITH_AS(parse_correlation_file("description: x\n", "c.yaml"),
                       "c.yaml: missing key 'factors' (the list of sector factors)", E);
  CHECK_THROWS_WITH_AS(
      parse_correlation_file("factors:\n  - {sector: A, asset_corelation: 0.2}\n", "c.yaml"),
      "c.yaml:2: factor 1: unknown key 'asset_corelation' (did you mean 'asset_correlation'?)", E);
  CHECK_THROWS_WITH_AS(
      parse_correlation_file("factors:\n  - {sector: A, asset_correlation: 1.2}\n", "c.yaml"),
      "c.yaml:2: factor 1 (A): key 'asset_correlation': must be a decimal in [0, 1) (0.2 means "
      "20%), got 1.2",
      E);
  CHECK_THROWS_WITH_AS(parse_correlation_file("factors:\n  - {sector: A}\n  - {sector: A}\n", "c.yaml"),
                       "c.yaml:3: factor 2: sector 'A' is listed twice (first on line 2)", E);
  CHECK_THROWS_WITH_AS(parse_correlation_file("factors:\n  - {asset_correlation: 0.1}\n", "c.yaml"),
                       "c.yaml:2: factor 1: missing key 'sector'", E);
  const std::string two = "factors:\n  - {sector: A}\n  - {sector: B}\nfactor_correlation:\n";
  CHECK_THROWS_WITH_AS(
      parse_correlation_file(two + "  - [1.0, 0.5]\n", "c.yaml"),
      "c.yaml:5: factor_correlation: expected 2 rows (one per factor, in the order of 'factors'), "
      "got 1",
      E);
  CHECK_THROWS_WITH_AS(parse_correlation_file(two + "  - [1.0, 0.5]\n  - [0.5]\n", "c.yaml"),
                       "c.yaml:6: factor_correlation: row 2 (B): expected 2 numbers, got 1", E);
  CHECK_THROWS_WITH_AS(parse_correlation_file(two + "  - [1.0, 0.5]\n  - [0.4, 1.0]\n", "c.yaml"),
                       "c.yaml:6: factor_correlation: not symmetric: entry (2, 1) is 0.4 but (1, "
                       "2) differs (row B, column A)",
                       E);
  CHECK_THROWS_WITH_AS(parse_correlation_file(two + "  - [1.0, 0.5]\n  - [0.5, x]\n", "c.yaml"),
                       "c.yaml:6: key 'factor_correlation': expected a finite number, got 'x'", E);
  // Ref: eigenvalues of the 3x3 equicorrelation matrix with r = -0.6 are 1 + 2r = -0.2 and 1 - r
  // (textbook identity): not positive definite.
  CHECK_THROWS_WITH_AS(
      parse_correlation_file("factors: [{sector: A}, {sector: B}, {sector: C}]\n"
                             "factor_correlation:\n"
                             "  - [1.0, -0.6, -0.6]\n"
                             "  - [-0.6, 1.0, -0.6]\n"
                             "  - [-0.6, -0.6, 1.0]\n",
                             "c.yaml"),
      "c.yaml:3: factor_correlation: not positive definite (smallest eigenvalue -0.2; a correlation "
      "matrix needs all eigenvalues above 1e-10 for its Cholesky factor)",
      E);
  CHECK_THROWS_WITH_AS(load_correlation_file("/nonexistent/corr.yaml"),
                       "cannot open file '/nonexistent/corr.yaml'", E);
}

TEST_CASE("a second YAML document in a correlation file is an error naming its line") {
  CHECK_THROWS_WITH_AS(
      parse_correlation_file("factors:\n  - {sector: A, asset_correlation: 0.2}\n--- \nfactors: []\n",
                             "c.yaml"),
      "c.yaml:3: a second YAML document starts here; a file holds one document (remove the '---' line, or "
      "split the file)",
      InputError);
}

TEST_CASE("a correlation file above the size cap is refused before it is read") {
  const testing::TempDir t;
  const std::string text = "factors: []\n# " + std::string(kMaxCorrelationFileBytes, 'x') + "\n";
  const std::string path = t.write("big.yaml", text);
  CHECK_THROWS_WITH_AS(load_correlation_file(path),
                       ("'" + path + "': a correlation file of " + std::to_string(text.size()) +
                        " bytes, larger than the cap of 16777216 bytes (16 MiB)")
                           .c_str(),
                       InputError);
}
