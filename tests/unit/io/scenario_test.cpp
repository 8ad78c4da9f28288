// Tests of scenario files and quick grids (src/scenario.cpp). Files are fed from strings.
#include "firmcall/io/scenario.hpp"

#include <doctest/doctest.h>

#include <set>
#include <string>

#include "firmcall/book/errors.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {

// A small invented book: ids, sectors, countries and currencies chosen so that filters overlap.
const char* kBook = R"(book: test
defaults: {rate: 0.03}
obligors:
  - {id: A1, sector: Energy, country: DE, currency: EUR, market_cap: 100, equity_vol: 0.3, default_point: 80}
  - {id: A2, sector: Energy, country: FR, currency: EUR, market_cap: 100, equity_vol: 0.3, default_point: 80}
  - {id: B1, sector: Utilities, country: DE, currency: EUR, market_cap: 100, equity_vol: 0.3, default_point: 80}
  - {id: B2, sector: Utilities, country: GB, currency: GBP, market_cap: 100, equity_vol: 0.3, default_point: 80}
  - {id: C1, sector: Real Estate, country: GB, currency: GBP, market_cap: 100, equity_vol: 0.3, default_point: 80}
)";

std::set<std::string> hit_by(const Scenario& sc, const Book& book) {
  std::set<std::string> ids;
  for (const auto& rec : book.obligors) {
    if (sc.effect_for(rec).shocks > 0) ids.insert(rec.get(TextField::id));
  }
  return ids;
}

ScenarioSet parse(const std::string& text) {
  return parse_scenarios(text, "scen.yaml");
}

}  // namespace

TEST_CASE("a scenario file is read with its shocks, filters and lines") {
  const ScenarioSet set = parse(R"(description: test set
scenarios:
  - name: mild
    description: everything a little
    shocks:
      - {equity_change: -0.1, equity_vol_multiplier: 1.2, equity_vol_add_points: 2, rate_shift_bp: 25}
  - name: energy
    shocks:
      - filter: {sector: Energy}
        equity_change: -0.3
        default_point_change: 0.1
        horizon_years: 2
)");
  REQUIRE(set.scenarios.size() == 2);
  CHECK(set.description == "test set");
  const Scenario& mild = set.scenarios[0];
  CHECK(mild.name == "mild");
  CHECK(mild.description == "everything a little");
  CHECK(mild.line == 3);
  REQUIRE(mild.shocks.size() == 1);
  CHECK(mild.shocks[0].shock.equity_change == -0.1);
  CHECK(mild.shocks[0].shock.equity_vol_multiplier == 1.2);
  CHECK(mild.shocks[0].shock.equity_vol_add_points == 2.0);
  CHECK(mild.shocks[0].shock.rate_shift_bp == 25.0);
  CHECK_FALSE(mild.shocks[0].filter.any());
  const Scenario& energy = set.scenarios[1];
  REQUIRE(energy.shocks.size() == 1);
  CHECK(energy.shocks[0].line == 9);
  CHECK(energy.shocks[0].shock.default_point_change == 0.1);
  CHECK(energy.shocks[0].shock.horizon_years == 2.0);
  CHECK(energy.shocks[0].filter.any());
}

TEST_CASE("filters hit exactly the named obligors") {
  const Book book = parse_yaml_book(kBook, "book.yaml");
  const ScenarioSet set = parse(R"(scenarios:
  - name: all
    shocks: [{equity_change: -0.1}]
  - name: one sector
    shocks: [{filter: {sector: Energy}, equity_change: -0.1}]
  - name: two sectors
    shocks: [{filter: {sector: [Energy, Real Estate]}, equity_change: -0.1}]
  - name: sector and country
    shocks: [{filter: {sector: Utilities, country: DE}, equity_change: -0.1}]
  - name: currency
    shocks: [{filter: {currency: GBP}, equity_change: -0.1}]
  - name: ids
    shocks: [{filter: {ids: [A2, C1]}, equity_change: -0.1}]
  - name: two shocks
    shocks:
      - {filter: {country: FR}, equity_change: -0.1}
      - {filter: {ids: B2}, equity_vol_multiplier: 1.5}
)");
  check_filters(set, book);
  using S = std::set<std::string>;
  CHECK(hit_by(set.scenarios[0], book) == S{"A1", "A2", "B1", "B2", "C1"});
  CHECK(hit_by(set.scenarios[1], book) == S{"A1", "A2"});
  CHECK(hit_by(set.scenarios[2], book) == S{"A1", "A2", "C1"});
  CHECK(hit_by(set.scenarios[3], book) == S{"B1"});
  CHECK(hit_by(set.scenarios[4], book) == S{"B2", "C1"});
  CHECK(hit_by(set.scenarios[5], book) == S{"A2", "C1"});
  CHECK(hit_by(set.scenarios[6], book) == S{"A2", "B2"});
  // The two shocks of the last scenario apply to their own obligors only.
  const ShockEffect a2 = set.scenarios[6].effect_for(book.obligors[1]);
  CHECK(a2.shocks == 1);
  CHECK(a2.equity_vol_factor == 1.0);
  CHECK(a2.equity_factor == 1.0 - 0.1);
}

