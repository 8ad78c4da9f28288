// Tests of term-structure runs over a book (term_run.hpp): the horizon list, the option rules,
// the long CSV and JSON rows, the table, bad obligors, and agreement with the score engine.
#include <doctest/doctest.h>

#include <optional>
#include <sstream>
#include <string>

#include "csv_table.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {

// Three good obligors, one with a bad field, one whose equity is below what a barrier at the
// default point allows (no first-passage solution; see first_passage.hpp).
const char* kBook = R"(book: term test
defaults: {rate: 0.03, horizon: 1.0}
obligors:
  - {id: A-1, name: "Alpha, Ltd", market_cap: 400, equity_vol: 0.45, default_point: 700, lgd: 0.4}
  - {id: B-2, name: Beta, market_cap: 8000, equity_vol: 0.2, short_term_debt: 2000, long_term_debt: 9000, drift: 0.06}
  - {id: C-3, name: Gamma, market_cap: 30, equity_vol: 0.3, default_point: 1000, rate: 0.05}
  - {id: D-4, name: Delta, market_cap: 500, equity_vol: 35, default_point: 300}
  - {id: E-5, name: Epsilon, market_cap: 1200, equity_vol: 0.6, default_point: 2500, horizon: 2}
)";

std::string run_text(const std::string& yaml, TermBookOptions run, OutputFormat format, unsigned threads = 1,
                     ScoreSummary* summary = nullptr) {
  const Book book = parse_yaml_book(yaml, "book.yaml");
  run.format = format;
  run.threads = threads;
  std::string out;
  const ScoreSummary s =
      score_term_structure(book, ScoreSettings{}, run, [&](std::string_view t) { out += t; });
  if (summary) *summary = s;
  return out;
}

TermBookOptions both_models(const std::string& horizons) {
  TermOptionText c;
  c.horizons = horizons;
  c.model = "both";
  return term_book_options(TermSettings{}, c);
}

}  // namespace

TEST_CASE("--horizons: a list of increasing years, or exit 2 with the reason") {
  CHECK(parse_horizons("0.5,1,2,3,5,7,10") == std::vector<double>{0.5, 1, 2, 3, 5, 7, 10});
  CHECK(parse_horizons(" 0.25 , 1e1 ") == std::vector<double>{0.25, 10});
  const std::string tail = " (a list of years such as 0.5,1,2,3,5,7,10)";
  CHECK_THROWS_WITH_AS(parse_horizons(""), ("field 'horizons': empty list" + tail).c_str(), InputError);
  CHECK_THROWS_WITH_AS(parse_horizons("1,,2"), ("field 'horizons': empty item in '1,,2'" + tail).c_str(),
                       InputError);
  CHECK_THROWS_WITH_AS(parse_horizons("1,two"),
                       ("field 'horizons': expected a number of years, got 'two'" + tail).c_str(),
                       InputError);
  CHECK_THROWS_WITH_AS(parse_horizons("1,5y"),
                       ("field 'horizons': expected a number of years, got '5y'" + tail).c_str(), InputError);
  CHECK_THROWS_WITH_AS(parse_horizons("0,1"),
                       ("field 'horizons': each horizon must lie in (0, 100] years, got '0'" + tail).c_str(),
                       InputError);
  CHECK_THROWS_WITH_AS(
      parse_horizons("1,150"),
      ("field 'horizons': each horizon must lie in (0, 100] years, got '150'" + tail).c_str(), InputError);
  CHECK_THROWS_WITH_AS(
      parse_horizons("1,5,3"),
      ("field 'horizons': horizons must be strictly increasing, got '3' after '5'" + tail).c_str(),
      InputError);
  CHECK_THROWS_WITH_AS(
      parse_horizons("2,2"),
      ("field 'horizons': horizons must be strictly increasing, got '2' after '2'" + tail).c_str(),
      InputError);
  CHECK_THROWS_WITH_AS(parse_horizons("nan"),
                       ("field 'horizons': expected a number of years, got 'nan'" + tail).c_str(),
                       InputError);
  std::string many;
  for (int i = 1; i <= 31; ++i) {
    if (i > 1) many.push_back(',');
    many += std::to_string(i);
  }
  CHECK_THROWS_WITH_AS(parse_horizons(many), ("field 'horizons': at most 30 horizons" + tail).c_str(),
                       InputError);
}

TEST_CASE("term options: errors name the field and what it needs, for the caller to word") {
  const auto error_of = [](const TermOptionText& c) -> std::optional<OptionError> {
    try {
      term_book_options({}, c);
    } catch (const OptionError& e) {
      return e;
    }
    return std::nullopt;
  };
  TermOptionText c;
  c.barrier_growth = 0.01;
  auto e = error_of(c);
  REQUIRE(e);
  CHECK(e->field() == "barrier_growth");
  CHECK(e->need() == OptionNeed::term_structure);
  c.horizons = "1,2";
  e = error_of(c);
  REQUIRE(e);
  CHECK(e->field() == "barrier_growth");
  CHECK(e->need() == OptionNeed::first_passage);
  c = {};
  c.horizons = "2,1";
  e = error_of(c);
  REQUIRE(e);
  CHECK(e->field() == "horizons");
  CHECK(e->need() == OptionNeed::none);
  CHECK(e->reason() ==
        "horizons must be strictly increasing, got '1' after '2' (a list of years such as "
        "0.5,1,2,3,5,7,10)");
}

