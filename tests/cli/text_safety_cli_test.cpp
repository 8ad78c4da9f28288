// Totals that overflow, and text from a book that reaches a terminal or the HTML page: sums too
// large for a double are reported with the obligors involved, controls in ids are shown as escapes
// on standard error and in tables, and the page stays UTF-8 with bidirectional overrides neutralised.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/util/utf8.hpp"
#include "test_util.hpp"

using firmcall::testing::read_file;
using firmcall::testing::run_firmcall;
using firmcall::testing::TempDir;

namespace {
const std::string kHeader =
    "id,name,sector,country,market_cap,equity_vol,short_term_debt,long_term_debt,rate,ead,lgd\n";
}  // namespace

TEST_CASE("a portfolio whose total EAD overflows is an error naming the total and the obligors") {
  TempDir t;
  // 1e308 + 1e308 is above DBL_MAX = 1.7976931348623157e308 (IEEE 754 binary64, from memory).
  const std::string book =
      t.write("huge.csv", kHeader +
                              "HUGE-1,Huge One,Retail,NL,2450,0.31,820,1900,0.03,1e308,0.4\n"
                              "HUGE-2,Huge Two,Retail,NL,2450,0.31,820,1900,0.03,1e308,0.4\n"
                              "SMALL-3,Small,Retail,NL,2450,0.31,820,1900,0.03,10,0.4\n");
  for (const char* format : {"table", "csv", "json"}) {
    CAPTURE(format);
    const auto r = run_firmcall("portfolio '" + book + "' -f " + format);
    CHECK(r.exit_code == 2);
    CHECK(r.out.empty());
    CHECK(r.err.find("the total EAD of the 3 obligors in the portfolio is too large for a double") !=
          std::string::npos);
    CHECK(r.err.find("'HUGE-1' (ead 1e+308), 'HUGE-2' (ead 1e+308), 'SMALL-3' (ead 10)") !=
          std::string::npos);
  }
}

TEST_CASE("a stress run whose total EAD overflows is an error before any row is written") {
  TempDir t;
  const std::string book =
      t.write("huge.csv", kHeader +
                              "HUGE-1,Huge One,Retail,NL,2450,0.31,820,1900,0.03,1e308,0.9\n"
                              "HUGE-2,Huge Two,Retail,NL,2450,0.31,820,1900,0.03,1e308,0.9\n");
  // Before: exit 0, EAD-weighted PD 0 (finite / inf) and the EAD total left empty.
  const auto r = run_firmcall("stress '" + book + "' --equity-shocks -0.5 -f csv");
  CHECK(r.exit_code == 2);
  CHECK(r.out.empty());
  CHECK(r.err.find("the total EAD of the 2 scored obligors with ead is too large for a double") !=
        std::string::npos);
  CHECK(r.err.find("'HUGE-1' (ead 1e+308), 'HUGE-2' (ead 1e+308)") != std::string::npos);
}

TEST_CASE("controls in an id are escaped on standard error and in the table") {
  TempDir t;
  // ESC [ 2 J clears the screen and ESC ] 0 ; sets the window title (ECMA-48 / xterm, from memory).
  const std::string book =
      t.write("esc.csv", kHeader +
                             "X\x1b[2J,Name\x1b]0;owned\x07,Retail,NL,,0.31,820,1900,0.03,10,0.4\n"
                             "OK-2,Fine,Retail,NL,2450,0.31,820,1900,0.03,10,0.4\n");
  const auto csv = run_firmcall("score '" + book + "' -f csv");
  CHECK(csv.exit_code == 1);
  CHECK(csv.err.find('\x1b') == std::string::npos);
  CHECK(csv.err.find("X\\x1b[2J") != std::string::npos);
  // The CSV keeps the data exact.
  CHECK(csv.out.find("X\x1b[2J,") != std::string::npos);
  const auto table = run_firmcall("score '" + book + "'");
  CHECK(table.err.find('\x1b') == std::string::npos);
  CHECK(table.out.find('\x1b') == std::string::npos);
  CHECK(table.out.find('\x07') == std::string::npos);
  CHECK(table.out.find("X\\x1b[2J") != std::string::npos);
}

TEST_CASE("the HTML page stays UTF-8 with invalid bytes and bidirectional overrides in ids and names") {
  TempDir t;
  // U+202E RIGHT-TO-LEFT OVERRIDE is E2 80 AE (Unicode UAX #9); FF never occurs in UTF-8 (RFC 3629).
  const std::string book =
      t.write("bidi.csv", kHeader +
                              "BAD\xFF,Bad \xE2\x80\xAE"
                              "txt,Retail,NL,,0.31,820,1900,0.03,10,0.4\n"
                              "OK-2,Fine\xE2\x81\xA6,Retail,NL,2450,0.31,820,1900,0.03,10,0.4\n");
  const std::string page = t.file("page.html");
  const auto r = run_firmcall("report '" + book + "' --html '" + page + "'");
  CHECK(r.exit_code == 1);
  const std::string html = read_file(page);
  REQUIRE_FALSE(html.empty());
  CHECK(firmcall::valid_utf8(html));
  CHECK(html.find("\xE2\x80\xAE") == std::string::npos);
  CHECK(html.find("\xE2\x81\xA6") == std::string::npos);
  CHECK(html.find("BAD\xEF\xBF\xBD") != std::string::npos);
}

TEST_CASE("formula-like CSV text cells: a note by default, a single quote with --csv-text-guard") {
  TempDir t;
  // OWASP "CSV Injection": cells beginning with = + - @, tab or CR may run as formulas.
  const std::string book =
      t.write("formula.csv", kHeader +
                                 "\"=HYPERLINK(\"\"x\"\")\",+cmd,R,NL,2450,0.31,820,1900,0.03,10,0.4\n"
                                 "-5,-2+3,R,NL,2450,0.31,820,1900,-0.01,10,0.4\n");
  const auto exact = run_firmcall("score '" + book + "' -f csv");
  CHECK(exact.exit_code == 0);
  CHECK(exact.out.find("\n\"=HYPERLINK(\"\"x\"\")\",+cmd,ok,") != std::string::npos);
  CHECK(exact.out.find("\n-5,-2+3,ok,") != std::string::npos);
  CHECK(exact.err.find("note: 3 text cell(s) of the CSV output begin with = + - @, tab or CR") !=
        std::string::npos);
  CHECK(exact.err.find("(first: '=HYPERLINK(\"x\")', '+cmd', '-2+3'); kept exact") != std::string::npos);
  const auto guarded = run_firmcall("score '" + book + "' -f csv --csv-text-guard");
  CHECK(guarded.exit_code == 0);
  CHECK(guarded.out.find("\n\"'=HYPERLINK(\"\"x\"\")\",'+cmd,ok,") != std::string::npos);
  // The id -5 reads as a number: left as it is; numbers (the rate -0.01 is not written) are never altered.
  CHECK(guarded.out.find("\n-5,'-2+3,ok,2450,") != std::string::npos);
  CHECK(guarded.err.find("written after a single quote (--csv-text-guard)") != std::string::npos);
  // Tables and JSON are not spreadsheet input: no note.
  CHECK(run_firmcall("score '" + book + "' -f json").err.find("formula") == std::string::npos);
}
