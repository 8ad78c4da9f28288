// Tests of the DD of a default history given as book fields (src/engine/calibration_book.cpp).
#include "firmcall/engine/calibration_book.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include "firmcall/book/errors.hpp"
#include "reference_solver.hpp"
#include "test_util.hpp"

using namespace firmcall;
using firmcall::testing::TempDir;

namespace {

const char* kBookHeader = "id,as_of,market_cap,equity_vol,short_term_debt,long_term_debt,rate,defaulted\n";

// Merton DD over one year with drift = rate, from the independent nested-bisection solver.
double reference_dd(double e, double se, double dp, double r) {
  const auto s = firmcall::testing::reference_solve(e, se, dp, r, 1.0);
  const long double v = s.asset_value, sv = s.asset_vol;
  return static_cast<double>((logl(v / dp) + (r - 0.5L * sv * sv)) / sv);
}

}  // namespace

TEST_CASE("calibration book: the DD of book-field rows is the Merton DD, with the settings' default point") {
  TempDir dir;
  const DefaultHistory h = read_default_history(dir.write(
      "h.csv", std::string(kBookHeader) +
                   "A,2021-12-31,1250,0.32,400,900,0.031,0\nB,2021-12-31,310,0.55,300,200,0.02,1\n"));
  REQUIRE(h.dd_from_book_fields());
  ScoreSettings settings;
  const std::vector<double> dd = history_distances(h, settings);
  REQUIRE(dd.size() == 2);
  // Default point = short-term + 0.5 long-term debt (common practice); reference: nested bisection
  // in long double (tests/support/reference_solver.hpp), far more precise than the 1e-9 asked.
  CHECK(dd[0] == doctest::Approx(reference_dd(1250, 0.32, 400 + 0.5 * 900, 0.031)).epsilon(1e-9));
  CHECK(dd[1] == doctest::Approx(reference_dd(310, 0.55, 300 + 0.5 * 200, 0.02)).epsilon(1e-9));
  settings.default_point_weight = 1.0;
  CHECK(history_distances(h, settings)[0] ==
        doctest::Approx(reference_dd(1250, 0.32, 400 + 900, 0.031)).epsilon(1e-9));
}

TEST_CASE("calibration book: a row score cannot score names file, line, obligor and field") {
  TempDir dir;
  const std::string path = dir.write(
      "h.csv", std::string(kBookHeader) +
                   "A,2021-12-31,1250,0.32,400,900,0.031,0\nB,2021-12-31,310,0.00001,300,200,0.02,1\n"
                   "C,2021-12-31,310,0.3,,,0.02,1\n");
  const DefaultHistory h = read_default_history(path);
  // Score's own words for the first bad row (tests/bad_inputs corpus: equity_vol_too_small.csv).
  CHECK_THROWS_WITH_AS(
      history_distances(h, ScoreSettings{}),
      (path + ":3: obligor 'B': field 'equity_vol': must be at least 0.0001 (0.01% a year), got 1e-05 "
              "(1 more row cannot be scored either); a calibration uses every observation: correct "
              "or remove such rows")
          .c_str(),
      InputError);
  CHECK_THROWS_AS(calibrate_history(h, CalibrationOptions{}), InputError);
  // Without a rate column (and no --rate) no row can be scored: the first is named, the rest counted.
  const DefaultHistory no_rate = read_default_history(
      dir.write("r.csv",
                "id,as_of,market_cap,equity_vol,default_point,defaulted\nA,2021-12-31,1250,0.32,850,1\n"
                "B,2021-12-31,310,0.3,400,0\nC,2021-12-31,310,0.5,400,0\n"));
  try {
    history_distances(no_rate, ScoreSettings{});
    FAIL("no error");
  } catch (const InputError& e) {
    const std::string what = e.what();
    CHECK(what.find(":2: obligor 'A': field 'rate': missing") != std::string::npos);
    CHECK(what.find("(2 more rows cannot be scored either)") != std::string::npos);
  }
}