TEST_CASE("term options: what applies where") {
  TermOptionText c;
  CHECK_FALSE(wants_term_structure(c));
  c.model = "merton";
  CHECK_FALSE(wants_term_structure(c));  // plain scoring
  c.calibration = "per-horizon";
  CHECK_THROWS_WITH_AS(
      term_book_options({}, c),
      "field 'calibration': applies to term structures; give horizons or a model other than merton",
      OptionError);
  c = {};
  c.horizons = "1,2";
  c.barrier_ratio = 0.8;
  CHECK_THROWS_WITH_AS(
      term_book_options({}, c),
      "field 'barrier_ratio': applies to the first-passage model (model first-passage or both)", OptionError);
  c.model = "black-cox";
  CHECK_THROWS_WITH_AS(term_book_options({}, c),
                       "field 'model': expected merton, first-passage or both, got 'black-cox'", OptionError);
  c.model = "first-passage";
  c.barrier_ratio = -1;
  CHECK_THROWS_AS(term_book_options({}, c), InputError);
  c.barrier_ratio = 0.8;
  c.barrier_growth = 0.02;
  c.calibration = "per-horizon";
  const TermBookOptions run = term_book_options({}, c);
  CHECK(run.models == std::vector<TermModel>{TermModel::first_passage});
  CHECK(run.barrier.default_point_ratio == 0.8);
  CHECK(run.barrier.growth_rate_cc == 0.02);
  CHECK(run.calibration == Calibration::per_horizon);
  CHECK(run.horizons == std::vector<double>{1, 2});
  // Settings fill what the command line leaves out.
  TermSettings settings;
  settings.barrier_ratio = 0.7;
  settings.calibration = Calibration::per_horizon;
  c = {};
  c.model = "first-passage";
  const TermBookOptions from_settings = term_book_options(settings, c);
  CHECK(from_settings.barrier.default_point_ratio == 0.7);
  CHECK(from_settings.calibration == Calibration::per_horizon);
  CHECK(from_settings.horizons.empty());
}

TEST_CASE("CSV rows: one per obligor, model and horizon, bad obligors named, never NaN or infinity") {
  ScoreSummary sum;
  const std::string text = run_text(kBook, both_models("0.5,1,2,5,10"), OutputFormat::csv, 1, &sum);
  const testing::CsvTable csv = testing::parse_csv_table(text);
  std::vector<std::string> header(term_columns().begin(), term_columns().end());
  CHECK(csv.header == header);
  REQUIRE(csv.rows.size() == 5 * 2 * 5);
  CHECK(text.find("nan") == std::string::npos);
  CHECK(text.find("inf") == std::string::npos);
  CHECK(sum.total == 5);
  CHECK(sum.scored == 3);
  CHECK(sum.invalid == 1);
  CHECK(sum.not_converged == 1);
  REQUIRE(sum.problems.size() == 2);
  CHECK(sum.problems[0] ==
        "book.yaml:6: obligor 'C-3': first-passage calibration found no solution: equity value 30 is below "
        "barrier - default point x e^(-rT) = 48.7706 at T = 1, about the least equity is worth this close to "
        "the barrier (a lower barrier ratio may help)");
  CHECK(sum.problems[1].rfind("book.yaml:7: obligor 'D-4': field 'equity_vol': must be an annualised decimal",
                              0) == 0);
  for (std::size_t r = 0; r < csv.rows.size(); ++r) {
    const std::string id = csv.cell(r, "id");
    const std::string model = csv.cell(r, "model");
    CAPTURE(id);
    CAPTURE(model);
    if (id == "D-4") {
      CHECK(csv.cell(r, "status") == "invalid_input");
      CHECK(csv.cell(r, "pd").empty());
      CHECK(csv.cell(r, "iterations").empty());
      CHECK(csv.cell(r, "message").rfind("line 7: field 'equity_vol'", 0) == 0);
    } else if (id == "C-3" && model == "first-passage") {
      CHECK(csv.cell(r, "status") == "not_converged");
      CHECK(csv.cell(r, "pd").empty());
      CHECK_FALSE(csv.cell(r, "iterations").empty());
      CHECK(csv.cell(r, "barrier") == "1000");
    } else {
      CHECK(csv.cell(r, "status") == "ok");
      CHECK(csv.cell(r, "message").empty());
      CHECK(csv.number(r, "pd") >= 0.0);
      CHECK(csv.cell(r, "barrier").empty() == (model == "merton"));
      CHECK(csv.cell(r, "lgd").empty() == (model == "merton"));
    }
  }
  // E-5 calibrates at its own horizon of 2 years; A-1's first-passage spread uses its lgd 0.4.
  CHECK(csv.number(40, "calibration_horizon") == 2.0);
  CHECK(csv.cell(40, "id") == "E-5");
  CHECK(csv.cell(5, "lgd") == "0.4");
  CHECK(csv.cell(1, "name") == "Alpha, Ltd");
}

