// End-to-end tests of `firmcall stress` (src/cli/cmd_stress.cpp) and `firmcall score
// --sensitivities`: the built binary runs on the sample book and scenario set, and its values are
// checked against the score command's own output.
#include <doctest/doctest.h>
#include <sys/wait.h>
#include <unistd.h>
#include <yaml-cpp/yaml.h>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "csv_table.hpp"

namespace {

namespace fs = std::filesystem;

const std::string kBinary = FIRMCALL_BINARY;
const std::string kSource = FIRMCALL_SOURCE_DIR;
const std::string kBook = kSource + "/samples/demo_book.yaml";
const std::string kScenarios = kSource + "/samples/stress_scenarios.yaml";

// A scratch directory for this test process, removed at exit.
const fs::path& scratch() {
  static const fs::path dir = [] {
    fs::path d = fs::temp_directory_path() / ("firmcall_stress_cli_" + std::to_string(::getpid()));
    fs::create_directories(d);
    return d;
  }();
  static const struct Cleanup {
    ~Cleanup() {
      std::error_code ec;
      fs::remove_all(dir, ec);
    }
  } cleanup;
  return dir;
}

std::string read_file(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

void write_file(const fs::path& p, const std::string& text) {
  std::ofstream(p, std::ios::binary) << text;
}

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) {
    if (c == '\'') {
      q += "'\\''";
    } else {
      q.push_back(c);
    }
  }
  return q + "'";
}

struct Result {
  int exit_code = -1;
  std::string out;
  std::string err;
};

Result run_firmcall(const std::vector<std::string>& args) {
  static int n = 0;
  ++n;
  const fs::path out = scratch() / ("out" + std::to_string(n));
  const fs::path err = scratch() / ("err" + std::to_string(n));
  std::string cmd = quote(kBinary);
  for (const auto& a : args) {
    cmd += ' ';
    cmd += quote(a);
  }
  cmd += " >";
  cmd += quote(out.string());
  cmd += " 2>";
  cmd += quote(err.string());
  const int status = std::system(cmd.c_str());
  Result r;
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = read_file(out);
  r.err = read_file(err);
  return r;
}

using Csv = firmcall::testing::CsvTable;
Csv parse_csv(const std::string& text) {
  return firmcall::testing::parse_csv_table(text);
}

std::string full(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

}  // namespace

TEST_CASE("stress on the sample book: exit code, base values equal the score command's") {
  const Result score = run_firmcall({"score", kBook, "--format", "csv"});
  REQUIRE(score.exit_code == 0);
  const Csv s = parse_csv(score.out);
  REQUIRE(s.rows.size() == 36);

  const fs::path out = scratch() / "stress.csv";
  const Result stress =
      run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--format", "csv", "-o", out.string()});
  CHECK(stress.exit_code == 0);
  CHECK(stress.out.empty());
  const Csv t = parse_csv(read_file(out));
  REQUIRE(t.rows.size() == 3 * 36);
  std::set<std::string> scenarios;
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    const std::size_t i = r % 36;
    scenarios.insert(t.cell(r, "scenario"));
    CHECK(t.cell(r, "id") == s.cell(i, "id"));
    CHECK(t.cell(r, "status") == "ok");
    // Same text: both print 17 significant digits of the same double.
    for (const char* c : {"equity_value", "default_point", "asset_value", "asset_vol", "distance_to_default",
                          "pd", "spread_bp"}) {
      CHECK(t.cell(r, c) == s.cell(i, c));
    }
  }
  CHECK(scenarios == std::set<std::string>{"mild", "severe", "energy_transition"});
  CHECK(stress.err.find("scenario 'severe': mean PD") != std::string::npos);
}

TEST_CASE("the sample scenarios hit the obligors their filters name") {
  // Expected sets from the sample book's sector field, read here with yaml-cpp, not firmcall.
  std::set<std::string> materials;
  std::set<std::string> cyclical;
  for (const auto& node : YAML::LoadFile(kBook)["obligors"]) {
    const std::string id = node["id"].as<std::string>();
    const std::string sector = node["sector"].as<std::string>();
    if (sector == "Materials") materials.insert(id);
    if (sector == "Transport" || sector == "Consumer") cyclical.insert(id);
  }
  REQUIRE(materials.size() == 5);
  std::set<std::string> energy = materials;
  energy.insert({"EMB-05", "GOR-33", "SOL-19"});
  const Result stress = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--format", "csv"});
  REQUIRE(stress.exit_code == 0);
  const Csv t = parse_csv(stress.out);
  std::set<std::string> hit;
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    const std::string& id = t.cell(r, "id");
    if (t.cell(r, "scenario") == "energy_transition" && t.cell(r, "shocked") == "true") hit.insert(id);
    if (t.cell(r, "scenario") == "severe") {
      CHECK(t.cell(r, "shocked") == "true");
      // Cyclical sectors take both shocks: E x (1 - 0.35) x (1 - 0.15).
      const double factor = cyclical.count(id) ? (1.0 - 0.35) * (1.0 - 0.15) : 1.0 - 0.35;
      CHECK(t.number(r, "equity_value_stressed") ==
            doctest::Approx(t.number(r, "equity_value") * factor).epsilon(1e-15));
    }
  }
  CHECK(hit == energy);
}

