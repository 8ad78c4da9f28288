// End-to-end tests of the monitoring commands on the built binary and the weekly samples
// (samples/weekly). Expected movers and alerts are recomputed here from the score command's own
// output and the rules as written in movers.hpp, not copied from the monitoring output.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "firmcall/io/settings_io.hpp"
#include "test_util.hpp"

using firmcall::testing::read_file;
using firmcall::testing::run_firmcall;
using firmcall::testing::RunResult;
using firmcall::testing::TempDir;

namespace {

using Table = std::vector<std::map<std::string, std::string>>;

// CSV text (no quoted fields) as rows keyed by the header.
Table parse_csv(const std::string& text) {
  const auto rows = firmcall::testing::split_simple_csv(text);
  Table t;
  if (rows.empty()) return t;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    std::map<std::string, std::string> r;
    for (std::size_t j = 0; j < rows[0].size() && j < rows[i].size(); ++j) r[rows[0][j]] = rows[i][j];
    t.push_back(std::move(r));
  }
  return t;
}

const std::map<std::string, std::string>& row_of(const Table& t, const std::string& key,
                                                 const std::string& value) {
  for (const auto& r : t) {
    if (r.at(key) == value) return r;
  }
  FAIL("no row with " << key << " = " << value);
  return t.front();
}

double num(const std::map<std::string, std::string>& r, const std::string& key) {
  return std::stod(r.at(key));
}

std::string week(int w) {
  return "samples/weekly/week" + std::to_string(w) + ".yaml";
}

// Runs the binary with environment assignments in front (e.g. "XDG_DATA_HOME=/tmp/x").
RunResult run_with_env(const std::string& env, const std::string& args) {
  TempDir t;
  const std::string out = t.file("stdout"), err = t.file("stderr");
  const std::string cmd = "cd '" + firmcall::testing::source_dir() + "' && env " + env + " '" +
                          firmcall::testing::binary() + "' " + args + " >'" + out + "' 2>'" + err +
                          "' </dev/null";
  const int status = std::system(cmd.c_str());
  RunResult r;
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = read_file(out);
  r.err = read_file(err);
  return r;
}

// Records the four weekly samples into `db`.
void record_weeks(const std::string& db) {
  for (int w = 1; w <= 4; ++w) {
    const auto r = run_firmcall("score " + week(w) + " --format csv --record --db '" + db + "'");
    REQUIRE(r.exit_code == 0);
    CHECK(r.err.find("recorded run " + std::to_string(w) + " as of 2026-11-") != std::string::npos);
  }
}

// The grade of a PD on a scale, looked up here: first band whose bound reaches the PD.
std::string band_of(const firmcall::GradeScale& s, double pd) {
  for (const auto& b : s.bands) {
    if (pd <= b.max_pd) return b.label;
  }
  return "?";
}
int band_index(const firmcall::GradeScale& s, double pd) {
  for (std::size_t i = 0; i < s.bands.size(); ++i) {
    if (pd <= s.bands[i].max_pd) return static_cast<int>(i);
  }
  return -1;
}

std::size_t obligors_in(const std::string& yaml_path) {
  const std::string text = read_file(firmcall::testing::source_dir() + "/" + yaml_path);
  std::size_t n = 0;
  for (std::size_t p = text.find("- {id:"); p != std::string::npos; p = text.find("- {id:", p + 1)) ++n;
  return n;
}

}  // namespace

