// Tests of the history store: round trip of runs, schema versions, foreign files, a writer killed
// in the middle of a run, and two writers at once.
#include <doctest/doctest.h>

#include <signal.h>
#include <sqlite3.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmath>
#include <filesystem>
#include <limits>

#include "firmcall/monitor/run_store.hpp"
#include "firmcall/monitor/store_error.hpp"
#include "test_util.hpp"

using namespace firmcall;
using firmcall::testing::read_file;
using firmcall::testing::TempDir;

namespace {

RunInfo run_info(const std::string& as_of) {
  RunInfo r;
  r.as_of = as_of;
  r.recorded_at = "2026-12-01T08:00:00Z";
  r.book_path = "samples/weekly/week1.yaml";
  r.book_label = "demo";
  r.input_sha256 = std::string(64, 'a');
  r.settings_json = "{\"measure\": \"physical\"}";
  r.tool_version = "test";
  return r;
}

StoredObligor scored_obligor(const std::string& id, double pd) {
  StoredObligor o;
  o.id = id;
  o.name = "Obligor " + id;
  o.status = RowStatus::ok;
  o.fields_json = "{\"id\": \"" + id + "\"}";
  o.has_inputs = true;
  o.inputs = {.equity_value = 1234.5,
              .equity_vol_annual = 0.1 + 0.2,  // not a short decimal: checks exact round trip
              .default_point = 987.25,
              .risk_free_rate_cc = -0.0015,
              .horizon_years = 1.0 / 3.0,
              .drift_annual = 0.05};
  o.has_measures = true;
  o.measures.asset_value = 2100.125;
  o.measures.asset_vol_annual = 0.18;
  o.measures.default_point = o.inputs.default_point;
  o.measures.leverage = 0.47;
  o.measures.distance_to_default = 2.5;
  o.measures.pd = pd;
  o.measures.pd_risk_neutral = pd * 1.5;
  o.measures.debt_value = 900.0;
  o.measures.spread_bp = 12.5;
  o.iterations = 4;
  o.residual = 3e-16;
  o.grade = "FC8";
  return o;
}

// prefix followed by i (built in two steps: GCC 12 warns wrongly on "literal" + std::string).
std::string numbered(const std::string& prefix, int i) {
  std::string s = prefix;
  s += std::to_string(i);
  return s;
}

std::vector<StoredObligor> book_of(int n, const std::string& prefix, double pd) {
  std::vector<StoredObligor> v;
  for (int i = 0; i < n; ++i) v.push_back(scored_obligor(numbered(prefix, i), pd));
  return v;
}

std::int64_t write_run(RunStore& store, const RunInfo& info, const std::vector<StoredObligor>& rows) {
  RunWriter w(store, info);
  for (const auto& o : rows) w.add(o);
  return w.commit();
}

// Runs SQL on a database file directly (outside firmcall's store code).
void raw_sql(const std::string& path, const std::string& sql) {
  sqlite3* db = nullptr;
  REQUIRE(sqlite3_open(path.c_str(), &db) == SQLITE_OK);
  char* err = nullptr;
  const int rc = sqlite3_exec(db, sql.c_str(), nullptr, nullptr, &err);
  INFO(sql << " -> " << (err ? err : "ok"));
  sqlite3_free(err);
  sqlite3_close(db);
  REQUIRE(rc == SQLITE_OK);
}

// First column of the first row of a query, as text.
std::string raw_query(const std::string& path, const std::string& sql) {
  sqlite3* db = nullptr;
  REQUIRE(sqlite3_open(path.c_str(), &db) == SQLITE_OK);
  sqlite3_stmt* st = nullptr;
  std::string out;
  if (sqlite3_prepare_v2(db, sql.c_str(), -1, &st, nullptr) == SQLITE_OK && sqlite3_step(st) == SQLITE_ROW) {
    const auto* t = sqlite3_column_text(st, 0);
    if (t) out = reinterpret_cast<const char*>(t);
  }
  sqlite3_finalize(st);
  sqlite3_close(db);
  return out;
}

// A pipe for one byte of news between a parent and a forked child.
struct Signal {
  int fd[2] = {-1, -1};
  Signal() { REQUIRE(::pipe(fd) == 0); }
  ~Signal() {
    ::close(fd[0]);
    ::close(fd[1]);
  }
  void send() const {
    const char b = 1;
    (void)!::write(fd[1], &b, 1);
  }
  bool wait() const {
    char b = 0;
    return ::read(fd[0], &b, 1) == 1;
  }
};

}  // namespace