TEST_CASE("a stressed PD equals scoring the sample obligor with its inputs shocked by hand") {
  // The mild scenario: E x (1 - 0.1), sE x 1.15, rate + 25 bp, written into a one-obligor book
  // and scored by `firmcall score` (an independent path through the program). This is the
  // re-solve of the shocked (E', sE'): --hold equity-vol.
  const Result stress =
      run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--format", "csv", "--hold", "equity-vol"});
  REQUIRE(stress.exit_code == 0);
  const Csv t = parse_csv(stress.out);
  REQUIRE(t.cell(0, "id") == "ALD-01");
  REQUIRE(t.cell(0, "scenario") == "mild");
  const fs::path book = scratch() / "shocked.yaml";
  write_file(book, "obligors:\n  - {id: ALD-01, market_cap: " + full(2450.0 * (1.0 + -0.10)) +
                       ", equity_vol: " + full(0.31 * 1.15 + 0.0) +
                       ", short_term_debt: 820.0, long_term_debt: "
                       "1900.0, rate: " +
                       full(0.0265 + 25.0 / 1e4) + ", horizon: 1.0}\n");
  const Result score = run_firmcall({"score", book.string(), "--format", "csv"});
  REQUIRE(score.exit_code == 0);
  const Csv s = parse_csv(score.out);
  CHECK(s.cell(0, "pd") == t.cell(0, "pd_stressed"));
  CHECK(s.cell(0, "distance_to_default") == t.cell(0, "distance_to_default_stressed"));
  CHECK(s.cell(0, "spread_bp") == t.cell(0, "spread_bp_stressed"));
}

TEST_CASE("reverse stress on the sample book: re-running with the found multiplier gives the level") {
  const Result rev = run_firmcall({"stress", kBook, "--reverse-pd", "0.05", "--format", "csv"});
  REQUIRE(rev.exit_code == 0);
  const Csv r = parse_csv(rev.out);
  REQUIRE(r.rows.size() == 36);
  // One scenario per obligor, limited to it by an ids filter, with the multiplier at 17 digits.
  std::string yaml = "scenarios:\n";
  std::map<std::string, double> expected;
  for (std::size_t i = 0; i < r.rows.size(); ++i) {
    const std::string& status = r.cell(i, "equity_vol_multiplier_status");
    CHECK((status == "found" || status == "already_reached" || status == "not_reachable"));
    if (status != "found") continue;
    const std::string id = r.cell(i, "id");
    yaml += "  - name: " + id + "\n    shocks: [{filter: {ids: " + id +
            "}, equity_vol_multiplier: " + r.cell(i, "equity_vol_multiplier") + "}]\n";
    expected[id] = r.number(i, "pd_at_equity_vol_multiplier");
  }
  REQUIRE(expected.size() >= 20);
  const fs::path file = scratch() / "reverse.yaml";
  write_file(file, yaml);
  const Result stress = run_firmcall({"stress", kBook, "--scenarios", file.string(), "--format", "csv"});
  REQUIRE(stress.exit_code == 0);
  const Csv t = parse_csv(stress.out);
  double worst = 0.0;
  for (std::size_t k = 0; k < t.rows.size(); ++k) {
    if (t.cell(k, "scenario") != t.cell(k, "id")) continue;
    const double pd = t.number(k, "pd_stressed");
    CHECK(pd == expected[t.cell(k, "id")]);
    worst = std::max(worst, std::fabs(pd / 0.05 - 1.0));
  }
  MESSAGE("sample book, PD level 5%: worst |PD / 0.05 - 1| after re-running = " << worst);
  CHECK(worst < 1e-9);
}

