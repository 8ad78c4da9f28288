// End-to-end tests of `firmcall history` (src/cli/cmd_history.cpp): the built binary run on the
// sample files in samples/ (written by tools/make_history.cpp) and on small broken files.
#include <sys/wait.h>
#include <unistd.h>

#include <doctest/doctest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/csv.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSamples = std::string(FIRMCALL_SOURCE_DIR) + "/samples/";

struct CliRun {
  int code = -1;
  std::string out;
  std::string err;
};

fs::path scratch_dir() {
  static const fs::path dir = [] {
    fs::path d = fs::temp_directory_path() / ("firmcall_history_cli_" + std::to_string(::getpid()));
    fs::create_directories(d);
    return d;
  }();
  return dir;
}

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

void write(const fs::path& p, const std::string& text) {
  std::ofstream(p, std::ios::binary) << text;
}

CliRun run_cli(const std::string& args) {
  const fs::path out = scratch_dir() / "stdout.txt";
  const fs::path err = scratch_dir() / "stderr.txt";
  const std::string cmd = std::string("'") + FIRMCALL_BINARY + "' " + args + " >'" + out.string() + "' 2>'" +
                          err.string() + "' </dev/null";
  const int status = std::system(cmd.c_str());
  CliRun r;
  r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = slurp(out);
  r.err = slurp(err);
  return r;
}

std::vector<std::map<std::string, std::string>> parse_csv(const std::string& text) {
  std::vector<std::map<std::string, std::string>> rows;
  std::vector<std::string_view> fields;
  std::string scratch;
  bool open = false;
  std::string_view rest(text);
  std::size_t used = firmcall::split_csv_record(rest, fields, scratch, open);
  const std::vector<std::string> header(fields.begin(), fields.end());
  rest.remove_prefix(used);
  while (!rest.empty()) {
    used = firmcall::split_csv_record(rest, fields, scratch, open);
    rest.remove_prefix(used);
    REQUIRE(fields.size() == header.size());
    auto& row = rows.emplace_back();
    for (std::size_t i = 0; i < header.size(); ++i) row[header[i]] = std::string(fields[i]);
  }
  return rows;
}

double as_double(const std::string& cell) {
  double v = 0.0;
  REQUIRE(firmcall::parse_number(cell, v));
  return v;
}

std::string sample_args(const std::string& prices = "history_prices.csv") {
  return "history '" + kSamples + "history_book.yaml' '" + kSamples + prices + "' --balance-sheets '" +
         kSamples + "history_balance_sheets.csv'";
}

}  // namespace

TEST_CASE("history command: the sample recovers the simulated asset volatilities") {
  // Simulated truth: the asset volatilities tools/make_history.cpp draws the sample with.
  // Tolerance: 4 standard errors as the mle reports them (their calibration is checked by the
  // coverage test in history_test.cpp); the iterative estimate is held to the same band.
  const std::map<std::string, double> truth = {{"HRN-01", 0.17}, {"KIL-02", 0.26}, {"MRS-03", 0.22},
                                               {"OSP-04", 0.41}, {"PLV-05", 0.19}, {"TRN-06", 0.31}};
  const CliRun mle = run_cli(sample_args() + " --method mle --format csv");
  REQUIRE(mle.code == 0);
  const CliRun it = run_cli(sample_args() + " -m iterative -f csv");
  REQUIRE(it.code == 0);
  const auto mle_rows = parse_csv(mle.out);
  const auto it_rows = parse_csv(it.out);
  REQUIRE(mle_rows.size() == 6);
  REQUIRE(it_rows.size() == 6);
  for (std::size_t i = 0; i < 6; ++i) {
    const std::string id = mle_rows[i].at("id");
    CAPTURE(id);
    CHECK(mle_rows[i].at("status") == "ok");
    CHECK(it_rows[i].at("status") == "ok");
    CHECK(mle_rows[i].at("observations") == "256");
    CHECK(mle_rows[i].at("as_of") == "2026-11-30");
    const double se = as_double(mle_rows[i].at("asset_vol_se"));
    const double sv_mle = as_double(mle_rows[i].at("asset_vol"));
    const double sv_it = as_double(it_rows[i].at("asset_vol"));
    MESSAGE(id, ": true sV ", truth.at(id), ", mle ", sv_mle, " (SE ", se, "), iterative ", sv_it);
    CHECK(std::fabs(sv_mle - truth.at(id)) < 4.0 * se);
    CHECK(std::fabs(sv_it - truth.at(id)) < 4.0 * se);
    CHECK(as_double(mle_rows[i].at("asset_vol_lo")) < sv_mle);
  }
  // MRS-03's debt grows through the year; its last default point is the last sheet's
  // 1450 + 0.5 x 2050 = 2475 (samples/history_balance_sheets.csv).
  CHECK(as_double(mle_rows[2].at("default_point")) == 2475.0);
}