TEST_CASE("a run goes into the store and comes back field for field") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  RunStore store(path, StoreOpen::create, 5.0);
  CHECK(store.schema_version() == kStoreSchemaVersion);

  StoredObligor ok = scored_obligor("OK-1", 0.0123);
  StoredObligor invalid;
  invalid.id = "BAD-2";
  invalid.name = "Bad, \"quoted\" name";
  invalid.status = RowStatus::invalid_input;
  invalid.message = "line 3: field 'equity_vol': missing";
  invalid.fields_json = "{}";
  StoredObligor unsolved = scored_obligor("NC-3", 0.5);
  unsolved.status = RowStatus::not_converged;
  unsolved.has_measures = false;
  unsolved.message = "line 4: solver did not converge";
  RunInfo info = run_info("2026-11-06");
  const std::int64_t id = write_run(store, info, {ok, invalid, unsolved});

  const std::vector<RunInfo> runs = store.runs();
  REQUIRE(runs.size() == 1);
  const RunInfo& r = runs[0];
  CHECK(r.run_id == id);
  CHECK(r.as_of == info.as_of);
  CHECK(r.recorded_at == info.recorded_at);
  CHECK(r.book_path == info.book_path);
  CHECK(r.book_label == info.book_label);
  CHECK(r.input_sha256 == info.input_sha256);
  CHECK(r.settings_json == info.settings_json);
  CHECK(r.tool_version == info.tool_version);
  CHECK(r.obligor_count == 3);

  const std::vector<StoredObligor> back = store.obligors(id);
  REQUIRE(back.size() == 3);
  // SQLite REAL is an IEEE 754 double (sqlite.org/datatype3.html): values come back bit for bit.
  const StoredObligor& a = back[0];
  CHECK(a.seq == 0);
  CHECK(a.id == "OK-1");
  CHECK(a.status == RowStatus::ok);
  CHECK(a.fields_json == ok.fields_json);
  CHECK(a.has_inputs);
  CHECK(a.inputs.equity_value == ok.inputs.equity_value);
  CHECK(a.inputs.equity_vol_annual == ok.inputs.equity_vol_annual);
  CHECK(a.inputs.default_point == ok.inputs.default_point);
  CHECK(a.inputs.risk_free_rate_cc == ok.inputs.risk_free_rate_cc);
  CHECK(a.inputs.horizon_years == ok.inputs.horizon_years);
  CHECK(a.inputs.drift_annual == ok.inputs.drift_annual);
  CHECK(a.has_measures);
  CHECK(a.measures.asset_value == ok.measures.asset_value);
  CHECK(a.measures.asset_vol_annual == ok.measures.asset_vol_annual);
  CHECK(a.measures.leverage == ok.measures.leverage);
  CHECK(a.measures.distance_to_default == ok.measures.distance_to_default);
  CHECK(a.measures.pd == ok.measures.pd);
  CHECK(a.measures.pd_risk_neutral == ok.measures.pd_risk_neutral);
  CHECK(a.measures.debt_value == ok.measures.debt_value);
  CHECK(a.measures.spread_bp == ok.measures.spread_bp);
  CHECK(a.iterations == 4);
  CHECK(a.residual == 3e-16);
  CHECK(a.grade == "FC8");
  const StoredObligor& b = back[1];
  CHECK(b.seq == 1);
  CHECK(b.name == invalid.name);
  CHECK(b.status == RowStatus::invalid_input);
  CHECK(b.message == invalid.message);
  CHECK_FALSE(b.has_inputs);
  CHECK_FALSE(b.has_measures);
  CHECK(std::isnan(b.measures.pd));
  CHECK(b.iterations == -1);
  const StoredObligor& c = back[2];
  CHECK(c.status == RowStatus::not_converged);
  CHECK(c.has_inputs);
  CHECK_FALSE(c.has_measures);
}