TEST_CASE("recording the weekly samples keeps each run's date, digest and obligors") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  record_weeks(db);
  const auto r = run_firmcall("runs --db '" + db + "' --format csv");
  REQUIRE(r.exit_code == 0);
  const Table runs = parse_csv(r.out);
  REQUIRE(runs.size() == 4);
  const char* dates[] = {"2026-11-06", "2026-11-13", "2026-11-20", "2026-11-27"};  // as_of in each file
  for (int w = 1; w <= 4; ++w) {
    const auto& run = runs[static_cast<std::size_t>(w - 1)];
    CHECK(run.at("as_of") == dates[w - 1]);
    CHECK(run.at("book_path") == week(w));
    CHECK(std::stoul(run.at("obligor_count")) == obligors_in(week(w)));
    // Ref: GNU coreutils sha256sum of the same file.
    std::string expected;
    if (FILE* p =
            ::popen(("sha256sum '" + firmcall::testing::source_dir() + "/" + week(w) + "'").c_str(), "r")) {
      char buf[128] = {};
      if (std::fgets(buf, sizeof buf, p)) expected.assign(buf, 64);
      ::pclose(p);
    }
    CHECK(run.at("input_sha256") == expected);
  }
  const auto table = run_firmcall("runs --db '" + db + "'");
  CHECK(table.exit_code == 0);
  CHECK(table.out.find("4 runs") != std::string::npos);
}

TEST_CASE("movers and alerts follow from the scored weeks and the rules, week after week") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  record_weeks(db);
  const firmcall::Config config =
      firmcall::load_config(firmcall::testing::source_dir() + "/config/firmcall.yaml");
  const firmcall::AlertRules& rules = config.monitor.alerts;
  for (int w = 2; w <= 4; ++w) {
    CAPTURE(w);
    const Table before = parse_csv(run_firmcall("score " + week(w - 1) + " --format csv").out);
    const Table now = parse_csv(run_firmcall("score " + week(w) + " --format csv").out);
    const auto m = run_firmcall("movers --db '" + db + "' --run " + std::to_string(w) + " --format csv");
    REQUIRE(m.exit_code == 0);
    const Table movers = parse_csv(m.out);
    std::size_t expected_rows = now.size();
    for (const auto& b : before) {
      bool still = false;
      for (const auto& n : now) still = still || n.at("id") == b.at("id");
      if (!still) {
        ++expected_rows;
        CHECK(row_of(movers, "id", b.at("id")).at("change") == "dropped");
      }
    }
    CHECK(movers.size() == expected_rows);
    for (const auto& n : now) {
      const auto& mv = row_of(movers, "id", n.at("id"));
      const double pd_now = num(n, "pd");
      CHECK(mv.at("grade_now") == band_of(config.grades, pd_now));
      std::string expected_alerts;
      const auto add = [&expected_alerts](const char* a) {
        if (!expected_alerts.empty()) expected_alerts += ';';
        expected_alerts += a;
      };
      bool found = false;
      for (const auto& b : before) {
        if (b.at("id") != n.at("id")) continue;
        found = true;
        const double dd_b = num(b, "distance_to_default"), dd_n = num(n, "distance_to_default");
        const double pd_b = num(b, "pd");
        const int notches = band_index(config.grades, pd_now) - band_index(config.grades, pd_b);
        CHECK(mv.at("change") == "continuing");
        CHECK(num(mv, "dd_change") == doctest::Approx(dd_n - dd_b).epsilon(1e-12));
        CHECK(std::stoi(mv.at("notches")) == notches);
        // The rules as written in movers.hpp.
        if (dd_b - dd_n > rules.dd_drop) add("dd_drop");
        if (pd_now > rules.pd_ratio * pd_b && pd_now >= rules.pd_ratio_min_pd) add("pd_jump");
        if (notches >= rules.downgrade_notches) add("downgrade");
      }
      if (!found) CHECK(mv.at("change") == "new");
      if (pd_now > rules.pd_ceiling) add("pd_ceiling");
      CHECK(mv.at("alerts") == expected_alerts);
      CHECK(std::stoi(mv.at("severity")) ==
            static_cast<int>(expected_alerts.empty()
                                 ? 0
                                 : std::count(expected_alerts.begin(), expected_alerts.end(), ';') + 1));
    }
  }
}