TEST_CASE("bad scenario files name the file, line and key") {
  using E = InputError;
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n    shocks:\n      - {equity_chnage: -0.1}\n"),
                       "scen.yaml:4: scenario 'x', shock 1: unknown key 'equity_chnage' (did you mean "
                       "'equity_change'?)",
                       E);
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n    shocks:\n      - {asset_value_drop: 0.2}\n"),
                       "scen.yaml:4: scenario 'x', shock 1: unknown key 'asset_value_drop'", E);
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n    shocks:\n      - {equity_change: -1}\n"),
                       "scen.yaml:4: scenario 'x', shock 1: key 'equity_change': must be greater than -1 (a "
                       "relative change of -1 or less makes the equity value non-positive), got -1",
                       E);
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n    shocks:\n      - equity_change: -1.5\n"),
                       "scen.yaml:4: scenario 'x', shock 1: key 'equity_change': must be greater than -1 (a "
                       "relative change of -1 or less makes the equity value non-positive), got -1.5",
                       E);
  CHECK_THROWS_WITH_AS(
      parse("scenarios:\n  - name: x\n    shocks:\n      - {filter: {}, equity_change: -0.1}\n"),
      "scen.yaml:4: scenario 'x', shock 1: key 'filter': empty filter (give sector, country, currency or "
      "ids; "
      "leave 'filter' out to shock every obligor)",
      E);
  CHECK_THROWS_WITH_AS(
      parse("scenarios:\n  - name: x\n    shocks:\n      - filter: {sector: []}\n        equity_change: "
            "-0.1\n"),
      "scen.yaml:4: scenario 'x', shock 1, filter: key 'sector': empty list (name at least one sector)", E);
  CHECK_THROWS_WITH_AS(
      parse("scenarios:\n  - name: x\n    shocks:\n      - filter: {sectors: Energy}\n        equity_change: "
            "-0.1\n"),
      "scen.yaml:4: scenario 'x', shock 1, filter: unknown key 'sectors' (did you mean 'sector'?)", E);
  CHECK_THROWS_WITH_AS(parse("scenario:\n  - name: x\n"),
                       "scen.yaml:1: scenario file: unknown key 'scenario' (did you mean 'scenarios'?)", E);
  CHECK_THROWS_WITH_AS(
      parse("scenarios:\n  - name: x\n    shocks:\n      - {equity_change: ten}\n"),
      "scen.yaml:4: scenario 'x', shock 1: key 'equity_change': expected a finite number, got "
      "'ten'",
      E);
  CHECK_THROWS_WITH_AS(
      parse("scenarios:\n  - name: x\n    shocks:\n      - {filter: {ids: A1}}\n"),
      "scen.yaml:4: scenario 'x', shock 1: no change given (give at least one of equity_change, "
      "equity_vol_multiplier, equity_vol_add_points, rate_shift_bp, default_point_change, "
      "horizon_years)",
      E);
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n    shocks: [{equity_change: 0}]\n  - name: x\n    "
                             "shocks: [{equity_change: 0}]\n"),
                       "scen.yaml:4: scenario 2: key 'name': 'x' is used by an earlier scenario", E);
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n"),
                       "scen.yaml:2: scenario 'x': missing key 'shocks' (the list of shocks)", E);
  CHECK_THROWS_WITH_AS(parse("scenarios: []\n"),
                       "scen.yaml:1: scenario file: key 'scenarios': expected a non-empty list of scenarios",
                       E);
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: x\n    shocks: [{equity_vol_multiplier: 0}]\n"),
                       "scen.yaml:3: scenario 'x', shock 1: key 'equity_vol_multiplier': must be positive (a "
                       "factor on equity volatility), got 0",
                       E);
  CHECK_THROWS_WITH_AS(
      parse("scenarios:\n  - name: x\n    shocks: [{horizon_years: 0}]\n"),
      "scen.yaml:3: scenario 'x', shock 1: key 'horizon_years': must be positive years, at most "
      "100, got 0",
      E);
  CHECK_THROWS_AS(parse("scenarios: [\n"), E);  // not YAML
}