TEST_CASE("runs are chosen by id, by as-of date or as the latest, previous follows the dates") {
  TempDir dir;
  RunStore store(dir.file("h.sqlite"), StoreOpen::create, 5.0);
  CHECK_THROWS_WITH_AS(store.select(""),
                       ("history store '" + dir.file("h.sqlite") + "': no runs recorded yet").c_str(),
                       InputError);
  // Recorded out of date order: a late backfill of an earlier week.
  const auto r1 = write_run(store, run_info("2026-11-13"), book_of(2, "A", 0.01));
  const auto r2 = write_run(store, run_info("2026-11-06"), book_of(2, "A", 0.02));
  const auto r3 = write_run(store, run_info("2026-11-13"), book_of(2, "A", 0.03));  // a re-run
  CHECK(store.select("").run_id == r3);
  CHECK(store.select(std::to_string(r1)).run_id == r1);
  CHECK(store.select("2026-11-06").run_id == r2);
  CHECK(store.select("2026-11-13").run_id == r3);
  CHECK(store.previous(store.select("")).value().run_id == r1);
  CHECK(store.previous(store.select(std::to_string(r1))).value().run_id == r2);
  CHECK_FALSE(store.previous(store.select(std::to_string(r2))).has_value());
  CHECK_THROWS_WITH_AS(store.select("99"),
                       ("history store '" + dir.file("h.sqlite") + "': no run with id 99").c_str(),
                       InputError);
  CHECK_THROWS_WITH_AS(store.select("2026-02-30"),
                       "expected a run id or an as-of date YYYY-MM-DD, got '2026-02-30'", InputError);
  const auto series = store.series("A1");
  REQUIRE(series.size() == 3);
  CHECK(series[0].run.as_of == "2026-11-06");
  CHECK(series[0].obligor.measures.pd == 0.02);
  CHECK(series[2].run.run_id == r3);
  CHECK(store.series("nobody").empty());
}

TEST_CASE("calendar dates") {
  // Gregorian leap years (common practice): divisible by 4, except centuries not divisible by 400.
  CHECK(is_calendar_date("2024-02-29"));
  CHECK(is_calendar_date("2000-02-29"));
  CHECK_FALSE(is_calendar_date("1900-02-29"));
  CHECK_FALSE(is_calendar_date("2026-02-29"));
  CHECK_FALSE(is_calendar_date("2026-04-31"));
  CHECK_FALSE(is_calendar_date("2026-13-01"));
  CHECK_FALSE(is_calendar_date("2026-1-01"));
  CHECK_FALSE(is_calendar_date("26-11-30"));
  CHECK(is_calendar_date("2026-12-31"));
}

TEST_CASE("files that are not firmcall stores are refused by name and left byte for byte untouched") {
  TempDir dir;
  const std::string text = dir.write("notes.sqlite", "obligor,pd\nALD-01,0.01\n");
  const std::string before = read_file(text);
  CHECK_THROWS_WITH_AS(RunStore(text, StoreOpen::create, 1.0),
                       ("history store '" + text +
                        "': not an SQLite database, so not a firmcall history store (left untouched)")
                           .c_str(),
                       InputError);
  CHECK(read_file(text) == before);

  // Another application's SQLite database (no application_id, its own tables).
  const std::string other = dir.file("other.db");
  raw_sql(other, "CREATE TABLE contacts (name TEXT); INSERT INTO contacts VALUES ('someone');");
  const std::string other_before = read_file(other);
  CHECK_THROWS_WITH_AS(
      RunStore(other, StoreOpen::existing, 1.0),
      ("history store '" + other +
       "': an SQLite database of another application (it has no firmcall tables), not a firmcall "
       "history store (left untouched)")
          .c_str(),
      InputError);
  CHECK(read_file(other) == other_before);
  CHECK_FALSE(std::filesystem::exists(other + "-journal"));

  // An application that marks its files with its own application_id.
  const std::string marked = dir.file("marked.db");
  raw_sql(marked, "PRAGMA application_id = 1234; CREATE TABLE t (x);");
  const std::string marked_before = read_file(marked);
  CHECK_THROWS_WITH_AS(
      RunStore(marked, StoreOpen::create, 1.0),
      ("history store '" + marked +
       "': an SQLite database of another application (application_id 0x000004d2), not a firmcall "
       "history store (left untouched)")
          .c_str(),
      InputError);
  CHECK(read_file(marked) == marked_before);

  CHECK_THROWS_WITH_AS(RunStore(dir.path.string(), StoreOpen::create, 1.0),
                       ("history store '" + dir.path.string() + "': is a folder, not a file").c_str(),
                       InputError);
  CHECK_THROWS_WITH_AS(RunStore(dir.file("none.sqlite"), StoreOpen::existing, 1.0),
                       ("no history store at '" + dir.file("none.sqlite") + "' (record a run first)").c_str(),
                       StoreError);
  CHECK_FALSE(std::filesystem::exists(dir.file("none.sqlite")));
}