TEST_CASE("the deteriorating name leads the watchlist, its track falls week by week") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  record_weeks(db);
  const auto wl = run_firmcall("watchlist --db '" + db + "' --format csv");
  REQUIRE(wl.exit_code == 0);
  const Table list = parse_csv(wl.out);
  REQUIRE_FALSE(list.empty());
  CHECK(list[0].at("id") == "ZEP-26");
  for (std::size_t i = 1; i < list.size(); ++i)
    CHECK(std::stoi(list[i].at("severity")) <= std::stoi(list[i - 1].at("severity")));
  for (const auto& r : list) CHECK(std::stoi(r.at("severity")) > 0);
  const auto table = run_firmcall("watchlist --db '" + db + "'");
  CHECK(table.out.rfind("Watchlist: run 4 (as of 2026-11-27) against run 3 (as of 2026-11-20)", 0) == 0);
  CHECK(table.out.find("ZEP-26") != std::string::npos);

  const auto tr = run_firmcall("track ZEP-26 --db '" + db + "' --format csv");
  REQUIRE(tr.exit_code == 0);
  const Table track = parse_csv(tr.out);
  REQUIRE(track.size() == 4);
  for (std::size_t i = 1; i < track.size(); ++i) {
    // Less equity, more volatility and more short-term debt each week: DD falls and PD rises
    // (Merton 1974 comparative statics, from memory).
    CHECK(num(track[i], "distance_to_default") < num(track[i - 1], "distance_to_default"));
    CHECK(num(track[i], "pd") > num(track[i - 1], "pd"));
    CHECK(track[i].at("as_of") > track[i - 1].at("as_of"));
  }
  // The stored figures are those the score command prints for the same file.
  const Table w4 = parse_csv(run_firmcall("score " + week(4) + " --format csv --grades").out);
  CHECK(num(track[3], "pd") == num(row_of(w4, "id", "ZEP-26"), "pd"));
  CHECK(num(track[3], "distance_to_default") == num(row_of(w4, "id", "ZEP-26"), "distance_to_default"));
  CHECK(track[3].at("grade") == row_of(w4, "id", "ZEP-26").at("grade"));
  CHECK(track[3].at("grade_recorded") == track[3].at("grade"));
  const auto t = run_firmcall("track ZEP-26 --db '" + db + "'");
  CHECK(t.out.rfind("Obligor ZEP-26 (Zephyr Wind Turbines): 4 runs", 0) == 0);
}

TEST_CASE("attribution on the samples adds up to each PD change and points the expected way") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  record_weeks(db);
  const auto a = run_firmcall("attribute --db '" + db + "' --format csv");
  REQUIRE(a.exit_code == 0);
  const Table rows = parse_csv(a.out);
  const Table w3 = parse_csv(run_firmcall("score " + week(3) + " --format csv").out);
  const Table w4 = parse_csv(run_firmcall("score " + week(4) + " --format csv").out);
  CHECK(rows.size() == 12);  // the obligors of both weeks 3 and 4, all scored
  for (const auto& r : rows) {
    CAPTURE(r.at("id"));
    CHECK(r.at("status") == "ok");
    double sum = 0.0;
    for (const char* d :
         {"from_equity_value", "from_equity_vol", "from_default_point", "from_rate", "from_horizon"}) {
      sum += num(r, d);
    }
    CHECK(r.at("from_drift").empty());  // the drift follows the rate in these books: five drivers
    CHECK(std::fabs(sum - num(r, "pd_change")) <= 1e-12);
    CHECK(num(r, "from_horizon") == 0.0);  // every horizon is one year in both weeks
    // The end points are the PDs the score command gives for the two files.
    CHECK(num(r, "pd_before") == doctest::Approx(num(row_of(w3, "id", r.at("id")), "pd")).epsilon(1e-13));
    CHECK(num(r, "pd_now") == doctest::Approx(num(row_of(w4, "id", r.at("id")), "pd")).epsilon(1e-13));
  }
  const auto& zep = row_of(rows, "id", "ZEP-26");
  CHECK(zep.at("id") == rows[0].at("id"));  // the largest PD rise comes first
  // Lower equity, higher equity volatility, higher default point: each raises the PD (Merton 1974
  // comparative statics, from memory).
  CHECK(num(zep, "from_equity_value") > 0.0);
  CHECK(num(zep, "from_equity_vol") > 0.0);
  CHECK(num(zep, "from_default_point") > 0.0);
  const auto one = run_firmcall("attribute --db '" + db + "' --obligor ZEP-26");
  CHECK(one.exit_code == 0);
  CHECK(one.out.find("1 obligors attributed") != std::string::npos);
  const auto none = run_firmcall("attribute --db '" + db + "' --obligor NOPE-1");
  CHECK(none.exit_code == 2);
  CHECK(none.err == "firmcall: error: --obligor: 'NOPE-1' is in neither run 3 nor run 4\n");
}