TEST_CASE("history command: the flawed sample fails only the flawed obligors (exit 1)") {
  const CliRun r = run_cli(sample_args("history_bad_prices.csv") + " -f csv");
  CHECK(r.code == 1);
  const auto rows = parse_csv(r.out);
  REQUIRE(rows.size() == 6);
  const std::map<std::string, std::string> expected_status = {{"HRN-01", "ok"}, {"KIL-02", "invalid_input"},
                                                              {"MRS-03", "ok"}, {"OSP-04", "invalid_input"},
                                                              {"PLV-05", "ok"}, {"TRN-06", "invalid_input"}};
  for (const auto& row : rows) CHECK(row.at("status") == expected_status.at(row.at("id")));
  const std::string bad = kSamples + "history_bad_prices.csv";
  CHECK(r.err.find(bad + ":509: obligor 'KIL-02': field 'date': 2026-04-28 appears twice (also line 508)") !=
        std::string::npos);
  CHECK(r.err.find(bad + ":756: obligor 'OSP-04': field 'close': must be positive, got '-") !=
        std::string::npos);
  CHECK(r.err.find(bad +
                   ": obligor 'TRN-06': 60 observations, at least 120 needed (history.min_observations)") !=
        std::string::npos);
  CHECK(r.err.find(bad + ":209: obligor 'MRS-03': note: rows are not in date order: sorted by date") !=
        std::string::npos);
  CHECK(r.err.find("obligor 'PLV-05': note: 5 trading days missing") != std::string::npos);
  CHECK(rows[4].at("missing_days") == "5");
  CHECK(r.err.find("estimated 3 of 6 obligors (3 invalid input, 0 not converged)") != std::string::npos);
  // --quiet: nothing on stderr, same exit code.
  const CliRun q = run_cli("--quiet " + sample_args("history_bad_prices.csv") + " -f csv");
  CHECK(q.code == 1);
  CHECK(q.err.empty());
}

TEST_CASE("history command: file-level problems exit 2 naming file and line, and write nothing") {
  const fs::path out = scratch_dir() / "never.csv";
  fs::remove(out);
  const std::string book = "'" + kSamples + "history_book.yaml'";
  CliRun r = run_cli("history " + book + " '" + (scratch_dir() / "absent.csv").string() + "' -o '" +
                     out.string() + "'");
  CHECK(r.code == 2);
  CHECK(r.err.find("cannot open file '") != std::string::npos);
  CHECK_FALSE(fs::exists(out));

  const fs::path header = scratch_dir() / "no_date.csv";
  write(header, "day,id,market_cap\n2026-01-02,HRN-01,5\n");
  r = run_cli("history " + book + " '" + header.string() + "' -o '" + out.string() + "'");
  CHECK(r.code == 2);
  CHECK(r.err == "firmcall: error: " + header.string() + ":1: header: required column 'date' is missing\n");
  CHECK_FALSE(fs::exists(out));

  const fs::path no_id = scratch_dir() / "no_id.csv";
  write(no_id, "date,id,market_cap\n2026-01-02,HRN-01,5\n2026-01-05,,6\n");
  r = run_cli("history " + book + " '" + no_id.string() + "'");
  CHECK(r.code == 2);
  CHECK(r.err.find(no_id.string() + ":3: field 'id': missing (every row needs an obligor id)") !=
        std::string::npos);

  const fs::path sheets = scratch_dir() / "sheets.csv";
  write(sheets, "id,as_of,debt\nHRN-01,2026-01-02,5\n");
  r = run_cli("history " + book + " '" + kSamples + "history_prices.csv' -b '" + sheets.string() + "'");
  CHECK(r.code == 2);
  CHECK(r.err.find(sheets.string() + ":1: header: required columns 'short_term_debt' and 'long_term_debt'") !=
        std::string::npos);

  CHECK(run_cli(sample_args() + " --method newton").code == 2);
  CHECK(run_cli(sample_args() + " --score --method mle").code == 2);
}

