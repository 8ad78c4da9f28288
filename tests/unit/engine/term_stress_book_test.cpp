// Tests of PD term structures under stress (term_stress.hpp): stressed curves are the curves of
// the stressed book, zero shocks change nothing, unshocked obligors keep their base, and every
// kind of failure is a row with a status. Books and scenarios are fed from strings.
#include <doctest/doctest.h>

#include <sstream>
#include <string>

#include "csv_table.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/engine/term_stress_book.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/scenario.hpp"

using namespace firmcall;

namespace {

const char* kBook = R"(defaults: {rate: 0.03, horizon: 1}
obligors:
  - {id: A-1, name: Alpha, sector: Transport, market_cap: 400, equity_vol: 0.45, default_point: 700, lgd: 0.4}
  - {id: B-2, name: Beta, sector: Transport, market_cap: 800, default_point: 700}
  - {id: C-3, name: Gamma, sector: Mining, market_cap: 60, equity_vol: 0.3, default_point: 1000, rate: 0.05}
  - {id: D-4, name: Delta, sector: Energy, market_cap: 900, equity_vol: 0.3, default_point: 1200}
  - {id: E-5, name: Epsilon, sector: Health, market_cap: 1500, equity_vol: 0.25, default_point: 600}
)";

// The same book with the 'fall' scenario applied by hand to A-1 (equity x 0.4).
const char* kFallenBook = R"(defaults: {rate: 0.03, horizon: 1}
obligors:
  - {id: A-1, name: Alpha, sector: Transport, market_cap: 160, equity_vol: 0.45, default_point: 700, lgd: 0.4}
)";

const char* kScenarios = R"(scenarios:
  - name: zero
    description: nothing moves
    shocks:
      - {equity_change: 0}
  - name: fall
    shocks:
      - filter: {sector: [Transport, Mining, Energy]}
        equity_change: -0.6
      - filter: {sector: Energy}
        equity_vol_add_points: -50
)";

TermBookOptions options(const std::string& horizons, OutputFormat format, unsigned threads) {
  TermOptionText c;
  c.horizons = horizons;
  c.model = "both";
  TermBookOptions run = term_book_options(TermSettings{}, c);
  run.format = format;
  run.threads = threads;
  return run;
}

std::string stress_text(OutputFormat format, unsigned threads = 1, TermStressSummary* summary = nullptr) {
  const Book book = parse_yaml_book(kBook, "book.yaml");
  ScenarioSet set = parse_scenarios(kScenarios, "scen.yaml");
  check_filters(set, book);
  std::string out;
  const TermStressSummary s =
      run_stress_term(book, set.scenarios, "scen.yaml", ScoreSettings{}, options("1,3,10", format, threads),
                      [&](std::string_view t) { out += t; });
  if (summary) *summary = s;
  return out;
}

}  // namespace