TEST_CASE("quick grid: the unshocked cell is the score command's PD") {
  const Result score = run_firmcall({"score", kBook, "--format", "csv"});
  const Csv s = parse_csv(score.out);
  const Result grid = run_firmcall({"stress", kBook, "--equity-shocks", "0,-0.1,-0.3",
                                    "--equity-vol-multipliers", "1,1.25,1.5,2", "--format", "csv"});
  REQUIRE(grid.exit_code == 0);
  const Csv t = parse_csv(grid.out);
  REQUIRE(t.rows.size() == 12 * 36);
  for (std::size_t i = 0; i < 36; ++i) {
    CHECK(t.cell(i, "scenario") == "equity +0% vol x1");
    CHECK(t.cell(i, "pd_stressed") == s.cell(i, "pd"));
  }
  const Result table =
      run_firmcall({"stress", kBook, "--equity-shocks", "0,-0.3", "--equity-vol-multipliers", "1,2"});
  CHECK(table.exit_code == 0);
  CHECK(table.out.find("PD grid") != std::string::npos);
}

TEST_CASE("score --sensitivities adds the sensitivity columns") {
  const Result plain = run_firmcall({"score", kBook, "--format", "csv"});
  const Result sens = run_firmcall({"score", kBook, "--format", "csv", "--sensitivities"});
  REQUIRE(sens.exit_code == 0);
  const Csv p = parse_csv(plain.out);
  const Csv s = parse_csv(sens.out);
  CHECK(s.header.size() == p.header.size() + 13);
  for (std::size_t i = 0; i < s.rows.size(); ++i) {
    CHECK(s.cell(i, "pd") == p.cell(i, "pd"));  // the other columns are unchanged
    CHECK(s.cell(i, "sensitivity_status") == "ok");
    // Homogeneity of the call price in (V, K) (Merton 1973; from memory): +1% equity and +1%
    // default point move every measure by opposite amounts.
    CHECK(s.number(i, "dd_per_equity_pct") ==
          doctest::Approx(-s.number(i, "dd_per_default_point_pct")).epsilon(1e-9));
    CHECK(s.number(i, "pd_per_equity_vol_pt") >= 0.0);  // sample PDs are below 50%: see sensitivity_test
  }
  const Result table = run_firmcall({"score", kBook, "--sensitivities"});
  CHECK(table.exit_code == 0);
  CHECK(table.out.find("per +1 bp rate") != std::string::npos);
}

TEST_CASE("bad obligors are invalid rows while the others are stressed (exit code 1)") {
  const Result r = run_firmcall(
      {"stress", kSource + "/samples/bad_rows.csv", "--equity-shocks", "-0.2", "--format", "csv"});
  CHECK(r.exit_code == 1);
  const Csv t = parse_csv(r.out);
  REQUIRE(t.rows.size() == 16);
  std::size_t ok = 0;
  for (std::size_t i = 0; i < t.rows.size(); ++i) ok += t.cell(i, "status") == "ok";
  CHECK(ok == 2);  // GOOD-01 and GOOD-16
  CHECK(t.cell(0, "status") == "ok");
  CHECK(t.cell(1, "status") == "invalid_input");
  CHECK(t.cell(1, "message") ==
        "line 3: field 'market_cap': missing (give market_cap, or share_price and "
        "shares_outstanding)");
  CHECK(r.err.find("bad_rows.csv:3: obligor 'BAD-02': field 'market_cap': missing") != std::string::npos);
}

TEST_CASE("bad scenario files and command lines exit with code 2 and write nothing") {
  const fs::path bad = scratch() / "bad.yaml";
  write_file(bad, "scenarios:\n  - name: x\n    shocks:\n      - {equity_chnage: -0.1}\n");
  const fs::path out = scratch() / "never.csv";
  Result r = run_firmcall({"stress", kBook, "--scenarios", bad.string(), "-o", out.string()});
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "firmcall: error: " + bad.string() +
            ":4: scenario 'x', shock 1: unknown key 'equity_chnage' (did you mean 'equity_change'?)\n");
  CHECK_FALSE(fs::exists(out));

  write_file(bad,
             "scenarios:\n  - name: x\n    shocks:\n      - filter: {sector: Utilties}\n"
             "        equity_change: -0.1\n");
  r = run_firmcall({"stress", kBook, "--scenarios", bad.string()});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(":4: scenario 'x', shock 1, filter: key 'sector': 'Utilties' matches no obligor of") !=
        std::string::npos);
  CHECK(r.err.find("(did you mean 'Utilities'?)") != std::string::npos);
  CHECK(r.out.empty());

  r = run_firmcall({"stress", kBook});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("give --scenarios FILE") != std::string::npos);
  CHECK(run_firmcall({"stress", kBook, "--reverse-pd", "0.05", "--scenarios", kScenarios}).exit_code == 2);
  CHECK(run_firmcall({"stress", kBook, "--equity-shocks", "-1"}).exit_code == 2);
  CHECK(run_firmcall({"stress", kBook, "--reverse-pd", "1"}).exit_code == 2);
}