TEST_CASE("new and dropped obligors over the month, runs chosen by date") {
  TempDir dir;
  const std::string db = dir.file("weekly.sqlite");
  record_weeks(db);
  const auto m = run_firmcall("movers --db '" + db + "' --run 2026-11-27 --against 2026-11-06 --format csv");
  REQUIRE(m.exit_code == 0);
  const Table movers = parse_csv(m.out);
  CHECK(row_of(movers, "id", "OSP-41").at("change") == "new");      // added in week 3
  CHECK(row_of(movers, "id", "JAC-36").at("change") == "dropped");  // gone in week 4
  CHECK(row_of(movers, "id", "JAC-36").at("status_now").empty());
  const auto j = run_firmcall("movers --db '" + db + "' --format json --top 3");
  REQUIRE(j.exit_code == 0);
  CHECK(j.out.find("\"now\": {\"run_id\": 4") != std::string::npos);
  CHECK(j.out.find("\"before\": {\"run_id\": 3") != std::string::npos);
  std::size_t objects = 0;
  for (std::size_t p = j.out.find("{\"id\": "); p != std::string::npos; p = j.out.find("{\"id\": ", p + 1))
    ++objects;
  CHECK(objects == 3);
  const auto bad = run_firmcall("movers --db '" + db + "' --run last");
  CHECK(bad.exit_code == 2);
  CHECK(bad.err.find("expected a run id or an as-of date YYYY-MM-DD, got 'last'") != std::string::npos);
}

TEST_CASE("score --grades: the grade is the band of the PD on the shipped scale") {
  const firmcall::Config config =
      firmcall::load_config(firmcall::testing::source_dir() + "/config/firmcall.yaml");
  const auto r = run_firmcall("score samples/demo_book.yaml --format csv --grades");
  REQUIRE(r.exit_code == 0);
  const Table rows = parse_csv(r.out);
  REQUIRE(rows.size() == 36);
  for (const auto& row : rows) CHECK(row.at("grade") == band_of(config.grades, num(row, "pd")));
  const auto plain = run_firmcall("score samples/demo_book.yaml --format csv");
  CHECK(plain.out.find("grade") == std::string::npos);
  const auto table = run_firmcall("score samples/demo_book.yaml --grades");
  CHECK(table.out.find(" grade ") != std::string::npos);
  std::istringstream lines(table.out);
  for (std::string l; std::getline(lines, l);) CHECK(l.size() <= 120);
}

