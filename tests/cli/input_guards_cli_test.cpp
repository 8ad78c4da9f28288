// End-to-end tests of the typo guards and the financial-firm caution: notes on standard error,
// in the JSON summary and in the table; rows unchanged; refusal under scoring.strict_inputs.
#include <doctest/doctest.h>

#include <string>

#include "test_util.hpp"

using firmcall::testing::run_firmcall;
using firmcall::testing::TempDir;

namespace {
bool has(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}
const char* const kHeader =
    "id,sector,market_cap,share_price,shares_outstanding,equity_vol,short_term_debt,long_term_debt,rate\n";
}  // namespace

TEST_CASE("equity_vol 5 is noted naming obligor and field, the rows unchanged, refused when strict") {
  TempDir dir;
  const std::string book = dir.write("b.csv", std::string(kHeader) +
                                                  "TYP-1,Transport,1000,,,5,400,600,0.03\n"
                                                  "OK-2,Transport,1000,,,0.3,400,600,0.03\n");
  const auto r = run_firmcall("score '" + book + "' --format csv");
  CHECK(r.exit_code == 0);
  CHECK(has(r.err, "b.csv:2: note: obligor 'TYP-1': field 'equity_vol': 5 is read as 500% a year"));
  // 500% equity volatility on E = 1000, DP = 700 gives a PD far above 50% (from memory: sV near
  // sE x E / V, so DD = (ln(V/DP) + (mu - sV^2/2)T) / sV is strongly negative).
  CHECK(has(r.err, "(above 50%) comes from this input"));
  CHECK_FALSE(has(r.err, "OK-2"));
  // The same book with the bound raised: no note, identical rows.
  const std::string cfg = dir.write("quiet.yaml", "scoring:\n  equity_vol_warn_above: 10\n");
  const auto q = run_firmcall("--config '" + cfg + "' score '" + book + "' --format csv");
  CHECK(q.exit_code == 0);
  CHECK_FALSE(has(q.err, "note:"));
  CHECK(q.out == r.out);
  // JSON: the note in the summary.
  const auto j = run_firmcall("-q score '" + book + "' --format json");
  CHECK(has(j.out, "\"notes\": [\n    \""));
  CHECK(has(j.out, "obligor 'TYP-1': field 'equity_vol'"));
  // Strict: that obligor is invalid_input, the other scored, exit 1 (docs/settings.md).
  const std::string strict = dir.write("strict.yaml", "scoring:\n  strict_inputs: true\n");
  const auto s = run_firmcall("--config '" + strict + "' score '" + book + "' --format csv");
  CHECK(s.exit_code == 1);
  CHECK(has(s.out, "TYP-1,,invalid_input"));
  CHECK(has(s.out, "OK-2,,ok"));
  CHECK(has(s.err, "obligor 'TYP-1': field 'equity_vol': above 2 (scoring.equity_vol_warn_above)"));
  const std::string bad = dir.write("bad.yaml", "scoring:\n  strict_inputs: maybe\n");
  const auto e = run_firmcall("--config '" + bad + "' score '" + book + "'");
  CHECK(e.exit_code == 2);
  CHECK(has(e.err, "key 'strict_inputs': expected true or false"));
}

TEST_CASE("market_cap disagreeing with share_price x shares_outstanding is a note naming the obligor") {
  TempDir dir;
  const std::string book = dir.write("b.csv", std::string(kHeader) +
                                                  "CAP-1,Transport,800,5,100,0.3,400,600,0.03\n"
                                                  "CAP-2,Transport,500,5,100,0.3,400,600,0.03\n");
  const auto r = run_firmcall("score '" + book + "' --format csv");
  CHECK(r.exit_code == 0);
  CHECK(has(r.err,
            "note: obligor 'CAP-1': field 'market_cap': 800 differs from share_price x "
            "shares_outstanding = 500 by more than 1%; market_cap is used"));
  CHECK_FALSE(has(r.err, "CAP-2"));
}

TEST_CASE("YAML: market_cap: 1,200 gets a message about the comma") {
  TempDir dir;
  const std::string book =
      dir.write("b.yaml",
                "obligors:\n  - {id: COM-1, market_cap: 1,200, equity_vol: 0.3, short_term_debt: 400,\n"
                "     long_term_debt: 600, rate: 0.03}\n");
  const auto r = run_firmcall("score '" + book + "' --format csv");
  CHECK(r.exit_code == 1);
  CHECK(has(r.out, "field 'market_cap': a comma inside the number '1,200'"));
  CHECK_FALSE(has(r.out, "unknown field"));
}

TEST_CASE("financial firms get the caution: the demo bank by sector, any firm by leverage") {
  const auto r = run_firmcall("score samples/demo_book.yaml --format csv");
  CHECK(r.exit_code == 0);
  CHECK(has(r.err, "note: obligor 'HEM-34': sector 'Finance' is a financial firm"));
  CHECK(has(r.err, "note: obligor 'COR-29': sector 'Finance' is a financial firm"));
  const auto t = run_firmcall("-q score samples/demo_book.yaml");
  CHECK(has(t.out, "notes:\n"));
  CHECK(has(t.out, "obligor 'HEM-34': sector 'Finance'"));
  TempDir dir;
  // DP = 2000 + 0.5 x 1000 = 2500 against E = 100: DP/V near 0.96, above 0.92.
  const std::string book =
      dir.write("b.csv", std::string(kHeader) + "LEV-1,Industrials,100,,,0.3,2000,1000,0.03\n");
  const auto l = run_firmcall("score '" + book + "' --format csv");
  CHECK(l.exit_code == 0);
  CHECK(has(l.err, "note: obligor 'LEV-1': leverage DP/V 0.9"));
  CHECK(has(l.err, "is above 0.92 (scoring.financial_leverage_above)"));
}

TEST_CASE("stress --help gives the --reverse-pd range as open at both ends") {
  const auto r = run_firmcall("stress --help");
  CHECK(r.exit_code == 0);
  CHECK(has(r.out, "--reverse-pd FLOAT:NUMBER in (0, 1)"));
  CHECK_FALSE(has(r.out, "[0 - 1]"));
}
