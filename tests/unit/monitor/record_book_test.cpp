// Recording a scored book: what goes into the store besides the measures (the obligor's fields
// and the run's settings as JSON), and the arguments' validate(). The JSON texts are pinned as the
// store has always held them (numbers as the shortest decimal that reads back to the same double, as
// Python's repr; the default settings and grade scale are those of settings.hpp and grades.hpp).
#include "firmcall/monitor/record_book.hpp"

#include <doctest/doctest.h>
#include <sqlite3.h>

#include <cmath>
#include <fstream>
#include <string>
#include <vector>

#include "test_util.hpp"

using namespace firmcall;

TEST_CASE("settings_json: the default settings and grade scale") {
  CHECK(settings_json(ScoreSettings{}, default_grade_scale()) ==
        "{\"default_point_weight\": 0.5, \"horizon\": 1, \"measure\": \"physical\", \"default_lgd\": "
        "0.45, \"max_equity_vol\": 10, \"solver\": {\"max_newton_iterations\": 60, "
        "\"max_fallback_iterations\": 200, \"residual_tolerance\": 1e-12}, \"overrides\": {}, "
        "\"grades\": [{\"label\": \"FC1\", \"max_pd\": 0.0001}, {\"label\": \"FC2\", \"max_pd\": "
        "0.00025}, {\"label\": \"FC3\", \"max_pd\": 0.0005}, {\"label\": "
        "\"FC4\", \"max_pd\": 0.001}, {\"label\": \"FC5\", \"max_pd\": 0.0025}, {\"label\": "
        "\"FC6\", \"max_pd\": 0.005}, {\"label\": \"FC7\", \"max_pd\": 0.01}, {\"label\": "
        "\"FC8\", \"max_pd\": 0.025}, {\"label\": \"FC9\", \"max_pd\": 0.1}, "
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
        "0.45, \"max_equity_vol\": 10, \"solver\": {\"max_newton_iterations\": 60, "
        "\"max_fallback_iterations\": 200, \"residual_tolerance\": 1e-12}, \"overrides\": "
        "{\"rate\": 0.03, \"default_point_weight\": 0.25}, \"grades\": [{\"label\": \"A\", "
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

TEST_CASE("RecordBookOptions::validate: a calibrated driving PD needs a calibration") {
  RecordBookOptions o;
  o.store_path = "history.sqlite";
  o.driving_pd = DrivingPd::calibrated;
  const auto problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "driving_pd");
  CHECK(problem->constraint == "needs pd_calibration");
  PdCalibration cal;
  o.pd_calibration = &cal;
  CHECK_FALSE(o.validate().has_value());
}

TEST_CASE("stored_obligor: the calibrated one-year PD of the DD, and the grade on the driving PD") {
  ObligorRecord rec;
  rec.get(TextField::id) = "ALD-01";
  rec.set(NumField::market_cap, 100.0);
  rec.set(NumField::equity_vol, 0.6);
  rec.set(NumField::default_point, 150.0);
  rec.set(NumField::rate, 0.02);
  ScoredObligor scored;
  score_obligor(rec, BookDefaults{}, ScoreSettings{}, scored);
  REQUIRE(scored.status == RowStatus::ok);
  const double dd = scored.measures.distance_to_default;

  PdCalibration cal;
  cal.method = CalibrationMethod::logistic;
  cal.status = CalibrationStatus::ok;
  cal.dd_min = -1.0;
  cal.dd_max = 8.0;
  cal.logistic = {
      .intercept = -1.5, .slope = -0.8, .intercept_se = 0.1, .slope_se = 0.05, .covariance = -0.004};
  // The logistic calibration 1 / (1 + exp(-(a + b DD))) and its delta-method interval on the linear
  // predictor, a + b DD -+ z se with se^2 = se_a^2 + DD^2 se_b^2 + 2 DD cov (docs/calibration.md;
  // from memory, the delta method for a linear predictor); z = 1.959963984540054 for 95%.
  const double eta = -1.5 - 0.8 * dd;
  const double se = std::sqrt(0.01 + dd * dd * 0.0025 + 2 * dd * -0.004);
  const auto logistic = [](double x) { return 1.0 / (1.0 + std::exp(-x)); };

  const GradeScale scale = default_grade_scale();
  const StoredObligor model = stored_obligor(rec, scored, scale, &cal, DrivingPd::model);
  CHECK(model.pd_calibrated == doctest::Approx(logistic(eta)).epsilon(1e-14));
  CHECK(model.pd_calibrated_lower == doctest::Approx(logistic(eta - 1.959963984540054 * se)).epsilon(1e-12));
  CHECK(model.pd_calibrated_upper == doctest::Approx(logistic(eta + 1.959963984540054 * se)).epsilon(1e-12));
  CHECK_FALSE(model.pd_calibrated_extrapolated);
  // The model PD drives: the grade of the one-year model PD, as without a calibration.
  CHECK(model.grade == stored_obligor(rec, scored, scale).grade);
  CHECK(std::isnan(stored_obligor(rec, scored, scale).pd_calibrated));

  const StoredObligor driven = stored_obligor(rec, scored, scale, &cal, DrivingPd::calibrated);
  CHECK(driven.grade == std::string(scale.label_of(logistic(eta))));
  CHECK(driven.grade != model.grade);  // this obligor's two PDs sit in different grades

  ScoredObligor bad;
  bad.status = RowStatus::invalid_input;
  CHECK(std::isnan(stored_obligor(rec, bad, scale, &cal, DrivingPd::calibrated).pd_calibrated));
}

TEST_CASE("record_book: the same book as of the same date is refused before an older store is upgraded") {
  firmcall::testing::TempDir dir;
  const std::string book = dir.file("book.yaml");
  {
    std::ofstream f(book);
    f << "as_of: 2026-11-06\nobligors:\n"
         "  - {id: ALD-01, name: Alderby Mills, market_cap: 100, equity_vol: 0.3, default_point: 50, rate: "
         "0.02}\n";
  }
  const std::string db = dir.file("h.sqlite");
  const Config config;
  RecordBookOptions opt{.store_path = db, .as_of = "", .tool_version = "test"};
  const RecordedRun first = record_book(book, config.score, config, opt);
  CHECK(first.run_id == 1);
  CHECK(first.replaced_run_ids.empty());
  // Made to look like a version 2 store (its version 3 mark taken away, then put back) to see that
  // a refused run does not upgrade it.
  const auto raw_sql = [&db](const char* sql) {
    sqlite3* raw = nullptr;
    REQUIRE(sqlite3_open(db.c_str(), &raw) == SQLITE_OK);
    CHECK(sqlite3_exec(raw, sql, nullptr, nullptr, nullptr) == SQLITE_OK);
    sqlite3_close(raw);
  };
  raw_sql(
      "CREATE TABLE kept AS SELECT * FROM firmcall_schema WHERE version = 3;"
      "DELETE FROM firmcall_schema WHERE version = 3");
  const std::string bytes = firmcall::testing::read_file(db);
  CHECK_THROWS_WITH_AS(record_book(book, config.score, config, opt), doctest::Contains("run 1 (recorded "),
                       SameBookRun);
  CHECK(firmcall::testing::read_file(db) == bytes);
  CHECK(RunStore(db, StoreOpen::read_only, 5.0).schema_version() == 2);
  raw_sql("INSERT INTO firmcall_schema SELECT * FROM kept; DROP TABLE kept");

  opt.as_of = "2026-11-07";
  CHECK(record_book(book, config.score, config, opt).run_id == 2);
  opt.as_of = "";
  opt.replace_run = true;
  const RecordedRun replaced = record_book(book, config.score, config, opt);
  CHECK(replaced.run_id == 3);
  CHECK(replaced.replaced_run_ids == std::vector<std::int64_t>{1});
  const RunStore store(db, StoreOpen::read_only, 5.0);
  CHECK(store.runs().size() == 2);
}

TEST_CASE("record_book: the stored run does not depend on threads or piece size") {
  firmcall::testing::TempDir dir;
  const std::string book = dir.file("book.csv");
  {
    std::ofstream f(book);
    f << "id,name,market_cap,equity_vol,default_point,rate\n";
    for (int i = 0; i < 40; ++i) {
      f << "OB-" << i << ",Obligor " << i << "," << 100 + i << "," << 0.2 + 0.01 * i << "," << 60 + i
        << ",0.02\n";
    }
    f << "OB-3,Repeated id,100,0.3,50,0.02\n";  // a duplicate id: stored as invalid
    f << "OB-41,Bad volatility,100,abc,50,0.02\n";
  }
  const Config config;
  std::vector<std::vector<StoredObligor>> runs;
  for (const auto& [threads, piece] :
       {std::pair{1U, std::size_t{1}}, std::pair{2U, std::size_t{3}}, std::pair{2U, std::size_t{8192}}}) {
    const std::string db = dir.file("h" + std::to_string(threads) + "_" + std::to_string(piece) + ".sqlite");
    RecordBookOptions opt{.store_path = db, .as_of = "2026-11-06", .tool_version = "test"};
    opt.threads = threads;
    opt.piece_obligors = piece;
    const RecordedRun r = record_book(book, config.score, config, opt);
    CHECK(r.obligors == 42);
    CHECK(r.scored == 40);  // every row but the duplicate and the unreadable volatility
    runs.push_back(RunStore(db, StoreOpen::read_only, 5.0).obligors(r.run_id));
  }
  for (std::size_t k = 1; k < runs.size(); ++k) {
    REQUIRE(runs[k].size() == runs[0].size());
    for (std::size_t i = 0; i < runs[0].size(); ++i) {
      const StoredObligor& a = runs[0][i];
      const StoredObligor& b = runs[k][i];
      CHECK(a.id == b.id);
      CHECK(a.status == b.status);
      CHECK(a.message == b.message);
      CHECK(a.fields_json == b.fields_json);
      CHECK(a.grade == b.grade);
      CHECK(a.has_measures == b.has_measures);
      if (a.has_measures && b.has_measures) {
        CHECK(a.measures.pd == b.measures.pd);
        CHECK(a.measures.distance_to_default == b.measures.distance_to_default);
      }
    }
  }
  CHECK(runs[0][40].status == RowStatus::invalid_input);
  CHECK(runs[0][41].status == RowStatus::invalid_input);
}