TEST_CASE("bad dates, options and store files are refused with the file named, nothing written") {
  TempDir dir;
  const std::string db = dir.file("h.sqlite");
  auto r = run_firmcall("score " + week(1) + " --record --db '" + db + "' --as-of 2026-02-30");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: --as-of: expected a date YYYY-MM-DD, got '2026-02-30'\n");
  CHECK(r.out.empty());
  CHECK_FALSE(std::filesystem::exists(db));
  r = run_firmcall("score " + week(1) + " --db '" + db + "'");
  CHECK(r.exit_code == 2);  // --db needs --record
  CHECK_FALSE(std::filesystem::exists(db));

  const std::string text = dir.write("notes.txt", "not a database\n");
  r = run_firmcall("score " + week(1) + " --record --db '" + text + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: history store '" + text +
                     "': not an SQLite database, so not a firmcall history store (left untouched)\n");
  CHECK(read_file(text) == "not a database\n");
  r = run_firmcall("watchlist --db '" + text + "'");
  CHECK(r.exit_code == 2);
  CHECK(read_file(text) == "not a database\n");
  r = run_firmcall("movers --db '" + dir.file("missing.sqlite") + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: no history store at '" + dir.file("missing.sqlite") +
                     "' (record a run first: firmcall score BOOK --record)\n");

  // One run only: nothing to compare with; an unknown obligor has no track.
  REQUIRE(run_firmcall("-q score " + week(1) + " --record --db '" + db + "'").exit_code == 0);
  r = run_firmcall("movers --db '" + db + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "firmcall: error: history store '" + db +
            "': run 1 (as of 2026-11-06) is the first one; nothing to compare it with (name a run with "
            "--against)\n");
  r = run_firmcall("track NOPE-1 --db '" + db + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err == "firmcall: error: history store '" + db + "': obligor 'NOPE-1' is in no recorded run\n");
}

TEST_CASE("the book's as_of, --as-of, and the default store under XDG_DATA_HOME") {
  TempDir dir;
  // No --db: the store goes to $XDG_DATA_HOME/firmcall/history.sqlite (XDG Base Directory spec).
  auto r = run_with_env("XDG_DATA_HOME='" + dir.path.string() + "'",
                        "score samples/demo_book.csv --format csv --record --as-of 2026-12-04");
  CHECK(r.exit_code == 0);
  const std::string expected = dir.path.string() + "/firmcall/history.sqlite";
  CHECK(std::filesystem::exists(expected));
  CHECK(r.err.find("recorded run 1 as of 2026-12-04 (36 obligors) in " + expected) != std::string::npos);
  // Without XDG_DATA_HOME: under $HOME/.local/share.
  r = run_with_env("-u XDG_DATA_HOME HOME='" + dir.path.string() + "'", "-q score " + week(2) + " --record");
  CHECK(r.exit_code == 0);
  CHECK(std::filesystem::exists(dir.path / ".local/share/firmcall/history.sqlite"));
  r = run_with_env("-u XDG_DATA_HOME HOME='" + dir.path.string() + "'", "runs --format csv");
  const Table runs = parse_csv(r.out);
  REQUIRE(runs.size() == 1);
  CHECK(runs[0].at("as_of") == "2026-11-13");  // the book's as_of
}

TEST_CASE("two firmcall processes recording at once both succeed, nothing is lost") {
  TempDir dir;
  const std::string db = dir.file("h.sqlite");
  REQUIRE(run_firmcall("-q score " + week(1) + " --format csv --record --db '" + db + "'").exit_code == 0);
  const std::string bin = "'" + firmcall::testing::binary() + "'";
  const std::string cmd = "cd '" + firmcall::testing::source_dir() + "' && { (" + bin + " -q score " +
                          week(2) + " --format csv --record --db '" + db + "' >/dev/null; echo a=$? >'" +
                          dir.file("a") + "') & (" + bin + " -q score " + week(3) +
                          " --format csv --record --db '" + db + "' >/dev/null; echo b=$? >'" +
                          dir.file("b") + "') & wait; }";
  REQUIRE(std::system(cmd.c_str()) == 0);
  CHECK(read_file(dir.file("a")) == "a=0\n");
  CHECK(read_file(dir.file("b")) == "b=0\n");
  const Table runs = parse_csv(run_firmcall("runs --db '" + db + "' --format csv").out);
  REQUIRE(runs.size() == 3);
  CHECK(std::stoul(runs[1].at("obligor_count")) == obligors_in(week(2)));
  CHECK(std::stoul(runs[2].at("obligor_count")) == obligors_in(week(3)));
}

