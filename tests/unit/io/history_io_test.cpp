// Tests of the equity history and balance-sheet readers (src/history_io.cpp), fed from
// in-memory text.
#include "firmcall/io/history_io.hpp"

#include <doctest/doctest.h>

#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"

using namespace firmcall;

namespace {

const ObligorEquityHistory& get(const EquityHistory& h, std::string_view id) {
  const ObligorEquityHistory* ob = h.find(id);
  REQUIRE(ob != nullptr);
  return *ob;
}

}  // namespace

TEST_CASE("ISO 8601 dates") {
  // Day numbers from Python's datetime.date(...) - date(1970, 1, 1) (independent library).
  CHECK(parse_iso_date("1970-01-01") == 0);
  CHECK(parse_iso_date("2000-03-01") == 11017);
  CHECK(parse_iso_date("2024-02-29") == 19782);  // leap day
  CHECK(parse_iso_date("1999-12-31") == 10956);
  CHECK(parse_iso_date(" 2026-11-30 ") == 20787);
  CHECK(format_iso_date(20787) == "2026-11-30");
  CHECK(format_iso_date(19782) == "2024-02-29");
  for (const char* bad : {"2026-02-29", "2026-13-01", "2026-00-10", "2026-04-31", "2026-1-01", "20260101",
                          "2026-01-01T00:00", "26-01-01", "", "2026/01/01", "0999-01-01"}) {
    CAPTURE(bad);
    CHECK_FALSE(parse_iso_date(bad).has_value());
  }
}

TEST_CASE("equity history: market_cap and close x shares_outstanding") {
  const EquityHistory h = parse_equity_history(
      "date,id,close,shares_outstanding,market_cap\n"
      "2026-01-02,AAA,10.5,100,\n"
      "2026-01-02,BBB,,,2500\n"
      "2026-01-05,AAA,11,100,999\n",  // market_cap wins when both are given
      "p.csv");
  REQUIRE(h.obligors.size() == 2);
  const auto& a = get(h, "AAA");
  CHECK(a.usable());
  REQUIRE(a.rows.size() == 2);
  CHECK(a.rows[0].equity_value == 1050.0);
  CHECK(a.rows[0].line == 2);
  CHECK(a.rows[1].equity_value == 999.0);
  CHECK(get(h, "BBB").rows[0].equity_value == 2500.0);
  CHECK(h.calendar ==
        std::vector<std::int32_t>{*parse_iso_date("2026-01-02"), *parse_iso_date("2026-01-05")});
  CHECK(a.rows[1].trading_day == 1);
  CHECK(h.find("CCC") == nullptr);
}

TEST_CASE("equity history: unsorted rows are sorted and noted") {
  const EquityHistory h = parse_equity_history(
      "date,id,market_cap\n"
      "2026-01-05,AAA,101\n"
      "2026-01-02,AAA,100\n"
      "2026-01-06,AAA,102\n",
      "p.csv");
  const auto& a = get(h, "AAA");
  CHECK(a.usable());
  REQUIRE(a.rows.size() == 3);
  CHECK(a.rows[0].equity_value == 100.0);
  CHECK(a.rows[2].equity_value == 102.0);
  REQUIRE(a.notes.size() == 1);
  CHECK(a.notes[0].line == 3);
  CHECK(a.notes[0].text == "rows are not in date order: sorted by date");
}

TEST_CASE("equity history: a date given twice is an error for that obligor only") {
  const EquityHistory h = parse_equity_history(
      "date,id,market_cap\n"
      "2026-01-02,AAA,100\n"
      "2026-01-02,BBB,50\n"
      "2026-01-05,AAA,101\n"
      "2026-01-05,BBB,51\n"
      "2026-01-02,AAA,100\n",
      "p.csv");
  const auto& a = get(h, "AAA");
  CHECK_FALSE(a.usable());
  CHECK(a.error.line == 6);
  CHECK(a.error.text ==
        "field 'date': 2026-01-02 appears twice (also line 2); a date may appear once per obligor");
  CHECK(get(h, "BBB").usable());
}

TEST_CASE("equity history: bad values name the line, field and value") {
  const EquityHistory h = parse_equity_history(
      "date,id,close,shares_outstanding\n"
      "2026-01-02,NEG,-3.5,100\n"
      "2026-01-02,ZERO,0,100\n"
      "2026-01-02,SHR,4,0\n"
      "2026-01-02,TXT,4.1x,100\n"
      "2026-01-02,DAT,4,100\n"
      "2026-13-02,DAT,4,100\n"
      "2026-01-02,ONE,4,\n"
      "2026-01-02,WID,4,100,7\n"
      "2026-01-02,OK,4,100\n",
      "p.csv");
  const auto check = [&](std::string_view id, std::size_t line, const std::string& text) {
    CAPTURE(id);
    const auto& ob = get(h, id);
    CHECK_FALSE(ob.usable());
    CHECK(ob.error.line == line);
    CHECK(ob.error.text == text);
  };
  check("NEG", 2, "field 'close': must be positive, got '-3.5'");
  check("ZERO", 3, "field 'close': must be positive, got '0'");
  check("SHR", 4, "field 'shares_outstanding': must be positive, got '0'");
  check("TXT", 5, "field 'close': expected a decimal number such as 24.5, got '4.1x'");
  check("DAT", 7, "field 'date': expected an ISO 8601 date such as 2026-03-31, got '2026-13-02'");
  check("ONE", 8, "field 'shares_outstanding': missing (needed with close when market_cap is empty)");
  check("WID", 9, "row has 5 fields, the header has 4");
  CHECK(get(h, "OK").usable());
}