TEST_CASE("threshold and summary file options") {
  const fs::path summary = scratch() / "summary.csv";
  const Result r = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--pd-threshold", "0.01",
                                 "--summary-output", summary.string(), "--format", "json"});
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("\"pd_threshold\": 0.01") != std::string::npos);
  const Csv s = parse_csv(read_file(summary));
  REQUIRE(s.rows.size() == 3);
  CHECK(s.cell(1, "scenario") == "severe");
  CHECK(s.number(1, "pd_threshold") == 0.01);
  CHECK(s.number(1, "above_threshold_stressed") >= s.number(1, "above_threshold"));
  CHECK(s.number(1, "obligors_with_ead") == 36);
}

namespace {

const std::string kCalibration = kSource + "/samples/calibration.yaml";

// The logistic parameters of the sample calibration, read with yaml-cpp (not the program's reader).
void sample_logistic(double& a, double& b, double& dd_min, double& dd_max) {
  const YAML::Node cal = YAML::LoadFile(kCalibration);
  a = cal["logistic"]["intercept"].as<double>();
  b = cal["logistic"]["slope"].as<double>();
  dd_min = cal["sample"]["dd_min"].as<double>();
  dd_max = cal["sample"]["dd_max"].as<double>();
}

}  // namespace

TEST_CASE("stress --pd-calibration: calibrated PDs of base and stressed DD at the end of each row") {
  double a = 0, b = 0, lo = 0, hi = 0;
  sample_logistic(a, b, lo, hi);
  const fs::path out = scratch() / "cal_stress.csv";
  const fs::path summary = scratch() / "cal_summary.csv";
  const Result r = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--pd-calibration", kCalibration,
                                 "-f", "csv", "-o", out.string(), "--summary-output", summary.string()});
  REQUIRE(r.exit_code == 0);
  // The closing lines on standard error name the driving PD.
  CHECK(r.err.find("scenario 'severe': mean calibrated one-year PD ") != std::string::npos);
  const Csv t = parse_csv(read_file(out));
  REQUIRE(t.rows.size() == 3 * 36);
  REQUIRE(t.header.size() >= 9);
  CHECK(t.header[t.header.size() - 9] == "pd_calibrated");
  CHECK(t.header.back() == "pd_calibrated_change");
  // The base calibrated PD is what `score --pd-calibration` prints for the same obligor.
  const Result score = run_firmcall({"score", kBook, "-f", "csv", "--pd-calibration", kCalibration});
  REQUIRE(score.exit_code == 0);
  const Csv s = parse_csv(score.out);
  REQUIRE(s.rows.size() == 36);
  std::map<std::string, double> sum_by_scenario;
  for (std::size_t i = 0; i < t.rows.size(); ++i) {
    CAPTURE(t.cell(i, "id"));
    CHECK(t.cell(i, "id") == s.cell(i % 36, "id"));
    for (const char* c :
         {"pd_calibrated", "pd_calibrated_lower", "pd_calibrated_upper", "pd_calibrated_extrapolated"})
      CHECK(t.cell(i, c) == s.cell(i % 36, c));
    const double dd = t.number(i, "distance_to_default_stressed");
    const double pd = t.number(i, "pd_calibrated_stressed");
    // Ref: the logistic link 1 / (1 + exp(-(a + b DD))) (textbook logistic regression), at the
    // stressed DD this run printed.
    CHECK(pd == doctest::Approx(1.0 / (1.0 + std::exp(-(a + b * dd)))).epsilon(1e-13));
    CHECK(t.number(i, "pd_calibrated_stressed_lower") < pd);
    CHECK(t.number(i, "pd_calibrated_stressed_upper") > pd);
    CHECK(t.cell(i, "pd_calibrated_stressed_extrapolated") == (dd < lo || dd > hi ? "true" : "false"));
    sum_by_scenario[t.cell(i, "scenario")] += pd;
  }
  // The summary file: the model columns and the currency first, the calibrated figures after them.
  const Csv sc = parse_csv(read_file(summary));
  REQUIRE(sc.rows.size() == 3);
  CHECK(sc.header[19] == "currency");
  CHECK(sc.header[20] == "mean_pd_calibrated");
  for (std::size_t k = 0; k < 3; ++k) {
    CAPTURE(sc.cell(k, "scenario"));
    CHECK(sc.number(k, "mean_pd_calibrated_stressed") ==
          doctest::Approx(sum_by_scenario[sc.cell(k, "scenario")] / 36.0).epsilon(1e-13));
    CHECK(sc.number(k, "mean_pd_calibrated_stressed") > sc.number(k, "mean_pd_calibrated"));
  }

  // --driving-pd model: the same columns, and the closing lines on the model PD.
  const Result m = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--pd-calibration", kCalibration,
                                 "--driving-pd", "model", "-f", "csv"});
  REQUIRE(m.exit_code == 0);
  CHECK(m.out == read_file(out));
  CHECK(m.err.find("scenario 'severe': mean PD ") != std::string::npos);

  // Table and JSON say which PD drives.
  const Result table =
      run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--pd-calibration", kCalibration});
  REQUIRE(table.exit_code == 0);
  CHECK(table.out.find("PD: calibrated one-year (" + kCalibration + ", logistic) drives") !=
        std::string::npos);
  const Result json = run_firmcall(
      {"stress", kBook, "--scenarios", kScenarios, "--pd-calibration", kCalibration, "-f", "json"});
  REQUIRE(json.exit_code == 0);
  CHECK(json.out.find("\"driving_pd\": \"calibrated\"") != std::string::npos);
  CHECK(json.out.find("\"mean_pd_calibrated_stressed\": ") != std::string::npos);
  // Without a calibration nothing calibrated is written.
  const Result plain = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "-f", "json"});
  CHECK(plain.out.find("calibrated") == std::string::npos);
}