namespace {

// Runs Python's sqlite3 module (an independent reader of the store) on `db`: the query's rows, one
// a line, columns joined by '|'.
std::string python_sqlite(const std::string& db, const std::string& sql) {
  TempDir t;
  const std::string script = t.file("q.py");
  {
    std::ofstream f(script);
    f << "import sqlite3, sys\n"
      << "c = sqlite3.connect('file:' + sys.argv[1] + '?mode=ro', uri=True)\n"
      << "for row in c.execute(sys.argv[2]):\n"
      << "    print('|'.join(str(v) for v in row))\n";
  }
  const std::string out = t.file("out");
  const std::string cmd = "/usr/bin/python3 '" + script + "' '" + db + "' \"" + sql + "\" >'" + out + "'";
  REQUIRE(std::system(cmd.c_str()) == 0);
  return read_file(out);
}

}  // namespace

TEST_CASE("recording the same book as of the same date again is refused, the store left byte for byte") {
  TempDir dir;
  const std::string db = dir.file("h.sqlite");
  REQUIRE(run_firmcall("-q score " + week(1) + " --format csv --record --db '" + db + "'").exit_code == 0);
  const std::string before = read_file(db);
  const std::string out = dir.file("again.csv");
  const auto r =
      run_firmcall("score " + week(1) + " --format csv -o '" + out + "' --record --db '" + db + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("run 1 (recorded ") != std::string::npos);
  CHECK(r.err.find("already holds this book as of 2026-11-06") != std::string::npos);
  CHECK(r.err.find("nothing was written; give --replace-run") != std::string::npos);
  CHECK(r.out.empty());
  CHECK_FALSE(std::filesystem::exists(out));  // -o is committed with the run, or not at all
  CHECK(read_file(db) == before);
  // To standard output as well: refused before anything is scored to it.
  const auto s =
      run_firmcall("score " + week(1) + " --format csv --record --db '" + db + "' --as-of 2026-11-06");
  CHECK(s.exit_code == 2);
  CHECK(s.out.empty());
  CHECK(read_file(db) == before);

  // Another as-of date, or a changed book, is a new run.
  CHECK(run_firmcall("-q score " + week(1) + " --format csv --record --db '" + db + "' --as-of 2026-11-07")
            .exit_code == 0);
  const std::string changed = dir.file("week1_changed.yaml");
  {
    std::ofstream f(changed);
    f << read_file(firmcall::testing::source_dir() + "/" + week(1)) << "# one more comment line\n";
  }
  CHECK(run_firmcall("-q score '" + changed + "' --format csv --record --db '" + db + "'").exit_code == 0);
  const Table runs = parse_csv(run_firmcall("runs --db '" + db + "' --format csv").out);
  REQUIRE(runs.size() == 3);
  CHECK(runs[0].at("as_of") == "2026-11-06");
  CHECK(runs[1].at("as_of") == "2026-11-06");  // the changed book, run 3, same date
  CHECK(runs[1].at("run_id") == "3");
  CHECK(runs[1].at("input_sha256") != runs[0].at("input_sha256"));
  CHECK(runs[2].at("as_of") == "2026-11-07");
}

