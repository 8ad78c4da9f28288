// End-to-end tests of the built executable: formats, exit codes, error reporting, output files.
#include <doctest/doctest.h>

#include <filesystem>
#include <sstream>

#include "firmcall/engine/score_output.hpp"
#include "test_util.hpp"

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
bool has_non_finite_word(const std::string& text) {
  for (const char* w : {"nan", "NaN", "inf", "Inf"}) {
    if (text.find(std::string(",") + w) != std::string::npos ||
        text.find(std::string(": ") + w) != std::string::npos) {
      return true;
    }
  }
  return false;
}
}  // namespace

TEST_CASE("score the sample book as CSV: every column, every obligor, exit 0") {
  const auto r = run_firmcall("score samples/demo_book.yaml --format csv");
  CHECK(r.exit_code == 0);
  const auto lines = lines_of(r.out);
  REQUIRE(lines.size() == 37);
  std::string header;
  for (auto c : firmcall::score_columns()) header += std::string(header.empty() ? "" : ",") + std::string(c);
  CHECK(lines[0] == header);
  for (const char* col :
       {"id", "status", "asset_value", "asset_vol", "default_point", "leverage", "distance_to_default", "pd",
        "pd_risk_neutral", "debt_value", "spread_bp", "iterations", "message"}) {
    CHECK(("," + lines[0] + ",").find(std::string(",") + col + ",") != std::string::npos);
  }
  for (std::size_t i = 1; i < lines.size(); ++i) CHECK(lines[i].find(",ok,") != std::string::npos);
  CHECK(r.err.find("firmcall: scored 36 of 36 obligors; mean solver iterations ") != std::string::npos);
  // The YAML and CSV forms are the same book (the same 36 obligors, ids in the same order): the
  // output rows are identical, byte for byte.
  const auto c = run_firmcall("score samples/demo_book.csv --format csv");
  CHECK(c.exit_code == 0);
  const auto clines = lines_of(c.out);
  REQUIRE(clines.size() == lines.size());
  for (std::size_t i = 0; i < clines.size(); ++i) CHECK(clines[i] == lines[i]);
}

TEST_CASE("the table reads in a 120-column terminal and ends with a summary and the caution") {
  const auto r = run_firmcall("score samples/demo_book.yaml");
  CHECK(r.exit_code == 0);
  for (const auto& l : lines_of(r.out)) CHECK(l.size() <= 120);
  CHECK(r.out.find("scored 36 of 36 obligors") != std::string::npos);
  CHECK(r.out.find("not a credit decision on their own") != std::string::npos);
  CHECK(r.out.find("GOR-33") != std::string::npos);
}

TEST_CASE("bad rows: each named with file, line, obligor and field, the good rows still scored, exit 1") {
  const auto r = run_firmcall("score samples/bad_rows.csv --format csv");
  CHECK(r.exit_code == 1);
  CHECK_FALSE(has_non_finite_word(r.out));
  const auto lines = lines_of(r.out);
  REQUIRE(lines.size() == 17);
  int ok = 0, invalid = 0;
  for (std::size_t i = 1; i < lines.size(); ++i) {
    if (lines[i].find(",ok,") != std::string::npos) ++ok;
    if (lines[i].find(",invalid_input,") != std::string::npos) ++invalid;
  }
  CHECK(ok == 2);
  CHECK(invalid == 14);
  for (const char* expect : {
           "samples/bad_rows.csv:3: obligor 'BAD-02': field 'market_cap': missing",
           "samples/bad_rows.csv:4: obligor 'BAD-03': field 'market_cap': must be positive, got -50",
           "samples/bad_rows.csv:5: obligor 'BAD-04': field 'equity_vol': must be positive, got 0",
           "samples/bad_rows.csv:6: obligor 'BAD-05': field 'equity_vol': expected a finite decimal number "
           "such as "
           "0.35, got '35%'",
           "samples/bad_rows.csv:8: obligor 'BAD-07': field 'short_term_debt': must not be negative, got -10",
           "samples/bad_rows.csv:9: obligor 'BAD-08': field 'horizon': must be positive years",
           "samples/bad_rows.csv:10: obligor 'BAD-09': field 'equity_vol': expected a finite decimal number",
           "samples/bad_rows.csv:11: obligor 'GOOD-01': field 'id': duplicate of the obligor at line 2",
           "samples/bad_rows.csv:1: note: column 'analyst_note' is not used",
       }) {
    CAPTURE(expect);
    CHECK(r.err.find(expect) != std::string::npos);
  }
  CHECK(r.err.find("scored 2 of 16 obligors (14 invalid input, 0 not converged)") != std::string::npos);
}