TEST_CASE("history command: --series writes the daily series, --score the scoring columns") {
  const fs::path series = scratch_dir() / "series.csv";
  fs::remove(series);
  const CliRun r = run_cli(sample_args() + " -m naive -f json --series '" + series.string() + "'");
  REQUIRE(r.code == 0);
  CHECK(r.out.rfind("{\n  \"run\": {\"book\": ", 0) == 0);
  CHECK(r.out.find("\"method\": \"naive\"") != std::string::npos);
  const auto daily = parse_csv(slurp(series));
  CHECK(daily.size() == 6 * 256);
  CHECK(daily.front().at("date") == "2025-12-01");

  const CliRun s = run_cli(sample_args() + " --score --vol-estimator ewma -f csv");
  REQUIRE(s.code == 0);
  std::string header;
  for (auto c : firmcall::score_columns()) {
    if (!header.empty()) header += ',';
    header += c;
  }
  CHECK(s.out.substr(0, s.out.find('\n')) == header);
  const auto rows = parse_csv(s.out);
  REQUIRE(rows.size() == 6);
  for (const auto& row : rows) CHECK(row.at("status") == "ok");
}

namespace {

// DD and PD of every ok row of a history CSV recomputed by scipy (Debian's /usr/bin/python3 with
// python3-scipy): mu_used = r (risk-neutral) or r + clip((1 - w)(mu - r), -cap, cap),
// DD = (ln(V/D) + (mu_used - sV^2/2) T) / (sV sqrt T), PD = scipy.stats.norm.sf(DD).
// Returns "id dd pd" lines with 17 significant digits.
std::string scipy_dd_pd(const fs::path& csv, bool risk_neutral, double shrinkage, double cap) {
  const fs::path script = scratch_dir() / "dd_pd.py";
  write(script,
        "import csv, math, sys\n"
        "from scipy.stats import norm\n"
        "rn, w, cap = sys.argv[2] == 'rn', float(sys.argv[3]), float(sys.argv[4])\n"
        "for row in csv.DictReader(open(sys.argv[1])):\n"
        "    if row['status'] != 'ok': continue\n"
        "    r, mu = float(row['rate']), float(row['drift'])\n"
        "    used = r if rn else r + min(max((1 - w) * (mu - r), -cap), cap)\n"
        "    sv, t = float(row['asset_vol']), float(row['horizon'])\n"
        "    v, d = float(row['asset_value']), float(row['default_point'])\n"
        "    dd = (math.log(v / d) + (used - sv * sv / 2) * t) / (sv * math.sqrt(t))\n"
        "    print(row['id'], repr(used), repr(dd), repr(norm.sf(dd)))\n");
  const fs::path out = scratch_dir() / "dd_pd.txt";
  const std::string cmd = "/usr/bin/python3 '" + script.string() + "' '" + csv.string() + "' " +
                          (risk_neutral ? "rn" : "ph") + " " + std::to_string(shrinkage) + " " +
                          std::to_string(cap) + " >'" + out.string() + "'";
  REQUIRE(std::system(cmd.c_str()) == 0);
  return slurp(out);
}

}  // namespace