TEST_CASE("equity history: further problems are counted after the first") {
  const EquityHistory h = parse_equity_history(
      "date,id,market_cap\n2026-01-02,AAA,-1\n2026-01-05,AAA,-2\n2026-01-06,AAA,0\n", "p.csv");
  const auto& a = get(h, "AAA");
  CHECK(a.error.line == 2);
  CHECK(a.more_problems == 2);
}

TEST_CASE("equity history: missing days and empty values are noted, with multi-day positions") {
  // Calendar = every date in the file (BBB trades every day); AAA misses 01-06 and 01-07 and
  // has an empty cell on 01-09.
  const EquityHistory h = parse_equity_history(
      "date,id,market_cap\n"
      "2026-01-02,BBB,1\n2026-01-05,BBB,1\n2026-01-06,BBB,1\n2026-01-07,BBB,1\n2026-01-08,BBB,1\n"
      "2026-01-09,BBB,1\n2026-01-12,BBB,1\n"
      "2026-01-02,AAA,10\n2026-01-05,AAA,11\n2026-01-08,AAA,12\n2026-01-09,AAA,\n2026-01-12,AAA,13\n",
      "p.csv");
  const auto& a = get(h, "AAA");
  CHECK(a.usable());
  REQUIRE(a.rows.size() == 4);
  CHECK(a.rows[0].trading_day == 0);
  CHECK(a.rows[1].trading_day == 1);
  CHECK(a.rows[2].trading_day == 4);
  CHECK(a.rows[3].trading_day == 6);
  CHECK(a.missing_days == 3);
  REQUIRE(a.notes.size() == 2);
  CHECK(a.notes[0].text == "1 row has no equity value: treated as missing days");
  CHECK(a.notes[0].line == 12);
  CHECK(a.notes[1].text ==
        "3 trading days missing between its first and last date (first 2026-01-06); returns across a gap are "
        "taken as multi-day returns");
  CHECK(get(h, "BBB").notes.empty());
}

TEST_CASE("equity history: file-level errors name file and line") {
  CHECK_THROWS_WITH_AS(parse_equity_history("id,market_cap\nAAA,1\n", "p.csv"),
                       "p.csv:1: header: required column 'date' is missing", InputError);
  CHECK_THROWS_WITH_AS(parse_equity_history("date,id,close\n", "p.csv"),
                       "p.csv:1: header: required column 'market_cap' (or 'close' with 'shares_outstanding') "
                       "is missing",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_equity_history("date,id,market_cap,id\n", "p.csv"),
                       "p.csv:1: header: column 'id' appears twice", InputError);
  CHECK_THROWS_WITH_AS(parse_equity_history("", "p.csv"), "p.csv: empty file: a header row is required",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_equity_history("date,id,market_cap\n2026-01-02,AAA,1\n2026-01-05,,2\n", "p.csv"),
                       "p.csv:3: field 'id': missing (every row needs an obligor id)", InputError);
  CHECK_THROWS_WITH_AS(parse_equity_history("date,id,market_cap\n\n2026-01-02,\"AAA,1\n", "p.csv"),
                       "p.csv:3: a quoted field is never closed", InputError);
}

TEST_CASE("equity history: unknown columns are noted, and BOM, CRLF and blank lines are accepted") {
  const EquityHistory h = parse_equity_history(
      "\xEF\xBB\xBF"
      "date,id,market_cap,venue\r\n\r\n2026-01-02,AAA,5,X\r\n2026-01-05,AAA,6,X\r\n",
      "p.csv");
  REQUIRE(h.notes.size() == 1);
  CHECK(h.notes[0] == "p.csv:1: note: column 'venue' is not used");
  const auto& a = get(h, "AAA");
  REQUIRE(a.rows.size() == 2);
  CHECK(a.rows[1].line == 4);
}

