// End-to-end tests of the built executable for PD term structures: `score --horizons/--model` and
// `stress --horizons` on the sample book, exit codes and messages for bad input.
#include <doctest/doctest.h>

#include <map>
#include <sstream>
#include <string>

#include "csv_table.hpp"
#include "test_util.hpp"

using firmcall::testing::parse_csv_table;
using firmcall::testing::read_file;
using firmcall::testing::run_firmcall;
using firmcall::testing::TempDir;

namespace {
std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> out;
  std::istringstream in(text);
  std::string l;
  while (std::getline(in, l)) out.push_back(l);
  return out;
}
}  // namespace

TEST_CASE("score --horizons --model both on the sample book: every obligor, model and horizon") {
  const auto r =
      run_firmcall("score samples/demo_book.yaml --horizons 0.5,1,2,3,5,7,10 --model both --format csv");
  CHECK(r.exit_code == 0);
  const auto csv = parse_csv_table(r.out);
  REQUIRE(csv.rows.size() == 36 * 2 * 7);
  CHECK(r.err == "firmcall: term structures of 36 of 36 obligors; 504 rows\n");
  CHECK(r.out.find("nan") == std::string::npos);
  std::map<std::string, double> previous;  // (id, model) -> last cumulative PD
  for (std::size_t i = 0; i < csv.rows.size(); ++i) {
    CAPTURE(csv.cell(i, "id"));
    CHECK(csv.cell(i, "status") == "ok");
    CHECK(csv.number(i, "calibration_horizon") == 1.0);
    const std::string key = csv.cell(i, "id") + "/" + csv.cell(i, "model");
    const double pd = csv.number(i, "pd");
    if (csv.cell(i, "model") == "first-passage" && previous.count(key)) {
      CHECK(pd >= previous[key]);  // a distribution function of the default time
      CHECK(csv.number(i, "pd_forward") >= 0.0);
    }
    previous[key] = pd;
  }
  // The first-passage barrier defaults to the default point.
  CHECK(csv.cell(7, "model") == "first-passage");
  CHECK(csv.cell(7, "barrier") == csv.cell(7, "default_point"));
}

TEST_CASE("re-solving at the calibration horizon reproduces score's values, end to end") {
  // Identity: the sample book's horizon is 1 year; score and the term structure at t = 1 (either
  // calibration) solve the same equations.
  const auto s = run_firmcall("score samples/demo_book.yaml --format csv");
  REQUIRE(s.exit_code == 0);
  const auto score = parse_csv_table(s.out);
  for (const char* cal : {"once", "per-horizon"}) {
    const auto t = run_firmcall(std::string("score samples/demo_book.yaml --horizons 1 --calibration ") +
                                cal + " --format csv");
    REQUIRE(t.exit_code == 0);
    const auto term = parse_csv_table(t.out);
    REQUIRE(term.rows.size() == score.rows.size());
    for (std::size_t i = 0; i < term.rows.size(); ++i) {
      for (const char* col : {"id", "asset_value", "asset_vol", "distance_to_default", "pd",
                              "pd_risk_neutral", "spread_bp", "iterations", "residual"}) {
        CAPTURE(cal);
        CAPTURE(col);
        CHECK(term.cell(i, col) == score.cell(i, col));
      }
    }
  }
}

TEST_CASE("the term-structure table on the sample book: compact curves, 120 columns, the caution") {
  const auto r = run_firmcall("score samples/demo_book.yaml --horizons 0.5,1,2,3,5,7,10 --model both");
  CHECK(r.exit_code == 0);
  for (const auto& l : lines_of(r.out)) CHECK(l.size() <= 120);
  CHECK(r.out.find("GOR-33  Gorsefield Coal") != std::string::npos);
  CHECK(r.out.find("term structures of 36 of 36 obligors") != std::string::npos);
  CHECK(r.out.find("not a credit decision on their own") != std::string::npos);
  CHECK(r.err.empty());
  const auto j = run_firmcall("score samples/demo_book.yaml --model first-passage --format json");
  CHECK(j.exit_code == 0);
  CHECK(j.out.find("\"horizons\": null") != std::string::npos);
  CHECK(j.out.find("nan") == std::string::npos);
}