TEST_CASE("history command: --measure and the drift rule, DD and PD against scipy") {
  const fs::path raw_config = scratch_dir() / "raw_drift.yaml";
  write(raw_config, "history:\n  drift_shrinkage: 0\n  drift_cap: 10\n");
  struct Case {
    std::string args;
    bool risk_neutral;
    double shrinkage, cap;
  };
  const Case cases[] = {{"", false, 0.5, 0.10},
                        {" --measure physical", false, 0.5, 0.10},
                        {" --measure risk-neutral", true, 0.5, 0.10},
                        {"RAW", false, 0.0, 10.0}};
  for (const char* method : {"iterative", "mle", "naive"}) {
    for (const Case& c : cases) {
      CAPTURE(method);
      CAPTURE(c.args);
      const fs::path csv = scratch_dir() / "measure.csv";
      const std::string prefix = c.args == "RAW" ? "--config '" + raw_config.string() + "' " : "";
      const CliRun r = run_cli(prefix + sample_args() + " -m " + method + " -f csv -o '" + csv.string() +
                               "'" + (c.args == "RAW" ? "" : c.args));
      REQUIRE(r.code == 0);
      const auto rows = parse_csv(slurp(csv));
      REQUIRE(rows.size() == 6);
      std::istringstream ref(scipy_dd_pd(csv, c.risk_neutral, c.shrinkage, c.cap));
      for (const auto& row : rows) {
        std::string id;
        double used = 0, dd = 0, pd = 0;
        ref >> id >> used >> dd >> pd;
        REQUIRE(static_cast<bool>(ref));
        CHECK(id == row.at("id"));
        CHECK(row.at("measure") == (c.risk_neutral ? "risk-neutral" : "physical"));
        CHECK(as_double(row.at("drift_used")) == doctest::Approx(used).epsilon(1e-14));
        CHECK(as_double(row.at("distance_to_default")) == doctest::Approx(dd).epsilon(1e-12));
        CHECK(as_double(row.at("pd")) == doctest::Approx(pd).epsilon(1e-12));
      }
      // HRN-01 was simulated with a high asset drift (tools/make_history.cpp); its estimate is
      // about 30%, so the default cap binds: 0.028 + 0.10.
      if (c.risk_neutral) {
        CHECK(rows[0].at("drift_source") == "rate");
      } else if (c.args == "RAW") {
        CHECK(rows[0].at("drift_source") == "estimate");
        CHECK(rows[0].at("drift_used") == rows[0].at("drift"));
      } else {
        REQUIRE(as_double(rows[0].at("drift")) > 0.25);
        CHECK(rows[0].at("drift_source") == "capped");
        CHECK(as_double(rows[0].at("drift_used")) == doctest::Approx(0.128).epsilon(1e-15));
      }
    }
  }
}

TEST_CASE("history command: bad --measure and drift settings are refused (exit 2)") {
  CliRun r = run_cli(sample_args() + " --measure physcal");
  CHECK(r.code == 2);
  CHECK(r.err.find("--measure") != std::string::npos);
  CHECK(r.err.find("physcal") != std::string::npos);
  const fs::path config = scratch_dir() / "bad_drift.yaml";
  write(config, "history:\n  drift_cap: -0.05\n");
  r = run_cli("--config '" + config.string() + "' " + sample_args());
  CHECK(r.code == 2);
  CHECK(r.err.find(config.string() +
                   ":2: key 'drift_cap': must lie in [0, 10] (a cc decimal per year: 0.1 means "
                   "10%)") != std::string::npos);
  write(config, "history:\n  min_observations: 120\n  drift_shrinkage: 1.5\n");
  r = run_cli("--config '" + config.string() + "' " + sample_args());
  CHECK(r.code == 2);
  CHECK(r.err.find(config.string() + ":3: key 'drift_shrinkage': must lie in [0, 1]") != std::string::npos);
}