TEST_CASE("file errors: exit 2 with the file (and line) named, nothing written") {
  TempDir t;
  auto r = run_firmcall("score no-such-book.csv");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: cannot open file 'no-such-book.csv'\n");
  const std::string bad_yaml = t.write("bad.yaml", "obligors:\n  - {id: A, market_cap: [1, 2\n");
  r = run_firmcall("score '" + bad_yaml + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(bad_yaml + ":") != std::string::npos);
  r = run_firmcall("score samples/demo_book.txt");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("unknown book format") != std::string::npos);
  r = run_firmcall("score samples/demo_book.yaml --format xml");
  CHECK(r.exit_code == 2);
  r = run_firmcall("score");
  CHECK(r.exit_code == 2);
  // A failing run leaves an existing output file as it was, and no temporary file behind.
  const std::string out = t.write("out.csv", "previous contents\n");
  const std::string no_id = t.write("noid.csv", "name,market_cap,equity_vol\nA,1,0.2\n");
  r = run_firmcall("score '" + no_id + "' --format csv -o '" + out + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: " + no_id + ":1: header: required column 'id' is missing\n");
  CHECK(read_file(out) == "previous contents\n");
  int files = 0;
  for (const auto& e : std::filesystem::directory_iterator(t.path)) {
    (void)e;
    ++files;
  }
  CHECK(files == 3);  // bad.yaml, out.csv, noid.csv
}

TEST_CASE("--output writes the whole result, overrides apply, JSON parses") {
  TempDir t;
  const std::string out = t.file("scores.json");
  auto r =
      run_firmcall("score samples/demo_book.yaml --format json --rate 0.05 --horizon 2 -o '" + out + "'");
  CHECK(r.exit_code == 0);
  const std::string json = read_file(out);
  CHECK(json.find("\"rate_override\": 0.05, \"horizon_override\": 2}") != std::string::npos);
  const auto base = run_firmcall("score samples/demo_book.yaml --format json");
  CHECK(base.out.find("\"rate_override\": null, \"horizon_override\": null}") != std::string::npos);
  CHECK(json.size() > 1000);
  CHECK(base.out != json);  // the overrides changed the results
  // Independent JSON parser: Python's json module.
  const int py = std::system(("python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); "
                              "assert len(d[\"obligors\"])==36 and d[\"summary\"][\"scored\"]==36' '" +
                              out + "'")
                                 .c_str());
  CHECK(py == 0);
  r = run_firmcall("score samples/bad_rows.csv --format json");
  CHECK(r.exit_code == 1);
  CHECK_FALSE(has_non_finite_word(r.out));
  const std::string bad = t.write("bad.json", r.out);
  CHECK(
      std::system(("python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); "
                   "assert d[\"summary\"][\"invalid_input\"]==14 and d[\"obligors\"][1][\"pd\"] is None' '" +
                   bad + "'")
                      .c_str()) == 0);
}

TEST_CASE("--help carries the caution, the risk-neutral measure sets pd to pd_risk_neutral") {
  auto r = run_firmcall("--help");
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("not a credit decision on their own") != std::string::npos);
  r = run_firmcall("score --help");
  CHECK(r.out.find("model-risk") != std::string::npos);
  CHECK(r.out.find("Exit codes") != std::string::npos);
  r = run_firmcall("score samples/demo_book.yaml --format csv --measure risk-neutral");
  CHECK(r.exit_code == 0);
  const auto rows = firmcall::testing::split_simple_csv(r.out);
  const auto jac = std::find_if(rows.begin(), rows.end(), [](const auto& row) { return row[0] == "JAC-36"; });
  REQUIRE(jac != rows.end());
  CHECK((*jac)[9] == (*jac)[12]);  // pd == pd_risk_neutral under the risk-neutral measure
  r = run_firmcall("score samples/demo_book.yaml --format csv");
  const auto rows2 = firmcall::testing::split_simple_csv(r.out);
  const auto jac2 =
      std::find_if(rows2.begin(), rows2.end(), [](const auto& row) { return row[0] == "JAC-36"; });
  CHECK(std::stod((*jac2)[9]) < std::stod((*jac2)[12]));  // drift 7% > rate: physical PD is lower
}

TEST_CASE("one thread and many threads write the same bytes") {
  const auto a = run_firmcall("score samples/demo_book.yaml --format csv --threads 1");
  const auto b = run_firmcall("score samples/demo_book.yaml --format csv --threads 4");
  CHECK(a.out == b.out);
}