TEST_CASE("a version 1 store is migrated forward on open and keeps its runs") {
  TempDir dir;
  const std::string path = dir.file("v1.sqlite");
  // Schema version 1 as firmcall 0.1 wrote it (before grades were stored), built here by hand.
  raw_sql(
      path,
      "PRAGMA application_id = 1717789036;"  // 0x6663616c, "fcal"
      "CREATE TABLE firmcall_schema (version INTEGER PRIMARY KEY, applied_at TEXT NOT NULL, note TEXT NOT "
      "NULL);"
      "INSERT INTO firmcall_schema VALUES (1, '2026-11-01T00:00:00Z', 'runs and their obligors');"
      "CREATE TABLE runs (run_id INTEGER PRIMARY KEY, as_of TEXT NOT NULL, recorded_at TEXT NOT NULL,"
      " book_path TEXT NOT NULL, book_label TEXT NOT NULL, input_sha256 TEXT NOT NULL,"
      " settings_json TEXT NOT NULL, tool_version TEXT NOT NULL, obligor_count INTEGER NOT NULL);"
      "CREATE TABLE run_obligors (run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,"
      " seq INTEGER NOT NULL, obligor_id TEXT NOT NULL, name TEXT NOT NULL, status TEXT NOT NULL,"
      " message TEXT NOT NULL, fields_json TEXT NOT NULL, equity_value REAL, equity_vol REAL,"
      " default_point REAL, rate REAL, horizon REAL, drift REAL, asset_value REAL, asset_vol REAL,"
      " leverage REAL, distance_to_default REAL, pd REAL, pd_risk_neutral REAL, debt_value REAL,"
      " spread_bp REAL, iterations INTEGER, residual REAL, PRIMARY KEY (run_id, seq)) WITHOUT ROWID;"
      "CREATE INDEX runs_by_date ON runs(as_of, run_id);"
      "INSERT INTO runs VALUES (1, '2026-10-30', '2026-10-30T18:00:00Z', 'book.yaml', 'old book',"
      " 'ab', '{}', '0.1.0', 2);"
      "INSERT INTO run_obligors VALUES (1, 0, 'OLD-1', 'Old One', 'ok', '', '{}', 100, 0.3, 80, 0.02, 1,"
      " 0.02, 178, 0.17, 0.45, 4.5, 3.4e-6, 3.4e-6, 78, 0.01, 3, 1e-16);"
      "INSERT INTO run_obligors VALUES (1, 1, 'OLD-2', 'Old Two', 'invalid_input', 'line 9: field', '{}',"
      " NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL);");
  REQUIRE(raw_query(path, "SELECT max(version) FROM firmcall_schema") == "1");

  {
    // Read-only (the reading commands): read at version 1 as it is, the file left byte for byte.
    const std::string bytes = read_file(path);
    const RunStore reader(path, StoreOpen::read_only, 5.0);
    CHECK(reader.schema_version() == 1);
    const auto old = reader.obligors(1);
    REQUIRE(old.size() == 2);
    CHECK(old[0].measures.pd == 3.4e-6);
    CHECK(old[0].grade.empty());
    CHECK(std::isnan(old[0].pd_calibrated));
    CHECK(reader.runs().at(0).driving_pd == DrivingPd::model);
    CHECK_FALSE(reader.runs().at(0).calibration.present());
    CHECK(reader.series("OLD-1").size() == 1);
    CHECK(read_file(path) == bytes);
  }

  RunStore store(path, StoreOpen::existing, 5.0);
  CHECK(store.schema_version() == kStoreSchemaVersion);
  CHECK(kStoreSchemaVersion == 3);
  CHECK(raw_query(path, "SELECT note FROM firmcall_schema WHERE version = 2") ==
        "grade of each obligor; index by obligor id");
  CHECK(raw_query(path, "SELECT note FROM firmcall_schema WHERE version = 3") ==
        "calibrated one-year PD of each obligor; driving PD and calibration of each run");
  CHECK(raw_query(path, "SELECT count(*) FROM sqlite_master WHERE name = 'run_obligors_by_obligor'") == "1");
  // The old run reads as before; its grades are unknown (NULL), not invented.
  const auto runs = store.runs();
  REQUIRE(runs.size() == 1);
  CHECK(runs[0].book_label == "old book");
  const auto old = store.obligors(1);
  REQUIRE(old.size() == 2);
  CHECK(old[0].id == "OLD-1");
  CHECK(old[0].measures.pd == 3.4e-6);
  CHECK(old[0].measures.distance_to_default == 4.5);
  CHECK(old[0].grade.empty());
  CHECK(std::isnan(old[0].pd_calibrated));  // recorded before calibrations were stored
  CHECK(old[1].status == RowStatus::invalid_input);
  CHECK_FALSE(old[1].has_inputs);
  // New runs go in with their grades.
  const auto id = write_run(store, run_info("2026-11-06"), {scored_obligor("OLD-1", 0.02)});
  CHECK(store.obligors(id)[0].grade == "FC8");
  CHECK(store.series("OLD-1").size() == 2);
  CHECK(raw_query(path, "PRAGMA integrity_check") == "ok");
}

