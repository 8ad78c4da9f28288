// Tests of the FX file reader: the as-of line, the rates, and each error naming file, line and field.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/fx_io.hpp"
#include "test_util.hpp"

using namespace firmcall;

TEST_CASE("FX file: the as-of line, the rates in file order, BOM, CRLF and blank lines") {
  const FxTable fx = parse_fx_rates(
      "\xEF\xBB\xBF# as_of: 2026-11-30\r\ncurrency,rate\r\nGBP,1.17\r\n\r\nUSD, 0.93 \r\nEUR,1\r\n",
      "fx.csv");
  CHECK(fx.origin == "fx.csv");
  CHECK(fx.as_of == "2026-11-30");
  REQUIRE(fx.rates.size() == 3);
  CHECK(fx.rates[0].currency == "GBP");
  CHECK(fx.rates[0].rate == 1.17);
  CHECK(fx.rates[0].line == 3);
  CHECK(fx.rates[1].currency == "USD");
  CHECK(fx.rates[1].rate == 0.93);
  CHECK(fx.rates[1].line == 5);
  REQUIRE(fx.find("EUR") != nullptr);
  CHECK(fx.find("EUR")->rate == 1.0);
  CHECK(fx.find("CHF") == nullptr);
  // Columns in the other order.
  const FxTable swapped = parse_fx_rates("# as_of: 2026-01-02\nrate,currency\n0.5,AUD\n", "s.csv");
  REQUIRE(swapped.rates.size() == 1);
  CHECK(swapped.rates[0].currency == "AUD");
  CHECK(swapped.rates[0].rate == 0.5);
}

TEST_CASE("FX file: each problem names the file, the line and the field") {
  const auto error_of = [](const std::string& text) {
    try {
      parse_fx_rates(text, "fx.csv");
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  CHECK(error_of("currency,rate\nGBP,1.17\n") ==
        "fx.csv:1: field 'as_of': missing; the first line must give the date of the rates as "
        "'# as_of: YYYY-MM-DD', got 'currency,rate'");
  CHECK(error_of("# as_of: 2026-02-30\ncurrency,rate\nGBP,1.17\n") ==
        "fx.csv:1: field 'as_of': expected a calendar date YYYY-MM-DD, got '2026-02-30'");
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\nGBP,-1.17\n") ==
        "fx.csv:3: field 'rate': expected a finite number above 0 (units of the reporting currency per unit "
        "of the currency), got '-1.17'");
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\nGBP,0\n").rfind("fx.csv:3: field 'rate': ", 0) == 0);
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\nGBP,nan\n").rfind("fx.csv:3: field 'rate': ", 0) == 0);
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\nGBP,1e999\n").rfind("fx.csv:3: field 'rate': ", 0) ==
        0);
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\nGBP,1.17\nUSD,0.9\nGBP,1.2\n") ==
        "fx.csv:5: field 'currency': appears twice (first on line 3; one rate per currency), got 'GBP'");
  CHECK(
      error_of("# as_of: 2026-11-30\ncurrency,rate\ngbp,1.17\n") ==
      "fx.csv:3: field 'currency': expected three upper-case letters (ISO 4217 style, e.g. EUR), got 'gbp'");
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate,source\nGBP,1.17,x\n") ==
        "fx.csv:2: header: unknown column 'source' (an FX file has the columns currency,rate)");
  CHECK(error_of("# as_of: 2026-11-30\ncurrency\nGBP\n") ==
        "fx.csv:2: header: required column 'rate' is missing");
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\nGBP\n") ==
        "fx.csv:3: row has 1 fields, the header has 2");
  CHECK(error_of("# as_of: 2026-11-30\ncurrency,rate\n") == "fx.csv: no rates: give one row per currency");
  CHECK(error_of("# as_of: 2026-11-30\n") ==
        "fx.csv:2: header: missing (expected the columns currency,rate)");
  CHECK(error_of("") ==
        "fx.csv:1: field 'as_of': missing; the first line must give the date of the rates as "
        "'# as_of: YYYY-MM-DD', got ''");
}

TEST_CASE("FX file: read from disk, a missing file is an error naming it") {
  testing::TempDir t;
  const std::string path = t.write("rates.csv", "# as_of: 2026-11-30\ncurrency,rate\nCHF,1.06\n");
  const FxTable fx = load_fx_rates(path);
  CHECK(fx.origin == path);
  REQUIRE(fx.rates.size() == 1);
  CHECK(fx.rates[0].rate == 1.06);
  CHECK_THROWS_WITH_AS(load_fx_rates(t.file("none.csv")),
                       ("cannot open file '" + t.file("none.csv") + "'").c_str(), InputError);
}