TEST_CASE("stressed curves: zero shocks change nothing, shocked ones are the curves of the stressed book") {
  TermStressSummary sum;
  const std::string text = stress_text(OutputFormat::csv, 1, &sum);
  const testing::CsvTable csv = testing::parse_csv_table(text);
  std::vector<std::string> header(stress_term_columns().begin(), stress_term_columns().end());
  CHECK(csv.header == header);
  REQUIRE(csv.rows.size() == 2 * 5 * 2 * 3);
  CHECK(sum.rows == 60);
  CHECK(text.find("nan") == std::string::npos);
  CHECK(text.find("inf") == std::string::npos);

  // Curves of the book stressed by hand, for A-1 under 'fall' (an identity: the stressed inputs go
  // through the same calibration as scoring).
  std::string fallen_text;
  score_term_structure(parse_yaml_book(kFallenBook, "fallen.yaml"), ScoreSettings{},
                       options("1,3,10", OutputFormat::csv, 1),
                       [&](std::string_view t) { fallen_text += t; });
  const testing::CsvTable fallen = testing::parse_csv_table(fallen_text);

  std::size_t fallen_row = 0;
  for (std::size_t r = 0; r < csv.rows.size(); ++r) {
    const std::string scenario = csv.cell(r, "scenario");
    const std::string id = csv.cell(r, "id");
    const std::string model = csv.cell(r, "model");
    CAPTURE(scenario);
    CAPTURE(id);
    CAPTURE(model);
    CAPTURE(csv.cell(r, "horizon"));
    if (id == "B-2") {
      CHECK(csv.cell(r, "status") == "invalid_input");
      CHECK(csv.cell(r, "message") == "line 4: field 'equity_vol': missing");
      continue;
    }
    if (scenario == "zero" || id == "E-5") {
      CHECK(csv.cell(r, "status") == "ok");
      CHECK(csv.cell(r, "shocked") == (id == "E-5" && scenario == "fall" ? "false" : "true"));
      for (const char* col : {"pd", "pd_forward", "pd_annualised", "spread_bp", "asset_value", "asset_vol"}) {
        CHECK(csv.cell(r, std::string(col) + "_stressed") == csv.cell(r, col));
      }
      CHECK(csv.number(r, "pd_change") == 0.0);
      continue;
    }
    if (id == "A-1") {
      CHECK(csv.cell(r, "status") == "ok");
      for (const char* col : {"pd", "pd_forward", "pd_annualised", "spread_bp", "asset_value", "asset_vol"}) {
        CHECK(csv.cell(r, std::string(col) + "_stressed") == fallen.cell(fallen_row, col));
      }
      CHECK(csv.number(r, "pd_change") == csv.number(r, "pd_stressed") - csv.number(r, "pd"));
      ++fallen_row;
    } else if (id == "C-3") {
      // Equity 24 after the fall is below 1000 (1 - e^-0.05) = 48.8: no first-passage solution.
      if (model == "first-passage") {
        CHECK(csv.cell(r, "status") == "not_converged");
        CHECK(csv.cell(r, "pd_stressed").empty());
        CHECK_FALSE(csv.cell(r, "pd").empty());
        CHECK(csv.cell(r, "message")
                  .rfind("line 5: stressed inputs: first-passage calibration found no solution", 0) == 0);
      } else {
        CHECK(csv.cell(r, "status") == "ok");
      }
    } else if (id == "D-4") {
      CHECK(csv.cell(r, "status") == "invalid_stress");
      CHECK(csv.cell(r, "message") ==
            "line 6: stressed field 'equity_vol': must be positive (check equity_vol_add_points), got -0.2");
      CHECK(csv.cell(r, "pd_stressed").empty());
      CHECK_FALSE(csv.cell(r, "pd").empty());
    }
  }
  CHECK(fallen_row == 6);
  CHECK(sum.failed_rows == 2 * 6 + 3 + 6);  // B-2 in both scenarios, C-3 first passage, D-4
  REQUIRE(sum.problems.size() == 3);
  CHECK(sum.problems[0] == "book.yaml:4: obligor 'B-2': field 'equity_vol': missing");
  CHECK(sum.problems[1].rfind("book.yaml:5: obligor 'C-3': scenario 'fall': stressed inputs: first-passage",
                              0) == 0);
  CHECK(sum.problems[2] ==
        "book.yaml:6: obligor 'D-4': scenario 'fall': stressed field 'equity_vol': must be positive (check "
        "equity_vol_add_points), got -0.2");
}

TEST_CASE("stressed curves: threads change nothing, JSON nests rows under scenarios, the table fits") {
  const std::string one = stress_text(OutputFormat::csv, 1);
  CHECK(stress_text(OutputFormat::csv, 3) == one);
  const std::string json = stress_text(OutputFormat::json, 2);
  CHECK(json == stress_text(OutputFormat::json, 1));
  CHECK(json.find(
            "\"scenarios\": [\n    {\"name\": \"zero\", \"description\": \"nothing moves\", \"rows\": [\n") !=
        std::string::npos);
  CHECK(json.find("\"pd_stressed\": null") != std::string::npos);
  CHECK(json.find("\"summary\": {\"obligors\": 5, \"scenarios\": 2, \"rows\": 60, \"failed_rows\": 21}") !=
        std::string::npos);
  const std::string table = stress_text(OutputFormat::table);
  std::istringstream in(table);
  std::string line;
  while (std::getline(in, line)) CHECK(line.size() <= 120);
  CHECK(table.find("Scenario 2 of 2: fall\n") != std::string::npos);
  CHECK(table.find("E-5  Epsilon  (no shock)") != std::string::npos);
  CHECK(table.find("  merton          PD % as it stands") != std::string::npos);
  CHECK(table.find("  first-passage   invalid_stress (reason below)") != std::string::npos);
  CHECK(table.find("rows 60 (5 obligors x 2 scenarios x models x horizons), 21 failed") != std::string::npos);
}
