// `firmcall validate --db STORE --defaults FILE`: outcomes built from the recorded weekly samples
// (samples/weekly) and a defaults file. The expected counts are recomputed here from the score
// command's own output, the as-of dates of the sample files and the rule of docs/validation.md,
// with the C library's timegm for the day count, not copied from the validation output.
#include <doctest/doctest.h>

#include <cstdio>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <map>

#include "test_util.hpp"

using firmcall::testing::run_firmcall;
using firmcall::testing::TempDir;

namespace {

// Days since 1970-01-01 of YYYY-MM-DD, by the C library (timegm).
long day_of(const std::string& date) {
  std::tm tm{};
  tm.tm_year = std::stoi(date.substr(0, 4)) - 1900;
  tm.tm_mon = std::stoi(date.substr(5, 2)) - 1;
  tm.tm_mday = std::stoi(date.substr(8, 2));
  return static_cast<long>(timegm(&tm) / 86400);
}

void write(const std::string& path, const std::string& text) {
  std::ofstream(path) << text;
}

// The number after "\"key\": " in a JSON text.
double json_number(const std::string& json, const std::string& key) {
  const std::size_t at = json.find("\"" + key + "\": ");
  REQUIRE(at != std::string::npos);
  return std::stod(json.substr(at + key.size() + 4));
}

}  // namespace

TEST_CASE("validate --defaults: every run's PDs against the defaults within the horizon") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  const std::map<int, std::string> as_of = {
      {1, "2026-11-06"}, {2, "2026-11-13"}, {3, "2026-11-20"}, {4, "2026-11-27"}};  // the sample files' as_of
  for (const auto& [w, date] : as_of) {
    const auto r = run_firmcall("score samples/weekly/week" + std::to_string(w) +
                                ".yaml --format csv --record --db '" + db + "'");
    REQUIRE(r.exit_code == 0);
  }
  // ALD-01 defaults after week 1 (left out later), BRK-02 369 days after week 1 (outside one year
  // of 365.25 days) but within a year of weeks 2-4, CIN-03 on week 4's as-of date (left out there),
  // NOP-99 is in no run.
  const std::map<std::string, std::string> defaults = {
      {"ALD-01", "2026-11-10"}, {"BRK-02", "2027-11-10"}, {"CIN-03", "2026-11-27"}, {"NOP-99", "2026-12-01"}};
  std::string text = "id,default_date,note\n";
  for (const auto& [id, date] : defaults) text += id + "," + date + ",x\n";
  const std::string dpath = dir.file("defaults.csv");
  write(dpath, text);

  std::size_t observations = 0, defaulted = 0;
  for (const auto& [w, date] : as_of) {
    const auto rows = firmcall::testing::split_simple_csv(
        run_firmcall("score samples/weekly/week" + std::to_string(w) + ".yaml --format csv").out);
    REQUIRE(rows.size() > 1);
    std::size_t id_at = 0, pd_at = 0;
    for (std::size_t j = 0; j < rows[0].size(); ++j) {
      if (rows[0][j] == "id") id_at = j;
      if (rows[0][j] == "pd") pd_at = j;
    }
    for (std::size_t i = 1; i < rows.size(); ++i) {
      if (rows[i][pd_at].empty()) continue;  // not scored
      const auto d = defaults.find(rows[i][id_at]);
      if (d != defaults.end()) {
        const long after = day_of(d->second) - day_of(date);
        if (after <= 0) continue;  // defaulted on or before the as-of date: left out
        defaulted += static_cast<double>(after) <= 365.25 ? 1 : 0;
      }
      ++observations;
    }
  }
  CHECK(defaulted == 1 + 3 + 3);  // by hand: ALD-01 once, BRK-02 weeks 2-4, CIN-03 weeks 1-3

  const auto r = run_firmcall("validate --db '" + db + "' --defaults '" + dpath + "' --format json");
  REQUIRE(r.exit_code == 0);
  CHECK(json_number(r.out, "observations") == static_cast<double>(observations));
  CHECK(json_number(r.out, "defaults") == static_cast<double>(defaulted));

  // A horizon of two years also takes BRK-02 in week 1.
  const auto two =
      run_firmcall("validate --db '" + db + "' --defaults '" + dpath + "' --horizon 2 --format json");
  REQUIRE(two.exit_code == 0);
  CHECK(json_number(two.out, "defaults") == static_cast<double>(defaulted + 1));
}

