// End-to-end tests of `firmcall calibrate` and `score --pd-calibration`.
#include <doctest/doctest.h>

#include <cmath>
#include <filesystem>
#include <string>

#include "test_util.hpp"

using namespace firmcall::testing;

namespace {

// The number after "key": in a JSON text.
double json_number(const std::string& json, const std::string& key) {
  const auto at = json.find("\"" + key + "\": ");
  REQUIRE(at != std::string::npos);
  return std::stod(json.substr(at + key.size() + 4));
}

}  // namespace

TEST_CASE("calibrate: logistic JSON keys and a one-year PD note") {
  const RunResult r = run_firmcall("calibrate samples/default_history.csv --method logistic --format json");
  REQUIRE(r.exit_code == 0);
  for (const char* key :
       {"\"method\": \"logistic\"", "\"observations\": ", "\"defaults\": ", "\"intercept\": ", "\"slope\": ",
        "\"intercept_se\": ", "\"slope_se\": ", "\"log_likelihood\": ", "one-year calibrated PD"}) {
    CAPTURE(key);
    CHECK(r.out.find(key) != std::string::npos);
  }
  CHECK(json_number(r.out, "slope") < 0.0);
  const RunResult t = run_firmcall("calibrate samples/default_history.csv --method isotonic");
  REQUIRE(t.exit_code == 0);
  CHECK(t.out.find("one-year calibrated PD") != std::string::npos);
  const RunResult b =
      run_firmcall("calibrate samples/default_history.csv --method binned --bins 5 --format csv");
  REQUIRE(b.exit_code == 0);
  CHECK(split_simple_csv(b.out).size() == 6);  // header and five bands
}

TEST_CASE("calibrate: a bad history names file, line and field, and writes nothing") {
  TempDir dir;
  const std::string bad =
      dir.write("h.csv", "id,as_of,distance_to_default,defaulted\nA,2021-12-31,1,1\nB,2021-12-31,2,yes\n");
  const std::string saved = dir.file("cal.yaml");
  const RunResult r = run_firmcall("calibrate '" + bad + "' --save '" + saved + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(bad + ":3: field 'defaulted': expected 0 or 1, got 'yes'") != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(saved));
}

TEST_CASE("calibrate: book fields, a row that cannot be scored refuses the history") {
  TempDir dir;
  const std::string saved = dir.file("cal.yaml");
  // The sample of book fields calibrates (exit 0) and says that its DDs were computed.
  const RunResult ok = run_firmcall("calibrate samples/default_history_book.csv --save '" + saved + "'");
  CHECK(ok.exit_code == 0);
  CHECK(ok.err.find("note: no column 'distance_to_default'") != std::string::npos);
  CHECK(std::filesystem::exists(saved));
  std::filesystem::remove(saved);
  // equity_vol 35 is a percentage typed by mistake (score refuses it too: settings max_equity_vol 10).
  const std::string bad = dir.write("h.csv",
                                    "id,as_of,market_cap,equity_vol,default_point,rate,defaulted\n"
                                    "A,2021-12-31,1250,0.32,850,0.03,1\nB,2021-12-31,310,35,400,0.03,0\n");
  const RunResult r =
      run_firmcall("calibrate '" + bad + "' --save '" + saved + "' -o '" + dir.file("o.txt") + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(bad + ":3: obligor 'B': field 'equity_vol': ") != std::string::npos);
  CHECK(r.err.find("a calibration uses every observation") != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(saved));
  CHECK_FALSE(std::filesystem::exists(dir.file("o.txt")));
}