TEST_CASE("bad --horizons and misplaced term options: exit 2, a clear message, nothing written") {
  TempDir t;
  const std::string out = t.write("out.csv", "previous contents\n");
  auto r = run_firmcall("score samples/demo_book.yaml --horizons 2,1 --format csv -o '" + out + "'");
  CHECK(r.exit_code == 2);
  CHECK(
      r.err ==
      "firmcall: error: --horizons: horizons must be strictly increasing, got '1' after '2' (a list of years "
      "such as 0.5,1,2,3,5,7,10)\n");
  CHECK(r.out.empty());
  CHECK(read_file(out) == "previous contents\n");
  r = run_firmcall("score samples/demo_book.yaml --horizons 1,5y");
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "firmcall: error: --horizons: expected a number of years, got '5y' (a list of years such as "
        "0.5,1,2,3,5,7,10)\n");
  r = run_firmcall("score samples/demo_book.yaml --horizons ''");
  CHECK(r.exit_code == 2);
  r = run_firmcall("score samples/demo_book.yaml --calibration per-horizon");
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "firmcall: error: --calibration: applies to term structures; add --horizons LIST or --model "
        "first-passage|both\n");
  r = run_firmcall("score samples/demo_book.yaml --model black-cox");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: --model: expected merton, first-passage or both, got 'black-cox'\n");
  r = run_firmcall("score samples/demo_book.yaml --horizons 1,2 --sensitivities");
  CHECK(r.exit_code == 2);
  r = run_firmcall("stress samples/demo_book.yaml --reverse-pd 0.05 --horizons 1,2");
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "firmcall: error: --reverse-pd: cannot be combined with term structures (--horizons, --model)\n");
}

TEST_CASE(
    "bad rows with --horizons: named with file, line, obligor and field, the good rows still computed") {
  const auto r = run_firmcall("score samples/bad_rows.csv --horizons 1,5 --model both --format csv");
  CHECK(r.exit_code == 1);
  const auto csv = parse_csv_table(r.out);
  REQUIRE(csv.rows.size() == 16 * 2 * 2);
  int ok = 0;
  for (std::size_t i = 0; i < csv.rows.size(); ++i) ok += csv.cell(i, "status") == "ok";
  CHECK(ok == 2 * 2 * 2);
  for (const char* expect : {
           "samples/bad_rows.csv:4: obligor 'BAD-03': field 'market_cap': must be positive, got -50",
           "samples/bad_rows.csv:6: obligor 'BAD-05': field 'equity_vol': expected a finite decimal number",
           "samples/bad_rows.csv:11: obligor 'GOOD-01': field 'id': duplicate of the obligor at line 2",
           "firmcall: term structures of 2 of 16 obligors (14 invalid input, 0 not converged); 64 rows",
       }) {
    CAPTURE(expect);
    CHECK(r.err.find(expect) != std::string::npos);
  }
}

TEST_CASE("stress --horizons on the sample book: base and stressed curves per scenario") {
  const auto r = run_firmcall(
      "stress samples/demo_book.yaml --scenarios samples/stress_scenarios.yaml --horizons 1,5,10 --model "
      "both "
      "--format csv");
  CHECK(r.exit_code == 0);
  const auto csv = parse_csv_table(r.out);
  REQUIRE(csv.rows.size() == 3 * 36 * 2 * 3);
  CHECK(r.err ==
        "firmcall: stressed the term structures of 36 obligors under 3 scenarios: 648 rows, 0 failed\n");
  // The single-horizon stress run's figures reappear at t = 1 for the Merton rows.
  const auto s = run_firmcall(  // the term stress re-solves (E', sE'): --hold equity-vol
      "stress samples/demo_book.yaml --scenarios samples/stress_scenarios.yaml --format csv --hold "
      "equity-vol");
  REQUIRE(s.exit_code == 0);
  const auto stress = parse_csv_table(s.out);
  std::size_t compared = 0;
  for (std::size_t i = 0; i < csv.rows.size(); ++i) {
    if (csv.cell(i, "model") != "merton" || csv.cell(i, "horizon") != "1") continue;
    const std::size_t j = compared++;
    CAPTURE(csv.cell(i, "id"));
    CHECK(csv.cell(i, "id") == stress.cell(j, "id"));
    CHECK(csv.cell(i, "scenario") == stress.cell(j, "scenario"));
    for (const char* col : {"pd", "pd_stressed", "spread_bp", "spread_bp_stressed", "asset_value_stressed"}) {
      CHECK(csv.cell(i, col) == stress.cell(j, col));
    }
  }
  CHECK(compared == 3 * 36);
  const auto table = run_firmcall(
      "stress samples/demo_book.yaml --equity-shocks 0,-0.3 --horizons 1,3,5,10 --model first-passage");
  CHECK(table.exit_code == 0);
  for (const auto& l : lines_of(table.out)) CHECK(l.size() <= 120);
  CHECK(table.out.find("Scenario 2 of 2: equity -30% vol x1") != std::string::npos);
}