TEST_CASE("a run recorded with a calibration keeps its calibrated PD and calibration") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  RunStore store(path, StoreOpen::create, 1.0);
  RunInfo info = run_info("2026-11-06");
  info.driving_pd = DrivingPd::calibrated;
  info.calibration = {.file = "cal.yaml", .method = "logistic", .data_sha256 = std::string(64, 'c')};
  StoredObligor a = scored_obligor("A", 0.01);
  a.pd_calibrated = 0.1 + 0.2;  // not a short decimal: checks exact round trip
  a.pd_calibrated_lower = 0.25;
  a.pd_calibrated_upper = 0.35;
  a.pd_calibrated_extrapolated = true;
  const auto id = write_run(store, info, {a, scored_obligor("B", 0.02)});
  const RunInfo back = store.select(std::to_string(id));
  CHECK(back.driving_pd == DrivingPd::calibrated);
  CHECK(back.calibration == info.calibration);
  const auto rows = store.obligors(id);
  REQUIRE(rows.size() == 2);
  CHECK(rows[0].pd_calibrated == 0.1 + 0.2);
  CHECK(rows[0].pd_calibrated_lower == 0.25);
  CHECK(rows[0].pd_calibrated_upper == 0.35);
  CHECK(rows[0].pd_calibrated_extrapolated);
  CHECK(std::isnan(rows[1].pd_calibrated));  // none given: NULL, not 0
  CHECK(raw_query(path, "SELECT count(*) FROM run_obligors WHERE pd_calibrated IS NULL") == "1");
  CHECK(store.series("A").at(0).obligor.pd_calibrated == 0.1 + 0.2);
  CHECK(store.series("A").at(0).run.calibration.method == "logistic");
  // A run without a calibration stores the model PD as driving and NULL for the calibration.
  const auto plain = write_run(store, run_info("2026-11-13"), {scored_obligor("A", 0.01)});
  CHECK(store.select(std::to_string(plain)).driving_pd == DrivingPd::model);
  CHECK(raw_query(path, "SELECT count(*) FROM runs WHERE calibration_method IS NULL") == "1");
  // A text in a calibrated PD column (another program) is refused by name, never read as 0.
  raw_sql(path, "UPDATE run_obligors SET pd_calibrated = 'high' WHERE obligor_id = 'B'");
  CHECK_THROWS_WITH_AS(store.obligors(id),
                       ("history store '" + path +
                        "': run 1, obligor 'B', column pd_calibrated: expected a number, got text 'high' "
                        "(written by another program?)")
                           .c_str(),
                       InputError);
}

TEST_CASE("a store from a newer firmcall is refused untouched") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  {
    RunStore store(path, StoreOpen::create, 1.0);
    write_run(store, run_info("2026-11-06"), book_of(1, "A", 0.01));
  }
  raw_sql(path, "INSERT INTO firmcall_schema VALUES (99, '2030-01-01T00:00:00Z', 'from the future')");
  const std::string before = read_file(path);
  CHECK_THROWS_WITH_AS(
      RunStore(path, StoreOpen::existing, 1.0),
      ("history store '" + path + "': schema version 99 was written by a newer firmcall; this one " +
       "reads up to version " + std::to_string(kStoreSchemaVersion) + " (left untouched)")
          .c_str(),
      InputError);
  CHECK(read_file(path) == before);
}