TEST_CASE("a filter name that matches no obligor of the book is an error with a suggestion") {
  const Book book = parse_yaml_book(kBook, "book.yaml");
  using E = InputError;
  CHECK_THROWS_WITH_AS(
      check_filters(
          parse("scenarios:\n  - name: x\n    shocks:\n      - filter: {sector: [Energy, Utilties]}\n"
                "        equity_change: -0.1\n"),
          book),
      "scen.yaml:4: scenario 'x', shock 1, filter: key 'sector': 'Utilties' matches no obligor of book.yaml "
      "(did "
      "you mean 'Utilities'?)",
      E);
  CHECK_THROWS_WITH_AS(
      check_filters(
          parse("scenarios:\n  - name: x\n    shocks:\n      - filter:\n          ids:\n            - A1\n"
                "            - Z9\n        equity_change: -0.1\n"),
          book),
      "scen.yaml:7: scenario 'x', shock 1, filter: key 'ids': 'Z9' matches no obligor of book.yaml", E);
  // Each name exists, but no obligor has both.
  CHECK_THROWS_WITH_AS(
      check_filters(
          parse("scenarios:\n  - name: x\n    shocks:\n      - {filter: {sector: Energy, country: GB}, "
                "equity_change: -0.1}\n"),
          book),
      "scen.yaml:4: scenario 'x', shock 1, filter: no obligor of book.yaml matches every key at once", E);
}

TEST_CASE("quick grids pair every equity change with every volatility multiplier") {
  const std::vector<Scenario> grid = grid_scenarios({0.0, -0.1, -0.3}, {1.0, 1.25});
  REQUIRE(grid.size() == 6);
  CHECK(grid[0].name == "equity +0% vol x1");
  CHECK(grid[3].name == "equity -10% vol x1.25");
  CHECK(grid[5].grid_row == 2);
  CHECK(grid[5].grid_column == 1);
  REQUIRE(grid[5].shocks.size() == 1);
  CHECK(grid[5].shocks[0].shock.equity_change == -0.3);
  CHECK(grid[5].shocks[0].shock.equity_vol_multiplier == 1.25);
  CHECK_FALSE(grid[5].shocks[0].filter.any());
}

TEST_CASE("a second YAML document in a scenario file is an error naming its line") {
  CHECK_THROWS_WITH_AS(parse("scenarios:\n  - name: a\n    shocks:\n      - {equity_change: -0.1}\n---\n"
                             "scenarios:\n  - name: b\n    shocks:\n      - {equity_change: -0.5}\n"),
                       "scen.yaml:5: a second YAML document starts here; a file holds one document (remove "
                       "the '---' line, or split the file)",
                       InputError);
}

TEST_CASE("a scenario file above the size cap is refused before it is read") {
  const testing::TempDir t;
  std::string text = "scenarios:\n";
  while (text.size() <= kMaxScenarioFileBytes)
    text += "  - name: s\n    shocks:\n      - {equity_change: -0.1}\n";
  const std::string path = t.write("big.yaml", text);
  CHECK_THROWS_WITH_AS(load_scenarios(path),
                       ("'" + path + "': a scenario file of " + std::to_string(text.size()) +
                        " bytes, larger than the cap of 8388608 bytes (8 MiB)")
                           .c_str(),
                       InputError);
}
