// Recording a scored book: what goes into the store besides the measures (the obligor's fields
// and the run's settings as JSON), and the arguments' validate(). The JSON texts are pinned as the
// store has always held them (numbers at 17 significant digits, common practice for exact reading
// back; the default settings and grade scale are those of settings.hpp and grades.hpp).
#include "firmcall/monitor/record_book.hpp"

#include <doctest/doctest.h>

#include <string>

using namespace firmcall;

TEST_CASE("settings_json: the default settings and grade scale") {
  CHECK(
      settings_json(ScoreSettings{}, default_grade_scale()) ==
      "{\"default_point_weight\": 0.5, \"horizon\": 1, \"measure\": \"physical\", \"default_lgd\": "
      "0.45000000000000001, \"max_equity_vol\": 10, \"solver\": {\"max_newton_iterations\": 60, "
      "\"max_fallback_iterations\": 200, \"residual_tolerance\": 9.9999999999999998e-13}, \"overrides\": {}, "
      "\"grades\": [{\"label\": \"FC1\", \"max_pd\": 0.0001}, {\"label\": \"FC2\", \"max_pd\": "
      "0.00025000000000000001}, {\"label\": \"FC3\", \"max_pd\": 0.00050000000000000001}, {\"label\": "
      "\"FC4\", \"max_pd\": 0.001}, {\"label\": \"FC5\", \"max_pd\": 0.0025000000000000001}, {\"label\": "
      "\"FC6\", \"max_pd\": 0.0050000000000000001}, {\"label\": \"FC7\", \"max_pd\": 0.01}, {\"label\": "
      "\"FC8\", \"max_pd\": 0.025000000000000001}, {\"label\": \"FC9\", \"max_pd\": 0.10000000000000001}, "
      "{\"label\": \"FC10\", \"max_pd\": 1}]}");
}

TEST_CASE("settings_json: command-line overrides in their fixed order, and another scale") {
  ScoreSettings s;
  s.weight_override = 0.25;
  s.rate_override = 0.03;
  GradeScale g;
  g.bands = {{"A", 0.01}, {"B", 1.0}};
  CHECK(settings_json(s, g) ==
        "{\"default_point_weight\": 0.5, \"horizon\": 1, \"measure\": \"physical\", \"default_lgd\": "
        "0.45000000000000001, \"max_equity_vol\": 10, \"solver\": {\"max_newton_iterations\": 60, "
        "\"max_fallback_iterations\": 200, \"residual_tolerance\": 9.9999999999999998e-13}, \"overrides\": "
        "{\"rate\": 0.029999999999999999, \"default_point_weight\": 0.25}, \"grades\": [{\"label\": \"A\", "
        "\"max_pd\": 0.01}, {\"label\": \"B\", \"max_pd\": 1}]}");
}

TEST_CASE("fields_json: given fields only, texts escaped, numbers in their shortest exact form") {
  ObligorRecord rec;
  rec.get(TextField::id) = "ALD-01";
  rec.get(TextField::name) = "Alder \"Freight\"";
  rec.set(NumField::rate, 0.1);
  rec.set(NumField::market_cap, 1250.5);
  CHECK(fields_json(rec) ==
        "{\"id\":\"ALD-01\",\"name\":\"Alder \\\"Freight\\\"\",\"market_cap\":1250.5,\"rate\":0.1}");
  CHECK(fields_json(ObligorRecord{}) == "{}");
}

TEST_CASE("RecordBookOptions::validate: a store and an optional calendar date") {
  RecordBookOptions o{.store_path = "history.sqlite", .as_of = "", .tool_version = "0.1.0"};
  CHECK_FALSE(o.validate().has_value());
  o.as_of = "2024-02-29";  // a leap day (Gregorian calendar)
  CHECK_FALSE(o.validate().has_value());

  o.as_of = "2026-02-29";  // 2026 is not a leap year
  auto problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "as_of");
  CHECK(problem->value == "2026-02-29");
  CHECK(problem->constraint == "must be empty or a date YYYY-MM-DD");

  o.as_of = "";
  o.store_path = "";
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "store_path");
  CHECK(problem->constraint == "must name the history store file");
}

TEST_CASE("RecordBookOptions::validate: defaults name no store") {
  const auto problem = RecordBookOptions{}.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "store_path");
}