TEST_CASE("a writer killed in the middle of a run leaves the earlier runs intact and no half run") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  {
    RunStore store(path, StoreOpen::create, 5.0);
    write_run(store, run_info("2026-11-06"), book_of(300, "A", 0.01));
    write_run(store, run_info("2026-11-13"), book_of(300, "A", 0.02));
  }
  const auto size_before = std::filesystem::file_size(path);
  // The child writes far more rows than SQLite's page cache holds (about 2 MB by default), so pages
  // of the unfinished run reach the database file before the kill; the rollback journal must undo
  // them. Kill points: early, and well past the first cache spills.
  for (int kill_after : {10, 60000}) {
    CAPTURE(kill_after);
    Signal in_run;
    const pid_t pid = ::fork();
    REQUIRE(pid >= 0);
    if (pid == 0) {
      try {
        RunStore store(path, StoreOpen::create, 5.0);
        RunWriter w(store, run_info("2026-11-20"));
        for (int i = 0;; ++i) {
          w.add(scored_obligor(numbered("B", i), 0.03));
          if (i == kill_after) in_run.send();
        }
      } catch (...) {
      }
      ::_exit(3);
    }
    REQUIRE(in_run.wait());
    ::kill(pid, SIGKILL);
    int status = 0;
    ::waitpid(pid, &status, 0);
    CHECK(WIFSIGNALED(status));
    CHECK(WTERMSIG(status) == SIGKILL);
    if (kill_after > 1000) {
      // The unfinished run did reach the disk: the file grew and a hot journal was left behind.
      CHECK(std::filesystem::file_size(path) > size_before);
      CHECK(std::filesystem::exists(path + "-journal"));
    }
    // A new reader rolls the hot journal back and sees exactly the two earlier runs.
    RunStore store(path, StoreOpen::existing, 5.0);
    const auto runs = store.runs();
    REQUIRE(runs.size() == 2);
    CHECK(runs[0].obligor_count == 300);
    CHECK(runs[1].obligor_count == 300);
    CHECK(store.obligors(runs[0].run_id).size() == 300);
    CHECK(store.obligors(runs[1].run_id).size() == 300);
    CHECK(store.obligors(runs[1].run_id + 1).empty());
    CHECK(store.series("B1").empty());
    CHECK(raw_query(path, "PRAGMA integrity_check") == "ok");
    CHECK(raw_query(path, "SELECT count(*) FROM run_obligors") == "600");
  }
  // And the store takes the next run normally.
  RunStore store(path, StoreOpen::create, 5.0);
  write_run(store, run_info("2026-11-20"), book_of(300, "A", 0.04));
  CHECK(store.runs().size() == 3);
}

TEST_CASE("two writers at once: the second waits, or reports busy after its timeout, nothing is lost") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  {
    RunStore store(path, StoreOpen::create, 5.0);
    write_run(store, run_info("2026-11-06"), book_of(50, "A", 0.01));
  }
  Signal in_run, go_on;
  const pid_t first = ::fork();
  REQUIRE(first >= 0);
  if (first == 0) {  // writer 1: holds the write transaction until told to finish
    int code = 3;
    try {
      RunStore store(path, StoreOpen::create, 5.0);
      RunWriter w(store, run_info("2026-11-13"));
      for (int i = 0; i < 5000; ++i) w.add(scored_obligor(numbered("A", i), 0.02));
      in_run.send();
      go_on.wait();
      w.commit();
      code = 0;
    } catch (...) {
    }
    ::_exit(code);
  }
  REQUIRE(in_run.wait());
  {
    // A writer with a short timeout gets a clear busy error; readers meanwhile see no half run.
    RunStore store(path, StoreOpen::create, 0.2);
    CHECK_THROWS_WITH_AS(RunWriter(store, run_info("2026-11-14")),
                         ("history store '" + path +
                          "': busy: another process has been using it for more than 0.2 s "
                          "(monitoring.busy_timeout_seconds); nothing was written, try again")
                             .c_str(),
                         StoreBusy);
    CHECK(store.runs().size() == 1);
  }
  // A writer with a long timeout waits for the first one and then succeeds.
  const pid_t second = ::fork();
  REQUIRE(second >= 0);
  if (second == 0) {
    int code = 3;
    try {
      RunStore store(path, StoreOpen::create, 60.0);
      write_run(store, run_info("2026-11-14"), book_of(4000, "C", 0.03));
      code = 0;
    } catch (...) {
    }
    ::_exit(code);
  }
  go_on.send();
  int s1 = 0, s2 = 0;
  ::waitpid(first, &s1, 0);
  ::waitpid(second, &s2, 0);
  CHECK((WIFEXITED(s1) && WEXITSTATUS(s1) == 0));
  CHECK((WIFEXITED(s2) && WEXITSTATUS(s2) == 0));
  RunStore store(path, StoreOpen::existing, 5.0);
  const auto runs = store.runs();
  REQUIRE(runs.size() == 3);
  CHECK(runs[1].obligor_count == 5000);
  CHECK(runs[2].obligor_count == 4000);
  CHECK(store.obligors(runs[1].run_id).size() == 5000);
  CHECK(store.obligors(runs[2].run_id).size() == 4000);
}