TEST_CASE("calibrate: --rate and the other scoring options apply to a history of book fields only") {
  TempDir dir;
  const std::string rows[] = {"A,2021-12-31,1250,0.32,850", "B,2021-12-31,310,0.30,400",
                              "C,2021-12-31,900,0.45,600",  "D,2021-12-31,200,0.60,300",
                              "E,2021-12-31,1500,0.25,500", "F,2021-12-31,700,0.40,650",
                              "G,2021-12-31,400,0.50,500"};
  const char* defaulted[] = {"1", "0", "0", "1", "0", "0", "1"};
  std::string with_rate = "id,as_of,market_cap,equity_vol,default_point,rate,defaulted\n";
  std::string without_rate = "id,as_of,market_cap,equity_vol,default_point,defaulted\n";
  for (std::size_t i = 0; i < 7; ++i) {
    with_rate += rows[i] + ",0.03," + defaulted[i] + "\n";
    without_rate += rows[i] + "," + defaulted[i] + "\n";
  }
  // --rate 0.03 on every row is the same history as a rate column of 0.03 (score's precedence).
  const RunResult a = run_firmcall("calibrate '" + dir.write("a.csv", with_rate) + "' --format csv");
  const RunResult b =
      run_firmcall("calibrate '" + dir.write("b.csv", without_rate) + "' --rate 0.03 --format csv");
  REQUIRE(a.exit_code == 0);
  CHECK(b.exit_code == 0);
  CHECK(a.out == b.out);
  const RunResult c = run_firmcall("calibrate samples/default_history.csv --rate 0.03");
  CHECK(c.exit_code == 2);
  CHECK(c.err.find("apply only to a history of book fields") != std::string::npos);
}

TEST_CASE("score --pd-calibration: the calibrated PD is the logistic of the fitted line at each DD") {
  TempDir dir;
  const std::string cal = dir.file("cal.yaml");
  const RunResult fit =
      run_firmcall("-q calibrate samples/default_history.csv --format json --save '" + cal + "'");
  REQUIRE(fit.exit_code == 0);
  const double a = json_number(fit.out, "intercept"), b = json_number(fit.out, "slope");
  const RunResult r =
      run_firmcall("-q score samples/demo_book.csv --format csv --pd-calibration '" + cal + "'");
  REQUIRE(r.exit_code <= 1);
  const auto rows = split_simple_csv(r.out);
  REQUIRE(rows.size() > 2);
  const auto& head = rows[0];
  REQUIRE(head.size() >= 5);
  const std::size_t cal_col = head.size() - 5;  // the calibrated columns, then driving_pd, end the row
  CHECK(head[cal_col] == "pd_calibrated");
  CHECK(head[cal_col + 3] == "pd_calibrated_extrapolated");
  CHECK(head.back() == "driving_pd");
  std::size_t dd_col = 0;
  while (head[dd_col] != "distance_to_default") ++dd_col;
  int checked = 0;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const auto& row = rows[i];
    if (row.size() != head.size() || row[dd_col].empty()) continue;
    const double dd = std::stod(row[dd_col]);
    const double pd = std::stod(row[cal_col]);
    // The logistic link 1 / (1 + exp(-(a + b DD))) (textbook logistic regression).
    CHECK(pd == doctest::Approx(1.0 / (1.0 + std::exp(-(a + b * dd)))).epsilon(1e-13));
    CHECK(std::stod(row[cal_col + 1]) <= pd);
    CHECK(std::stod(row[cal_col + 2]) >= pd);
    CHECK(row.back() == "calibrated");  // the default driving PD with a calibration
    ++checked;
  }
  CHECK(checked > 0);
  const RunResult t = run_firmcall("-q score samples/demo_book.yaml --pd-calibration '" + cal + "'");
  CHECK(t.out.find("calibrated one-year PD") != std::string::npos);
  const RunResult j =
      run_firmcall("-q score samples/demo_book.yaml --format json --pd-calibration '" + cal + "'");
  CHECK(j.out.find("\"pd_calibrated_extrapolated\": ") != std::string::npos);
  CHECK(j.out.find("\"driving_pd\": \"calibrated\"") != std::string::npos);
  CHECK(j.out.find("\"pd_calibration_method\": \"logistic\"") != std::string::npos);
  const RunResult m = run_firmcall(
      "-q score samples/demo_book.csv --format csv --driving-pd model --pd-calibration '" + cal + "'");
  REQUIRE(m.exit_code <= 1);
  const auto model_rows = split_simple_csv(m.out);
  REQUIRE(model_rows.size() > 1);
  CHECK(model_rows[1].back() == "model");
  const RunResult term =
      run_firmcall("-q score samples/demo_book.yaml --horizons 1,2 --pd-calibration '" + cal + "'");
  CHECK(term.exit_code == 2);
  CHECK(term.err.find("--pd-calibration: not available with term structures") != std::string::npos);
}