TEST_CASE("threads change nothing, and JSON carries the same numbers with null for the missing") {
  const TermBookOptions run = both_models("1,3,7");
  const std::string one = run_text(kBook, run, OutputFormat::csv, 1);
  CHECK(run_text(kBook, run, OutputFormat::csv, 4) == one);
  const std::string json = run_text(kBook, run, OutputFormat::json, 3);
  CHECK(json == run_text(kBook, run, OutputFormat::json, 1));
  CHECK(json.rfind(
            "{\n  \"run\": {\"input\": \"book.yaml\", \"measure\": \"physical\", \"models\": [\"merton\", "
            "\"first-passage\"], \"horizons\": [1, 3, 7], \"calibration\": \"once\"",
            0) == 0);
  CHECK(json.find("\"pd\": null") != std::string::npos);
  CHECK(json.find("nan") == std::string::npos);
  CHECK(json.find(
            "\"summary\": {\"obligors\": 5, \"scored\": 3, \"invalid_input\": 1, \"not_converged\": 1}") !=
        std::string::npos);
  // Every CSV number appears in the JSON with the same 17 digits (A-1, merton, 3 years).
  const testing::CsvTable csv = testing::parse_csv_table(one);
  CHECK(json.find("\"pd\": " + csv.cell(1, "pd") + ",") != std::string::npos);
  CHECK(json.find("\"spread_bp\": " + csv.cell(4, "spread_bp") + ",") != std::string::npos);
}

TEST_CASE("the table: a compact curve per obligor, reasons for failed rows, 120 columns") {
  ScoreSummary sum;
  const std::string text = run_text(kBook, both_models("0.5,1,2,3,5,7,10"), OutputFormat::table, 1, &sum);
  std::istringstream in(text);
  std::string line;
  int lines = 0;
  while (std::getline(in, line)) {
    CHECK(line.size() <= 120);
    ++lines;
  }
  CHECK(lines > 20);
  CHECK(text.find("horizon (years)                           0.5         1         2") != std::string::npos);
  CHECK(text.find("  merton          cumulative PD %") != std::string::npos);
  CHECK(text.find("  first-passage   not_converged (reason below)") != std::string::npos);
  CHECK(text.find("term structures of 3 of 5 obligors; 1 invalid input, 1 not converged") !=
        std::string::npos);
  CHECK(text.find("  book.yaml:6: obligor 'C-3': first-passage calibration found no solution") !=
        std::string::npos);
  CHECK(text.find("Black-Cox assumptions; not a credit decision on their own.") != std::string::npos);
  // More horizons than fit on a line: blocks of 8 with their own horizon line.
  const std::string wide = run_text(kBook, both_models("1,2,3,4,5,6,7,8,9,10"), OutputFormat::table);
  CHECK(wide.find("  horizon (years)                           9        10\n") != std::string::npos);
  std::istringstream win(wide);
  while (std::getline(win, line)) CHECK(line.size() <= 120);
}

TEST_CASE("re-solving at the calibration horizon reproduces the score engine's numbers") {
  // Identity: with the horizon list equal to each obligor's own horizon (1 year here), the merton
  // rows are the score's results, digit for digit, whichever calibration is asked for.
  const char* book = R"(defaults: {rate: 0.03, horizon: 1.0}
obligors:
  - {id: A-1, market_cap: 400, equity_vol: 0.45, default_point: 700}
  - {id: B-2, market_cap: 8000, equity_vol: 0.2, short_term_debt: 2000, long_term_debt: 9000, drift: 0.06}
  - {id: F-6, market_cap: 90, equity_vol: 1.3, default_point: 2500, rate: -0.01}
)";
  std::string scored;
  ScoreBookOptions srun;
  srun.format = OutputFormat::csv;
  score_book(parse_yaml_book(book, "b.yaml"), ScoreSettings{}, srun,
             [&](std::string_view t) { scored += t; });
  const testing::CsvTable score = testing::parse_csv_table(scored);
  for (const char* cal : {"once", "per-horizon"}) {
    TermOptionText c;
    c.horizons = "1";
    c.calibration = cal;
    const testing::CsvTable term =
        testing::parse_csv_table(run_text(book, term_book_options({}, c), OutputFormat::csv));
    REQUIRE(term.rows.size() == score.rows.size());
    for (std::size_t r = 0; r < term.rows.size(); ++r) {
      for (const char* col :
           {"id", "status", "equity_value", "default_point", "asset_value", "asset_vol",
            "distance_to_default", "pd", "pd_risk_neutral", "spread_bp", "iterations", "residual"}) {
        CAPTURE(cal);
        CAPTURE(col);
        CHECK(term.cell(r, col) == score.cell(r, col));
      }
    }
  }
}