TEST_CASE("balance sheets: sorted by date, problems per obligor") {
  const BalanceSheets b = parse_balance_sheets(
      "id,as_of,short_term_debt,long_term_debt,default_point\n"
      "AAA,2026-06-30,120,300,\n"
      "AAA,2025-12-31,100,300,\n"
      "BBB,2026-03-31,,,450\n"
      "DUP,2026-03-31,1,2,\n"
      "DUP,2026-03-31,1,3,\n"
      "NEG,2026-03-31,-1,2,\n"
      "HALF,2026-03-31,5,,\n"
      "DATE,31/03/2026,5,6,\n",
      "bs.csv");
  const ObligorBalanceSheets* a = b.find("AAA");
  REQUIRE(a != nullptr);
  CHECK(a->error.empty());
  REQUIRE(a->sheets.size() == 2);
  CHECK(a->sheets[0].as_of == *parse_iso_date("2025-12-31"));
  CHECK(*a->sheets[1].short_term_debt == 120.0);
  CHECK(*b.find("BBB")->sheets[0].default_point == 450.0);
  CHECK(b.find("DUP")->error.line == 6);
  CHECK(b.find("DUP")->error.text ==
        "field 'as_of': 2026-03-31 appears twice (also line 5); one balance sheet per obligor and date");
  CHECK(b.find("NEG")->error.text == "field 'short_term_debt': must be non-negative, got '-1'");
  CHECK(b.find("HALF")->error.text ==
        "field 'long_term_debt': missing (give short_term_debt and long_term_debt, or default_point)");
  CHECK(b.find("DATE")->error.text ==
        "field 'as_of': expected an ISO 8601 date such as 2026-03-31, got '31/03/2026'");
  CHECK(b.ids == std::vector<std::string>{"AAA", "BBB", "DUP", "NEG", "HALF", "DATE"});
  CHECK_THROWS_WITH_AS(parse_balance_sheets("id,as_of,short_term_debt\n", "bs.csv"),
                       "bs.csv:1: header: required columns 'short_term_debt' and 'long_term_debt' (or "
                       "'default_point') are missing",
                       InputError);
}

TEST_CASE("equity history: rows grouped by date or by obligor read the same") {
  // The reader guesses the next id from the last one; any row order must give the same result.
  std::string by_date = "date,id,market_cap\n";
  std::string by_obligor = "date,id,market_cap\n";
  std::string shuffled = "date,id,market_cap\n";
  const char* ids[] = {"AAA", "BBB", "CCC"};
  const auto row = [&](int d, int i) {
    return format_iso_date(20455 + d) + "," + ids[i] + "," + std::to_string(100 + 7 * d + i) + "\n";
  };
  for (int d = 0; d < 5; ++d) {
    for (int i = 0; i < 3; ++i) by_date += row(d, i);
  }
  for (int i = 0; i < 3; ++i) {
    for (int d = 0; d < 5; ++d) by_obligor += row(d, i);
  }
  for (int k = 0; k < 15; ++k) shuffled += row((k * 7) % 5, (k * 2) % 3);  // every (d, i) once
  for (const std::string* text : {&by_obligor, &shuffled}) {
    const EquityHistory a = parse_equity_history(by_date, "a.csv");
    const EquityHistory b = parse_equity_history(*text, "b.csv");
    for (const char* id : ids) {
      CAPTURE(id);
      const auto& ra = get(a, id).rows;
      const auto& rb = get(b, id).rows;
      REQUIRE(ra.size() == 5);
      REQUIRE(rb.size() == 5);
      for (std::size_t k = 0; k < 5; ++k) {
        CHECK(ra[k].date == rb[k].date);
        CHECK(ra[k].equity_value == rb[k].equity_value);
        CHECK(ra[k].trading_day == rb[k].trading_day);
      }
    }
  }
}

TEST_CASE("equity history: a subnormal price and a year-1 date are refused with the reason") {
  // 1e-320 is below the smallest normal double, 2.2250738585072014e-308 (IEEE 754 binary64).
  const EquityHistory h = parse_equity_history(
      "date,id,close,shares_outstanding\n"
      "2026-01-05,A,1e-320,10\n"
      "2026-01-05,B,1e-200,1e-200\n"
      "0001-01-01,C,10,10\n"
      "2026-01-05,D,Bir\"ch,10\n",
      "p.csv");
  CHECK(get(h, "A").error.line == 2);
  CHECK(get(h, "A").error.text ==
        "field 'close': '1e-320' is too small (below 2.2250738585072014e-308, the smallest normal double)");
  CHECK(get(h, "B").error.text ==
        "field 'close': close x shares_outstanding is too small (below 2.2250738585072014e-308)");
  CHECK(get(h, "C").error.text ==
        "field 'date': 0001-01-01 is outside the supported range 1000-01-01 to "
        "9999-12-31");
  CHECK(get(h, "D").error.text == stray_quote_problem("close", "Bir\"ch"));
  const EquityHistory m = parse_equity_history("date,id,market_cap\n2026-01-05,A,4e-310\n", "p.csv");
  CHECK(get(m, "A").error.text ==
        "field 'market_cap': '4e-310' is too small (below 2.2250738585072014e-308, the smallest normal "
        "double)");
}