TEST_CASE("a store that lost its application_id opens when its tables are firmcall's; else the true reason") {
  TempDir dir;
  const std::string path = dir.file("unmarked.sqlite");
  {
    RunStore store(path, StoreOpen::create, 1.0);
    write_run(store, run_info("2026-11-06"), book_of(2, "A", 0.01));
  }
  // As a copy made by a program that does not keep the header's application_id leaves it.
  raw_sql(path, "PRAGMA application_id = 0");
  REQUIRE(raw_query(path, "PRAGMA application_id") == "0");
  {
    RunStore store(path, StoreOpen::existing, 1.0);
    REQUIRE(store.runs().size() == 1);
    CHECK(store.obligors(store.runs()[0].run_id).size() == 2);
  }
  // A database with a table named runs of its own: the reason names what is missing.
  const std::string other = dir.file("other.sqlite");
  raw_sql(other, "CREATE TABLE runs (id INTEGER, distance REAL);");
  const std::string before = read_file(other);
  try {
    RunStore store(other, StoreOpen::existing, 1.0);
    FAIL("opened a database that is not a store");
  } catch (const InputError& e) {
    const std::string m = e.what();
    CHECK(m.find("has some of firmcall's tables but not all of the schema") != std::string::npos);
    CHECK(m.find("table firmcall_schema") != std::string::npos);
    CHECK(m.find("runs columns run_id, as_of") != std::string::npos);
    CHECK(m.find("table run_obligors") != std::string::npos);
    CHECK(m.find("no firmcall tables") == std::string::npos);
  }
  CHECK(read_file(other) == before);
}

TEST_CASE("a value that is not a number in a number column is reported, not read as 0") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  std::int64_t id = 0;
  {
    RunStore store(path, StoreOpen::create, 1.0);
    id = write_run(store, run_info("2026-11-06"), book_of(2, "A", 0.01));
  }
  const std::string first = raw_query(path, "SELECT obligor_id FROM run_obligors WHERE seq = 0");
  const std::string expected_prefix = "history store '" + path + "': run " + std::to_string(id) +
                                      ", obligor '" + first + "', column pd: expected a number, got ";
  for (const auto& [sql, got] : std::vector<std::pair<std::string, std::string>>{
           {"UPDATE run_obligors SET pd = 'n/a' WHERE seq = 0", "text 'n/a'"},
           {"UPDATE run_obligors SET pd = NULL WHERE seq = 0", "NULL"},
           {"UPDATE run_obligors SET pd = 1e999 WHERE seq = 0", "inf"},
       }) {
    CAPTURE(sql);
    raw_sql(path, sql);
    RunStore store(path, StoreOpen::existing, 1.0);
    CHECK_THROWS_WITH_AS(store.obligors(id),
                         (expected_prefix + got + " (written by another program?)").c_str(), InputError);
    CHECK_THROWS_AS(store.series(first), InputError);
  }
  // A number written as text that SQLite cannot convert in another column is named too.
  raw_sql(path, "UPDATE run_obligors SET pd = 0.01, equity_vol = 'high' WHERE seq = 0");
  RunStore store(path, StoreOpen::existing, 1.0);
  CHECK_THROWS_WITH_AS(
      store.obligors(id),
      ("history store '" + path + "': run " + std::to_string(id) + ", obligor '" + first +
       "', column equity_vol: expected a number, got text 'high' (written by another program?)")
          .c_str(),
      InputError);
}