TEST_CASE("stress --pd-calibration: a larger equity fall gives a higher calibrated PD") {
  // Merton (1974): a lower equity value at the same debt lowers DD; the calibration's slope is
  // negative, so the calibrated PD rises with the fall.
  const Result r = run_firmcall(
      {"stress", kBook, "--equity-shocks", "0,-0.2,-0.4", "--pd-calibration", kCalibration, "-f", "csv"});
  REQUIRE(r.exit_code == 0);
  const Csv t = parse_csv(r.out);
  REQUIRE(t.rows.size() == 3 * 36);
  for (std::size_t i = 0; i < 36; ++i) {
    CAPTURE(t.cell(i, "id"));
    const double p0 = t.number(i, "pd_calibrated_stressed");
    const double p1 = t.number(36 + i, "pd_calibrated_stressed");
    const double p2 = t.number(72 + i, "pd_calibrated_stressed");
    CHECK(p0 == t.number(i, "pd_calibrated"));  // the unshocked cell
    CHECK(t.number(36 + i, "distance_to_default_stressed") < t.number(i, "distance_to_default_stressed"));
    CHECK(p0 < p1);
    CHECK(p1 < p2);
  }
  // The table's PD grid follows the driving PD.
  const Result g =
      run_firmcall({"stress", kBook, "--equity-shocks", "0,-0.2,-0.4", "--pd-calibration", kCalibration});
  REQUIRE(g.exit_code == 0);
  CHECK(g.out.find("PD grid: calibrated one-year PD %") != std::string::npos);
}

TEST_CASE("stress --pd-calibration: bad calibration files and combinations exit 2 and write nothing") {
  const fs::path out = scratch() / "kept.csv";
  const fs::path summary = scratch() / "never_summary.csv";
  write_file(out, "earlier output\n");
  const fs::path missing = scratch() / "no_such_cal.yaml";
  Result r = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--pd-calibration", missing.string(),
                           "-o", out.string(), "--summary-output", summary.string()});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(missing.string()) != std::string::npos);
  CHECK(read_file(out) == "earlier output\n");
  CHECK_FALSE(fs::exists(summary));

  const fs::path bad = scratch() / "bad_cal.yaml";
  write_file(bad, read_file(kCalibration) + "colour: blue\n");
  r = run_firmcall(
      {"stress", kBook, "--scenarios", kScenarios, "--pd-calibration", bad.string(), "-o", out.string()});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(bad.string()) != std::string::npos);
  CHECK(r.err.find("colour") != std::string::npos);
  CHECK(read_file(out) == "earlier output\n");

  r = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--driving-pd", "calibrated"});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--driving-pd calibrated: needs --pd-calibration CAL.yaml") != std::string::npos);
  r = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "--driving-pd", "neither"});
  CHECK(r.exit_code == 2);
  r = run_firmcall(
      {"stress", kBook, "--scenarios", kScenarios, "--horizons", "1,2", "--pd-calibration", kCalibration});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--pd-calibration: not available with term structures") != std::string::npos);
  r = run_firmcall({"stress", kBook, "--reverse-pd", "0.05", "--pd-calibration", kCalibration});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--pd-calibration: not available with --reverse-pd") != std::string::npos);
  CHECK(r.out.empty());
}