TEST_CASE("--replace-run replaces the run of the same book and date in one transaction") {
  TempDir dir;
  const std::string db = dir.file("h.sqlite");
  record_weeks(db);
  const auto r = run_firmcall("score " + week(2) + " --format csv -o '" + dir.file("w2.csv") +
                              "' --record --db '" + db + "' --replace-run --rate 0.05");
  REQUIRE(r.exit_code == 0);
  CHECK(r.err.find("recorded run 5 as of 2026-11-13 (" + std::to_string(obligors_in(week(2))) +
                   " obligors) in " + db + ", replacing run 2") != std::string::npos);
  CHECK(std::filesystem::exists(dir.file("w2.csv")));
  // Read back with Python's sqlite3, independently of firmcall's store code.
  CHECK(python_sqlite(db, "SELECT run_id, as_of FROM runs ORDER BY run_id") ==
        "1|2026-11-06\n3|2026-11-20\n4|2026-11-27\n5|2026-11-13\n");
  CHECK(python_sqlite(db, "SELECT count(*) FROM run_obligors WHERE run_id = 2") == "0\n");
  CHECK(python_sqlite(db, "SELECT count(*) FROM run_obligors WHERE run_id = 5") ==
        std::to_string(obligors_in(week(2))) + "\n");
  CHECK(python_sqlite(db, "SELECT settings_json LIKE '%overrides%rate%0.05%' FROM runs WHERE run_id = 5") ==
        "1\n");
  // "Before" follows the as-of dates: run 3 now compares with the replacement.
  const Table movers = parse_csv(run_firmcall("movers --db '" + db + "' --run 3 --format csv").out);
  CHECK_FALSE(movers.empty());
  // Nothing to replace: recorded as a new run, and said so.
  const auto n = run_firmcall("score " + week(1) + " --format csv --record --db '" + db +
                              "' --as-of 2026-12-04 --replace-run");
  CHECK(n.exit_code == 0);
  CHECK(n.err.find("recorded run 6 as of 2026-12-04") != std::string::npos);
  CHECK(n.err.find("no earlier run of this book as of 2026-12-04 to replace") != std::string::npos);
}

TEST_CASE("runs --remove deletes exactly that run and its obligors, and refuses an unknown id") {
  TempDir dir;
  const std::string db = dir.file("h.sqlite");
  record_weeks(db);
  const std::string others_before =
      python_sqlite(db,
                    "SELECT o.run_id, o.seq, o.obligor_id, o.pd FROM run_obligors o WHERE o.run_id <> 2 "
                    "ORDER BY o.run_id, o.seq");
  const auto r = run_firmcall("runs --db '" + db + "' --remove 2");
  REQUIRE(r.exit_code == 0);
  CHECK(r.out.find("removed run 2 as of 2026-11-13 (recorded ") != std::string::npos);
  CHECK(r.out.find("from " + week(2) + ", input SHA-256 ") != std::string::npos);
  CHECK(r.out.find(std::to_string(obligors_in(week(2))) + " obligors) from " + db + "; 3 runs remain") !=
        std::string::npos);
  CHECK(python_sqlite(db, "SELECT run_id FROM runs ORDER BY run_id") == "1\n3\n4\n");
  CHECK(python_sqlite(db, "SELECT count(*) FROM run_obligors WHERE run_id = 2") == "0\n");
  CHECK(python_sqlite(db,
                      "SELECT o.run_id, o.seq, o.obligor_id, o.pd FROM run_obligors o WHERE o.run_id <> 2 "
                      "ORDER BY o.run_id, o.seq") == others_before);
  CHECK(python_sqlite(db, "PRAGMA integrity_check") == "ok\n");

  const std::string bytes = read_file(db);
  const auto unknown = run_firmcall("runs --db '" + db + "' --remove 2");
  CHECK(unknown.exit_code == 2);
  CHECK(unknown.err.find("no run with id 2; nothing was removed") != std::string::npos);
  CHECK(read_file(db) == bytes);
  CHECK(run_firmcall("runs --db '" + db + "' --remove 2x").exit_code == 2);
  CHECK(run_firmcall("runs --db '" + db + "' --remove 3 --format csv").exit_code == 2);
  CHECK(read_file(db) == bytes);
  // The removed week can be recorded again.
  CHECK(run_firmcall("-q score " + week(2) + " --format csv --record --db '" + db + "'").exit_code == 0);
}