TEST_CASE("a second run of the same book and as-of date: allowed, refused or replaced") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  RunStore store(path, StoreOpen::create, 5.0);
  const auto first = write_run(store, run_info("2026-11-06"), book_of(3, "A-", 0.01));
  CHECK(write_run(store, run_info("2026-11-13"), book_of(3, "A-", 0.01)) == first + 1);
  CHECK(store.same_book_runs("2026-11-06", std::string(64, 'a')).size() == 1);
  CHECK(store.same_book_runs("2026-11-06", std::string(64, 'b')).empty());
  {
    RunWriter w(store, run_info("2026-11-06"), SameBook::allow);  // as before: no check
    CHECK(w.commit() == first + 2);
  }
  REQUIRE(store.same_book_runs("2026-11-06", std::string(64, 'a')).size() == 2);

  const std::string before = read_file(path);
  try {
    RunWriter w(store, run_info("2026-11-06"), SameBook::refuse);
    FAIL("expected SameBookRun");
  } catch (const SameBookRun& e) {
    CHECK(e.run_ids() == std::vector<std::int64_t>{first, first + 2});
    CHECK(std::string(e.what()).find("runs 1 and 3 already hold this book as of 2026-11-06 (input SHA-256 "
                                     "aaaaaaaaaaaa...); nothing was written") != std::string::npos);
  }
  CHECK_THROWS_AS(store.refuse_same_book(run_info("2026-11-06")), SameBookRun);
  CHECK_NOTHROW(store.refuse_same_book(run_info("2026-11-20")));
  CHECK(read_file(path) == before);

  RunWriter w(store, run_info("2026-11-06"), SameBook::replace);
  for (const auto& o : book_of(2, "B-", 0.02)) w.add(o);
  REQUIRE(w.replaced().size() == 2);
  CHECK(w.replaced()[0].run_id == first);
  CHECK(w.replaced()[1].run_id == first + 2);
  const auto id = w.commit();
  CHECK(id == first + 3);  // after theirs: an id is not given back
  const auto runs = store.runs();
  REQUIRE(runs.size() == 2);
  CHECK(runs[0].run_id == id);  // 2026-11-06
  CHECK(runs[1].run_id == first + 1);
  CHECK(store.obligors(id).size() == 2);
  CHECK(raw_query(path, "SELECT count(*) FROM run_obligors WHERE run_id IN (1, 3)") == "0");
}

TEST_CASE("remove_run deletes one run and its obligors in one transaction, nothing else") {
  TempDir dir;
  const std::string path = dir.file("h.sqlite");
  RunStore store(path, StoreOpen::create, 5.0);
  write_run(store, run_info("2026-11-06"), book_of(3, "A-", 0.01));
  write_run(store, run_info("2026-11-13"), book_of(4, "A-", 0.02));
  write_run(store, run_info("2026-11-20"), book_of(5, "A-", 0.03));
  const RemovedRun removed = store.remove_run(2);
  CHECK(removed.run.run_id == 2);
  CHECK(removed.run.as_of == "2026-11-13");
  CHECK(removed.obligor_rows == 4);
  const auto runs = store.runs();
  REQUIRE(runs.size() == 2);
  CHECK(runs[0].run_id == 1);
  CHECK(runs[1].run_id == 3);
  CHECK(store.obligors(1).size() == 3);
  CHECK(store.obligors(3).size() == 5);
  CHECK(raw_query(path, "SELECT count(*) FROM run_obligors") == "8");
  CHECK(store.series("A-0").size() == 2);
  const std::string bytes = read_file(path);
  CHECK_THROWS_WITH_AS(store.remove_run(2), doctest::Contains("no run with id 2; nothing was removed"),
                       InputError);
  CHECK(read_file(path) == bytes);
  RunStore reader(path, StoreOpen::read_only, 5.0);
  CHECK_THROWS_WITH_AS(reader.remove_run(1), doctest::Contains("opened for reading only"), InputError);
  CHECK(read_file(path) == bytes);
  CHECK(raw_query(path, "PRAGMA integrity_check") == "ok");
}