TEST_CASE("validate --defaults: a bad defaults file is refused naming file, line and field") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  REQUIRE(run_firmcall("score samples/weekly/week1.yaml --format csv --record --db '" + db + "'").exit_code ==
          0);
  const std::pair<std::string, std::string> cases[] = {
      {"id,default_date\nALD-01,2026-11-10\nBRK-02,2027-02-30\n",
       ":3: field 'default_date': expected a calendar date"},
      {"id,default_date\nALD-01,2026-11-10\nALD-01,2026-12-10\n", ":3: field 'id': appears twice"},
      {"id,date\nALD-01,2026-11-10\n", ":1: header: required column 'default_date' is missing"},
  };
  int k = 0;
  for (const auto& [text, message] : cases) {
    const std::string path = dir.file("bad" + std::to_string(++k) + ".csv");
    write(path, text);
    const std::string out = dir.file("out" + std::to_string(k) + ".json");
    const auto r = run_firmcall("validate --db '" + db + "' --defaults '" + path + "' -o '" + out + "'");
    CAPTURE(r.err);
    CHECK(r.exit_code == 2);
    CHECK(r.err.find(path + message) != std::string::npos);
    CHECK(!std::filesystem::exists(out));
  }
}

TEST_CASE("report --validate-defaults: the validation section from the recorded runs") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  for (int w = 1; w <= 4; ++w) {
    REQUIRE(run_firmcall("score samples/weekly/week" + std::to_string(w) +
                         ".yaml --format csv --record --db '" + db + "'")
                .exit_code == 0);
  }
  const std::string dpath = dir.file("defaults.csv");
  write(dpath, "id,default_date\nALD-01,2026-11-10\nBRK-02,2027-11-10\nCIN-03,2026-11-27\n");
  // The page's figures are validate's on the same store and defaults (the same library call);
  // validate itself is checked against scikit-learn and scipy in validate_references.
  const auto v = run_firmcall("validate --db '" + db + "' --defaults '" + dpath + "' --format json");
  REQUIRE(v.exit_code == 0);
  const std::string page = dir.file("page.html");
  const auto r = run_firmcall("-q report samples/weekly/week4.yaml --db '" + db + "' --validate-defaults '" +
                              dpath + "' --html '" + page + "'");
  CAPTURE(r.err);
  REQUIRE(r.exit_code <= 1);
  std::ifstream in(page);
  const std::string html((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  CHECK(html.find("The PDs are those recorded in the history store") != std::string::npos);
  char auc[32];
  std::snprintf(auc, sizeof auc, "%.4f", json_number(v.out, "auc"));
  CHECK(html.find(std::string(">") + auc + "<") != std::string::npos);
  const std::string obs =
      std::to_string(static_cast<long>(json_number(v.out, "observations"))) + " observations";
  CHECK(html.find(obs) != std::string::npos);

  // Without --db, or with --validate as well: refused before anything is written.
  const std::string none = dir.file("none.html");
  const auto no_db = run_firmcall("report samples/weekly/week4.yaml --validate-defaults '" + dpath +
                                  "' --html '" + none + "'");
  CHECK(no_db.exit_code == 2);
  CHECK(no_db.err.find("--validate-defaults: builds the validation section from the history store") !=
        std::string::npos);
  const auto both = run_firmcall("report samples/weekly/week4.yaml --db '" + db + "' --validate-defaults '" +
                                 dpath + "' --validate samples/outcomes.csv --html '" + none + "'");
  CHECK(both.exit_code == 2);
  CHECK(!std::filesystem::exists(none));
}
