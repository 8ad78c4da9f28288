// History store on SQLite (C API). One run is one transaction; see run_store.hpp.
#include "firmcall/monitor/run_store.hpp"

#include <sqlite3.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>
#include <string_view>
#include <vector>

#include "firmcall/monitor/store_error.hpp"
#include "firmcall/util/timestamp.hpp"

namespace firmcall {

namespace {

std::string in_store(const std::string& path, const std::string& what) {
  return "history store '" + path + "': " + what;
}

std::string seconds_text(double s) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g", s);
  return buf;
}

std::optional<RowStatus> row_status_from_string(std::string_view s) noexcept {
  for (RowStatus r : {RowStatus::ok, RowStatus::invalid_input, RowStatus::not_converged}) {
    if (to_string(r) == s) return r;
  }
  return std::nullopt;
}

// One forward step of the schema. A fresh store runs every step in order.
struct Migration {
  int version;
  const char* note;
  const char* sql;
};

constexpr Migration kMigrations[] = {
    {1, "runs and their obligors",
     "CREATE TABLE runs ("
     " run_id INTEGER PRIMARY KEY,"
     " as_of TEXT NOT NULL,"
     " recorded_at TEXT NOT NULL,"
     " book_path TEXT NOT NULL,"
     " book_label TEXT NOT NULL,"
     " input_sha256 TEXT NOT NULL,"
     " settings_json TEXT NOT NULL,"
     " tool_version TEXT NOT NULL,"
     " obligor_count INTEGER NOT NULL);"
     "CREATE TABLE run_obligors ("
     " run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,"
     " seq INTEGER NOT NULL,"
     " obligor_id TEXT NOT NULL,"
     " name TEXT NOT NULL,"
     " status TEXT NOT NULL,"
     " message TEXT NOT NULL,"
     " fields_json TEXT NOT NULL,"
     " equity_value REAL, equity_vol REAL, default_point REAL, rate REAL, horizon REAL, drift REAL,"
     " asset_value REAL, asset_vol REAL, leverage REAL, distance_to_default REAL, pd REAL,"
     " pd_risk_neutral REAL, debt_value REAL, spread_bp REAL,"
     " iterations INTEGER, residual REAL,"
     " PRIMARY KEY (run_id, seq)) WITHOUT ROWID;"
     "CREATE INDEX runs_by_date ON runs(as_of, run_id);"},
    {2, "grade of each obligor; index by obligor id",
     "ALTER TABLE run_obligors ADD COLUMN grade TEXT;"
     "CREATE INDEX run_obligors_by_obligor ON run_obligors(obligor_id, run_id);"},
    {3, "calibrated one-year PD of each obligor; driving PD and calibration of each run",
     "ALTER TABLE runs ADD COLUMN driving_pd TEXT;"
     "ALTER TABLE runs ADD COLUMN calibration_file TEXT;"
     "ALTER TABLE runs ADD COLUMN calibration_method TEXT;"
     "ALTER TABLE runs ADD COLUMN calibration_sha256 TEXT;"
     "ALTER TABLE run_obligors ADD COLUMN pd_calibrated REAL;"
     "ALTER TABLE run_obligors ADD COLUMN pd_calibrated_lower REAL;"
     "ALTER TABLE run_obligors ADD COLUMN pd_calibrated_upper REAL;"
     "ALTER TABLE run_obligors ADD COLUMN pd_calibrated_extrapolated INTEGER;"},
};

constexpr const char* kRunColumns =
    "run_id, as_of, recorded_at, book_path, book_label, input_sha256, settings_json, tool_version, "
    "obligor_count";
constexpr const char* kObligorColumns =
    "seq, obligor_id, name, status, message, fields_json, equity_value, equity_vol, default_point, rate, "
    "horizon, drift, asset_value, asset_vol, leverage, distance_to_default, pd, pd_risk_neutral, debt_value, "
    "spread_bp, iterations, residual, grade";
// Columns added by schema version 3 (read as NULL from an older store opened read-only).
constexpr const char* kRunColumnsV3 = "driving_pd, calibration_file, calibration_method, calibration_sha256";
constexpr const char* kObligorColumnsV3 =
    "pd_calibrated, pd_calibrated_lower, pd_calibrated_upper, pd_calibrated_extrapolated";
constexpr int kRunColumnCount = 13;
constexpr int kObligorColumnCount = 27;

// The run columns as a store of schema `version` holds them (NULL for later columns), each name
// prefixed with `prefix` (e.g. "r.").
std::string run_columns(int version, std::string_view prefix) {
  std::string out;
  const auto add = [&](std::string_view list) {
    while (!list.empty()) {
      const std::size_t comma = list.find(',');
      std::string_view name = list.substr(0, comma);
      while (!name.empty() && name.front() == ' ') name.remove_prefix(1);
      list = comma == std::string_view::npos ? std::string_view() : list.substr(comma + 1);
      if (!out.empty()) out += ", ";
      if (name != "NULL") out += prefix;
      out += name;
    }
  };
  add(kRunColumns);
  add(version >= 3 ? kRunColumnsV3 : "NULL, NULL, NULL, NULL");
  return out;
}

// The obligor columns as a store of schema `version` holds them (NULL for later columns).
std::string obligor_columns(int version) {
  std::string out = kObligorColumns;
  if (version < 2) out.replace(out.rfind("grade"), 5, "NULL");
  out += ", ";
  out += version >= 3 ? kObligorColumnsV3 : "NULL, NULL, NULL, NULL";
  return out;
}

}  // namespace

struct RunStore::Impl {
  std::string path;
  sqlite3* db = nullptr;
  double busy_timeout_seconds = 10.0;
  int version = 0;
  bool read_only = false;  ///< opened by a reading command: never written

  ~Impl() {
    if (db) sqlite3_close_v2(db);
  }

  [[noreturn]] void fail(int rc, std::string_view doing) const {
    const int primary = rc & 0xff;
    const std::string detail = db ? sqlite3_errmsg(db) : sqlite3_errstr(rc);
    if (primary == SQLITE_BUSY || primary == SQLITE_LOCKED) {
      throw StoreBusy(
          in_store(path, "busy: another process has been using it for more than " +
                             seconds_text(busy_timeout_seconds) +
                             " s (monitoring.busy_timeout_seconds); nothing was written, try again"));
    }
    if (primary == SQLITE_NOTADB) {
      throw InputError(
          in_store(path, "not an SQLite database, so not a firmcall history store (left untouched)"));
    }
    if (primary == SQLITE_CORRUPT) throw InputError(in_store(path, "the database is damaged: " + detail));
    if (primary == SQLITE_READONLY) throw InputError(in_store(path, "cannot write to it: " + detail));
    if (primary == SQLITE_FULL) throw InputError(in_store(path, "the disk is full; nothing was written"));
    throw InputError(in_store(path, std::string(doing) + ": " + detail));
  }

  void exec(const char* sql, std::string_view doing) const {
    const int rc = sqlite3_exec(db, sql, nullptr, nullptr, nullptr);
    if (rc != SQLITE_OK) fail(rc, doing);
  }

  void rollback_quietly() const noexcept { sqlite3_exec(db, "ROLLBACK", nullptr, nullptr, nullptr); }
};

namespace detail {

// A prepared statement. Text bound with bind_text must outlive the next step().
class StoreStatement {
 public:
  StoreStatement(const RunStore::Impl& store, const std::string& sql) : store_(store) {
    const int rc = sqlite3_prepare_v2(store.db, sql.c_str(), static_cast<int>(sql.size()), &stmt_, nullptr);
    if (rc != SQLITE_OK) store.fail(rc, "preparing a query");
  }
  ~StoreStatement() { sqlite3_finalize(stmt_); }
  StoreStatement(const StoreStatement&) = delete;
  StoreStatement& operator=(const StoreStatement&) = delete;

  void bind_real(int i, double v) {
    check(std::isfinite(v) ? sqlite3_bind_double(stmt_, i, v) : sqlite3_bind_null(stmt_, i));
  }
  void bind_optional(int i, bool present, double v) { bind_real(i, present ? v : std::nan("")); }
  void bind_int(int i, std::int64_t v) { check(sqlite3_bind_int64(stmt_, i, v)); }
  void bind_text(int i, std::string_view s) {
    check(sqlite3_bind_text(stmt_, i, s.data(), static_cast<int>(s.size()), SQLITE_STATIC));
  }
  /// true: a row is ready; false: done.
  bool step() {
    const int rc = sqlite3_step(stmt_);
    if (rc == SQLITE_ROW) return true;
    if (rc == SQLITE_DONE) return false;
    store_.fail(rc, "running a query");
  }
  void reset() {
    sqlite3_reset(stmt_);
    sqlite3_clear_bindings(stmt_);
  }

  bool is_null(int c) const { return sqlite3_column_type(stmt_, c) == SQLITE_NULL; }
  /// True when column `c` holds a number: a REAL or INTEGER value, finite.
  bool is_number(int c) const {
    const int type = sqlite3_column_type(stmt_, c);
    return (type == SQLITE_FLOAT || type == SQLITE_INTEGER) && std::isfinite(sqlite3_column_double(stmt_, c));
  }
  /// Column `c`'s value as stored, for a message: "text 'abc'", "NULL", "a blob", "inf".
  std::string described(int c) const {
    switch (sqlite3_column_type(stmt_, c)) {
      case SQLITE_NULL:
        return "NULL";
      case SQLITE_TEXT:
        return "text '" + text(c) + "'";
      case SQLITE_BLOB:
        return "a blob";
      default:
        return sqlite3_column_double(stmt_, c) > 0 ? "inf" : "-inf";
    }
  }
  std::string column_name(int c) const {
    const char* n = sqlite3_column_name(stmt_, c);
    return n ? n : "?";
  }
  const std::string& store_path() const { return store_.path; }
  double real(int c) const { return is_null(c) ? std::nan("") : sqlite3_column_double(stmt_, c); }
  std::int64_t integer(int c) const { return sqlite3_column_int64(stmt_, c); }
  std::string text(int c) const {
    const auto* p = sqlite3_column_text(stmt_, c);
    return p ? std::string(reinterpret_cast<const char*>(p),
                           static_cast<std::size_t>(sqlite3_column_bytes(stmt_, c)))
             : std::string();
  }

 private:
  void check(int rc) const {
    if (rc != SQLITE_OK) store_.fail(rc, "binding a value");
  }
  const RunStore::Impl& store_;
  sqlite3_stmt* stmt_ = nullptr;
};

}  // namespace detail

namespace {

using Stmt = detail::StoreStatement;

RunInfo read_run(const Stmt& s) {
  RunInfo r;
  r.run_id = s.integer(0);
  r.as_of = s.text(1);
  r.recorded_at = s.text(2);
  r.book_path = s.text(3);
  r.book_label = s.text(4);
  r.input_sha256 = s.text(5);
  r.settings_json = s.text(6);
  r.tool_version = s.text(7);
  r.obligor_count = s.integer(8);
  r.driving_pd = s.text(9) == "calibrated" ? DrivingPd::calibrated : DrivingPd::model;
  r.calibration.file = s.text(10);
  r.calibration.method = s.text(11);
  r.calibration.data_sha256 = s.text(12);
  return r;
}

// InputError naming the store, the run, the obligor and the column when a number column of the row
// holds something else (text, a blob or an infinity written by another program; SQLite keeps what it
// is given), or when a scored row lacks its distance to default or PD: never read as 0.
void check_numbers(const Stmt& s, int c, std::int64_t run_id) {
  const bool scored = row_status_from_string(s.text(c + 3)) == RowStatus::ok;
  for (int k : {6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20, 21, 23, 24, 25, 26}) {
    if (s.is_number(c + k)) continue;
    const bool needed = scored && (k == 15 || k == 16);  // distance_to_default, pd
    if (s.is_null(c + k) && !needed) continue;
    std::string what = s.described(c + k);
    if (what.size() > 80) what = what.substr(0, 77) + "...";
    throw InputError(in_store(s.store_path(), "run " + std::to_string(run_id) + ", obligor '" +
                                                  s.text(c + 1) + "', column " + s.column_name(c + k) +
                                                  ": expected a number, got " + what +
                                                  " (written by another program?)"));
  }
}

// Reads kObligorColumns starting at column `c`, of run `run_id`.
StoredObligor read_obligor(const Stmt& s, int c, std::int64_t run_id) {
  check_numbers(s, c, run_id);
  StoredObligor o;
  o.seq = s.integer(c);
  o.id = s.text(c + 1);
  o.name = s.text(c + 2);
  o.status = row_status_from_string(s.text(c + 3)).value_or(RowStatus::invalid_input);
  o.message = s.text(c + 4);
  o.fields_json = s.text(c + 5);
  o.has_inputs = !s.is_null(c + 6);
  o.inputs = {.equity_value = s.real(c + 6),
              .equity_vol_annual = s.real(c + 7),
              .default_point = s.real(c + 8),
              .risk_free_rate_cc = s.real(c + 9),
              .horizon_years = s.real(c + 10),
              .drift_annual = s.real(c + 11)};
  o.has_measures = o.status == RowStatus::ok && !s.is_null(c + 16);
  MertonMeasures& m = o.measures;
  m.asset_value = s.real(c + 12);
  m.asset_vol_annual = s.real(c + 13);
  m.default_point = o.inputs.default_point;
  m.leverage = s.real(c + 14);
  m.d1 = m.d2 = std::nan("");
  m.distance_to_default = s.real(c + 15);
  m.pd = s.real(c + 16);
  m.pd_risk_neutral = s.real(c + 17);
  m.debt_value = s.real(c + 18);
  m.spread_bp = s.real(c + 19);
  o.iterations = s.is_null(c + 20) ? -1 : static_cast<int>(s.integer(c + 20));
  o.residual = s.is_null(c + 21) ? -1.0 : s.real(c + 21);
  o.grade = s.text(c + 22);  // NULL (recorded before schema version 2) reads as ""
  // NULL (recorded without a calibration, or before schema version 3) reads as NaN.
  o.pd_calibrated = s.real(c + 23);
  o.pd_calibrated_lower = s.real(c + 24);
  o.pd_calibrated_upper = s.real(c + 25);
  o.pd_calibrated_extrapolated = !s.is_null(c + 26) && s.integer(c + 26) != 0;
  return o;
}

// The column names of `table` in `db` (none when there is no such table).
std::vector<std::string> table_columns(sqlite3* db, const char* table) {
  std::vector<std::string> names;
  sqlite3_stmt* st = nullptr;
  if (sqlite3_prepare_v2(db, "SELECT name FROM pragma_table_info(?1)", -1, &st, nullptr) == SQLITE_OK &&
      sqlite3_bind_text(st, 1, table, -1, SQLITE_STATIC) == SQLITE_OK) {
    while (sqlite3_step(st) == SQLITE_ROW) {
      const auto* t = sqlite3_column_text(st, 0);
      names.emplace_back(t ? reinterpret_cast<const char*>(t) : "");
    }
  }
  sqlite3_finalize(st);
  return names;
}

// The comma-separated names of `list` that `have` lacks, joined by ", ".
std::string missing_names(std::string_view list, const std::vector<std::string>& have) {
  std::string missing;
  while (!list.empty()) {
    const std::size_t comma = list.find(',');
    std::string_view name = list.substr(0, comma);
    while (!name.empty() && name.front() == ' ') name.remove_prefix(1);
    list = comma == std::string_view::npos ? std::string_view() : list.substr(comma + 1);
    if (name == "grade") continue;  // added by schema version 2, which opening adds
    if (std::find(have.begin(), have.end(), name) == have.end()) {
      missing += (missing.empty() ? "" : ", ") + std::string(name);
    }
  }
  return missing;
}

// Why a database without firmcall's application_id cannot be opened as a store; empty when it can:
// it is empty, or it holds firmcall's tables with their columns (a store from before the mark, or a
// copy that lost it).
std::string unmarked_store_problem(sqlite3* db) {
  sqlite3_stmt* st = nullptr;
  int tables = -1;
  if (sqlite3_prepare_v2(db, "SELECT count(*) FROM sqlite_master", -1, &st, nullptr) == SQLITE_OK &&
      sqlite3_step(st) == SQLITE_ROW) {
    tables = sqlite3_column_int(st, 0);
  }
  sqlite3_finalize(st);
  if (tables < 0) return "cannot be read as an SQLite database (left untouched)";
  if (tables == 0) return {};
  const std::vector<std::string> schema = table_columns(db, "firmcall_schema");
  const std::vector<std::string> runs = table_columns(db, "runs");
  const std::vector<std::string> obligors = table_columns(db, "run_obligors");
  if (schema.empty() && runs.empty() && obligors.empty()) {
    return "an SQLite database of another application (it has no firmcall tables), not a firmcall "
           "history store (left untouched)";
  }
  std::string lacks;
  const auto need = [&lacks](const char* table, const std::vector<std::string>& have, std::string_view cols) {
    if (have.empty()) {
      lacks += (lacks.empty() ? "" : "; ") + std::string("table ") + table;
      return;
    }
    const std::string missing = missing_names(cols, have);
    if (!missing.empty()) lacks += (lacks.empty() ? "" : "; ") + std::string(table) + " columns " + missing;
  };
  need("firmcall_schema", schema, "version, applied_at, note");
  need("runs", runs, kRunColumns);
  need("run_obligors", obligors, kObligorColumns);
  if (lacks.empty()) return {};
  return "has some of firmcall's tables but not all of the schema (missing " + lacks +
         "), so it is not a firmcall history store (left untouched)";
}

// Refuses, before SQLite writes anything, a file that is not an empty file, an empty SQLite
// database, or a firmcall store.
void check_foreign(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(in_store(path, "cannot open the file"));
  std::array<unsigned char, 100> header{};
  in.read(reinterpret_cast<char*>(header.data()), header.size());
  const auto got = static_cast<std::size_t>(in.gcount());
  if (got == 0) return;  // an empty file is an empty database (SQLite's own convention)
  if (got < header.size() || std::memcmp(header.data(), "SQLite format 3", 16) != 0) {
    throw InputError(
        in_store(path, "not an SQLite database, so not a firmcall history store (left untouched)"));
  }
  const std::uint32_t app_id = (std::uint32_t{header[68]} << 24) | (std::uint32_t{header[69]} << 16) |
                               (std::uint32_t{header[70]} << 8) | std::uint32_t{header[71]};
  if (app_id == static_cast<std::uint32_t>(kStoreApplicationId)) return;
  if (app_id != 0) {
    char buf[16];
    std::snprintf(buf, sizeof buf, "0x%08x", app_id);
    throw InputError(
        in_store(path, std::string("an SQLite database of another application (application_id ") + buf +
                           "), not a firmcall history store (left untouched)"));
  }
  // application_id 0: an empty database may become a store, and a store whose mark was lost (an
  // older or copied store) is one when its tables and columns are firmcall's.
  sqlite3* db = nullptr;
  std::string problem;
  if (sqlite3_open_v2(path.c_str(), &db, SQLITE_OPEN_READONLY, nullptr) == SQLITE_OK) {
    problem = unmarked_store_problem(db);
  } else {
    problem = "cannot be read as an SQLite database (left untouched)";
  }
  sqlite3_close_v2(db);
  if (!problem.empty()) throw InputError(in_store(path, problem));
}

int read_version(const RunStore::Impl& im) {
  Stmt has(im, "SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name = 'firmcall_schema'");
  has.step();
  if (has.integer(0) == 0) return 0;
  Stmt v(im, "SELECT coalesce(max(version), 0) FROM firmcall_schema");
  v.step();
  return static_cast<int>(v.integer(0));
}

void migrate(RunStore::Impl& im) {
  const auto too_new = [&im](int v) {
    return InputError(
        in_store(im.path, "schema version " + std::to_string(v) +
                              " was written by a newer firmcall; this one reads up to version " +
                              std::to_string(kStoreSchemaVersion) + " (left untouched)"));
  };
  int v = read_version(im);
  if (v > kStoreSchemaVersion) throw too_new(v);
  if (v < kStoreSchemaVersion) {
    im.exec("BEGIN IMMEDIATE", "starting the schema upgrade");
    try {
      v = read_version(im);  // another process may have upgraded it meanwhile
      if (v > kStoreSchemaVersion) throw too_new(v);
      if (v == 0) {
        im.exec(
            "CREATE TABLE firmcall_schema (version INTEGER PRIMARY KEY, applied_at TEXT NOT NULL, "
            "note TEXT NOT NULL)",
            "creating the store");
        im.exec(("PRAGMA application_id = " + std::to_string(kStoreApplicationId)).c_str(),
                "creating the store");
      }
      for (const Migration& m : kMigrations) {
        if (m.version <= v) continue;
        im.exec(m.sql, "upgrading the schema to version " + std::to_string(m.version));
        Stmt mark(im, "INSERT INTO firmcall_schema (version, applied_at, note) VALUES (?, ?, ?)");
        const std::string now = utc_timestamp_now();
        mark.bind_int(1, m.version);
        mark.bind_text(2, now);
        mark.bind_text(3, m.note);
        mark.step();
      }
      im.exec("COMMIT", "finishing the schema upgrade");
    } catch (...) {
      im.rollback_quietly();
      throw;
    }
  }
  im.version = kStoreSchemaVersion;
}

// "run 3", "runs 3 and 4", "runs 3, 4 and 5".
std::string run_ids_text(const std::vector<RunInfo>& runs) {
  std::string out = runs.size() == 1 ? "run " : "runs ";
  for (std::size_t i = 0; i < runs.size(); ++i) {
    if (i > 0) out += i + 1 == runs.size() ? " and " : ", ";
    out += std::to_string(runs[i].run_id);
  }
  return out;
}

// The refusal of a second run of the same book as of the same date.
SameBookRun same_book_refusal(const std::string& path, const std::vector<RunInfo>& runs) {
  std::string what = run_ids_text(runs);
  if (runs.size() == 1) {
    what += " (recorded " + runs[0].recorded_at + " from '" + runs[0].book_path + "') already holds";
  } else {
    what += " already hold";
  }
  what += " this book as of " + runs[0].as_of + " (input SHA-256 " + runs[0].input_sha256.substr(0, 12) +
          "...); nothing was written";
  std::vector<std::int64_t> ids;
  ids.reserve(runs.size());
  for (const RunInfo& r : runs) ids.push_back(r.run_id);
  return SameBookRun(in_store(path, what), std::move(ids));
}

}  // namespace

RunStore::RunStore(const std::string& path, StoreOpen mode, double busy_timeout_seconds)
    : impl_(std::make_unique<Impl>()) {
  namespace fs = std::filesystem;
  Impl& im = *impl_;
  im.path = path;
  im.busy_timeout_seconds = busy_timeout_seconds;
  im.read_only = mode == StoreOpen::read_only;
  std::error_code ec;
  const fs::file_status st = fs::status(path, ec);
  if (!fs::exists(st)) {
    if (mode != StoreOpen::create) {
      throw StoreError("no history store at '" + path + "'", StoreAdvice::record_first);
    }
    const fs::path folder = fs::path(path).parent_path();
    if (!folder.empty()) {
      fs::create_directories(folder, ec);
      if (ec)
        throw InputError(
            in_store(path, "cannot create the folder '" + folder.string() + "': " + ec.message()));
    }
  } else if (fs::is_directory(st)) {
    throw InputError(in_store(path, "is a folder, not a file"));
  } else {
    // Reading commands never turn an empty file into a store: only recording creates one.
    if (mode == StoreOpen::read_only && fs::file_size(path, ec) == 0 && !ec) {
      throw StoreError("'" + path + "' is an empty file, not a history store (left untouched)",
                       StoreAdvice::record_first);
    }
    check_foreign(path);
  }
  const auto open = [&](int flags) {
    // One connection per RunStore, used by one thread at a time: no SQLite mutexes needed.
    const int rc = sqlite3_open_v2(path.c_str(), &im.db, flags | SQLITE_OPEN_NOMUTEX, nullptr);
    if (rc != SQLITE_OK) im.fail(rc, "cannot open it");
    sqlite3_busy_timeout(im.db, static_cast<int>(std::min(busy_timeout_seconds * 1000.0, 1e9)));
    im.exec("PRAGMA foreign_keys = ON", "opening it");
  };
  // A journal left by a killed writer is rolled back on open, which needs a writable connection.
  const bool hot_journal = fs::exists(path + "-journal", ec) || fs::exists(path + "-wal", ec);
  if (mode == StoreOpen::read_only && !hot_journal) {
    // Reading commands open the store read-only; only an older schema is upgraded in place.
    open(SQLITE_OPEN_READONLY);
    const int v = read_version(im);
    if (v == 0) {
      throw StoreError("'" + path + "' holds no firmcall tables, not a history store (left untouched)",
                       StoreAdvice::record_first);
    }
    if (v > kStoreSchemaVersion) {
      throw InputError(in_store(path, "schema version " + std::to_string(v) +
                                          " was written by a newer firmcall; this one reads up to version " +
                                          std::to_string(kStoreSchemaVersion) + " (left untouched)"));
    }
    // An older schema is read as it is (columns it lacks read as NULL) and never written: only
    // recording upgrades a store.
    im.version = v;
    return;
  }
  open(SQLITE_OPEN_READWRITE | (mode == StoreOpen::create ? SQLITE_OPEN_CREATE : 0));
  if (mode == StoreOpen::read_only) {
    // Writable only so that SQLite can roll the killed writer's journal back (reading the version
    // does it); a reading command still does not upgrade the schema.
    const int v = read_version(im);
    if (v == 0) {
      throw StoreError("'" + path + "' holds no firmcall tables, not a history store (left untouched)",
                       StoreAdvice::record_first);
    }
    if (v <= kStoreSchemaVersion) {
      im.version = v;
      return;
    }
  }
  migrate(im);
}

RunStore::~RunStore() = default;

const std::string& RunStore::path() const noexcept {
  return impl_->path;
}

int RunStore::schema_version() const {
  return read_version(*impl_);
}

std::vector<RunInfo> RunStore::runs() const {
  Stmt s(*impl_, "SELECT " + run_columns(impl_->version, "") + " FROM runs ORDER BY as_of, run_id");
  std::vector<RunInfo> out;
  while (s.step()) out.push_back(read_run(s));
  return out;
}

RunInfo RunStore::select(std::string_view selector) const {
  const Impl& im = *impl_;
  const std::string base = "SELECT " + run_columns(im.version, "") + " FROM runs ";
  if (selector.empty()) {
    Stmt s(im, base + "ORDER BY as_of DESC, run_id DESC LIMIT 1");
    if (!s.step()) throw InputError(in_store(im.path, "no runs recorded yet"));
    return read_run(s);
  }
  const std::string sel(selector);
  if (sel.find_first_not_of("0123456789") == std::string::npos && sel.size() <= 18) {
    Stmt s(im, base + "WHERE run_id = ?");
    s.bind_int(1, std::stoll(sel));
    if (!s.step()) throw InputError(in_store(im.path, "no run with id " + sel));
    return read_run(s);
  }
  if (is_calendar_date(sel)) {
    Stmt s(im, base + "WHERE as_of = ? ORDER BY run_id DESC LIMIT 1");
    s.bind_text(1, sel);
    if (!s.step()) throw InputError(in_store(im.path, "no run as of " + sel));
    return read_run(s);
  }
  throw InputError("expected a run id or an as-of date YYYY-MM-DD, got '" + sel + "'");
}

std::optional<RunInfo> RunStore::previous(const RunInfo& run) const {
  Stmt s(*impl_, "SELECT " + run_columns(impl_->version, "") +
                     " FROM runs WHERE as_of < ?1 OR (as_of = ?1 AND run_id < ?2) "
                     "ORDER BY as_of DESC, run_id DESC LIMIT 1");
  s.bind_text(1, run.as_of);
  s.bind_int(2, run.run_id);
  if (!s.step()) return std::nullopt;
  return read_run(s);
}

std::vector<StoredObligor> RunStore::obligors(std::int64_t run_id, bool with_fields) const {
  std::string columns = obligor_columns(impl_->version);
  if (!with_fields) columns.replace(columns.find("fields_json"), 11, "''");
  std::vector<StoredObligor> out;
  {
    Stmt n(*impl_, "SELECT obligor_count FROM runs WHERE run_id = ?");
    n.bind_int(1, run_id);
    if (n.step()) out.reserve(static_cast<std::size_t>(std::max<std::int64_t>(n.integer(0), 0)));
  }
  Stmt s(*impl_, "SELECT " + columns + " FROM run_obligors WHERE run_id = ? ORDER BY seq");
  s.bind_int(1, run_id);
  while (s.step()) out.push_back(read_obligor(s, 0, run_id));
  return out;
}

std::vector<RunStore::SeriesPoint> RunStore::series(std::string_view obligor_id) const {
  std::string sql = "SELECT " + run_columns(impl_->version, "r.") + ", ";
  sql += obligor_columns(impl_->version);
  sql +=
      " FROM run_obligors o JOIN runs r ON r.run_id = o.run_id WHERE o.obligor_id = ? "
      "ORDER BY r.as_of, r.run_id, o.seq";
  Stmt s(*impl_, sql);
  s.bind_text(1, obligor_id);
  std::vector<SeriesPoint> out;
  std::int64_t last_run = -1;
  while (s.step()) {
    RunInfo run = read_run(s);
    SeriesPoint p{run, read_obligor(s, kRunColumnCount, run.run_id)};
    if (p.run.run_id == last_run) continue;  // a repeated id in one book: its first entry counts
    last_run = p.run.run_id;
    out.push_back(std::move(p));
  }
  return out;
}

std::vector<RunInfo> RunStore::same_book_runs(std::string_view as_of, std::string_view input_sha256) const {
  Stmt s(*impl_, "SELECT " + run_columns(impl_->version, "") +
                     " FROM runs WHERE as_of = ? AND input_sha256 = ? ORDER BY run_id");
  s.bind_text(1, as_of);
  s.bind_text(2, input_sha256);
  std::vector<RunInfo> out;
  while (s.step()) out.push_back(read_run(s));
  return out;
}

void RunStore::refuse_same_book(const RunInfo& run) const {
  const std::vector<RunInfo> earlier = same_book_runs(run.as_of, run.input_sha256);
  if (!earlier.empty()) throw same_book_refusal(impl_->path, earlier);
}

RemovedRun RunStore::remove_run(std::int64_t run_id) {
  Impl& im = *impl_;
  if (im.read_only) throw InputError(in_store(im.path, "opened for reading only; nothing was removed"));
  im.exec("BEGIN IMMEDIATE", "starting the removal");
  try {
    RemovedRun removed;
    {
      Stmt s(im, "SELECT " + run_columns(im.version, "") + " FROM runs WHERE run_id = ?");
      s.bind_int(1, run_id);
      if (!s.step()) {
        throw InputError(
            in_store(im.path, "no run with id " + std::to_string(run_id) + "; nothing was removed"));
      }
      removed.run = read_run(s);
    }
    {
      Stmt s(im, "DELETE FROM run_obligors WHERE run_id = ?");
      s.bind_int(1, run_id);
      s.step();
      removed.obligor_rows = sqlite3_changes(im.db);
    }
    {
      Stmt s(im, "DELETE FROM runs WHERE run_id = ?");
      s.bind_int(1, run_id);
      s.step();
    }
    im.exec("COMMIT", "finishing the removal");
    return removed;
  } catch (...) {
    im.rollback_quietly();
    throw;
  }
}

RunWriter::RunWriter(RunStore& store, const RunInfo& info, SameBook same) : store_(store) {
  RunStore::Impl& im = *store.impl_;
  if (!is_calendar_date(info.as_of)) {
    throw InputError(in_store(im.path, "as-of date must be a date YYYY-MM-DD, got '" + info.as_of + "'"));
  }
  im.exec("BEGIN IMMEDIATE", "starting the run");
  open_ = true;
  try {
    // Looked up inside the transaction: no other writer can add such a run until it ends.
    std::vector<RunInfo> earlier;
    if (same != SameBook::allow) {
      earlier = store.same_book_runs(info.as_of, info.input_sha256);
      if (!earlier.empty() && same == SameBook::refuse) throw same_book_refusal(im.path, earlier);
    }
    Stmt s(im,
           "INSERT INTO runs (as_of, recorded_at, book_path, book_label, input_sha256, settings_json, "
           "tool_version, obligor_count, driving_pd, calibration_file, calibration_method, "
           "calibration_sha256) VALUES (?, ?, ?, ?, ?, ?, ?, 0, ?, ?, ?, ?)");
    s.bind_text(1, info.as_of);
    s.bind_text(2, info.recorded_at);
    s.bind_text(3, info.book_path);
    s.bind_text(4, info.book_label);
    s.bind_text(5, info.input_sha256);
    s.bind_text(6, info.settings_json);
    s.bind_text(7, info.tool_version);
    s.bind_text(8, to_string(info.driving_pd));
    // A run without a calibration keeps NULL there.
    const auto text_or_null = [&s](int i, const std::string& v) {
      if (v.empty()) {
        s.bind_real(i, std::nan(""));
      } else {
        s.bind_text(i, v);
      }
    };
    text_or_null(9, info.calibration.file);
    text_or_null(10, info.calibration.method);
    text_or_null(11, info.calibration.data_sha256);
    s.step();
    run_id_ = sqlite3_last_insert_rowid(im.db);
    // Deleted after the insert, so that the new run's id follows theirs instead of taking one back.
    for (const RunInfo& r : earlier) {
      for (const char* sql :
           {"DELETE FROM run_obligors WHERE run_id = ?", "DELETE FROM runs WHERE run_id = ?"}) {
        Stmt d(im, sql);
        d.bind_int(1, r.run_id);
        d.step();
      }
    }
    replaced_ = std::move(earlier);
  } catch (...) {
    im.rollback_quietly();
    open_ = false;
    throw;
  }
}

RunWriter::~RunWriter() {
  if (open_) store_.impl_->rollback_quietly();
}

void RunWriter::add(const StoredObligor& o) {
  const RunStore::Impl& im = *store_.impl_;
  static_assert(kObligorColumnCount == 27);
  if (!insert_) {  // one statement per writer, kept across calls
    std::string sql = std::string("INSERT INTO run_obligors (run_id, ") + kObligorColumns + ", " +
                      kObligorColumnsV3 + ") VALUES (?";
    for (int i = 0; i < kObligorColumnCount; ++i) sql += ", ?";
    sql += ")";
    insert_ = std::make_unique<detail::StoreStatement>(im, sql);
  }
  detail::StoreStatement& s = *insert_;
  const MertonInputs& in = o.inputs;
  const MertonMeasures& m = o.measures;
  const bool mi = o.has_inputs;
  const bool mm = o.has_measures;
  s.bind_int(1, run_id_);
  s.bind_int(2, count_);
  s.bind_text(3, o.id);
  s.bind_text(4, o.name);
  s.bind_text(5, to_string(o.status));
  s.bind_text(6, o.message);
  s.bind_text(7, o.fields_json);
  s.bind_optional(8, mi, in.equity_value);
  s.bind_optional(9, mi, in.equity_vol_annual);
  s.bind_optional(10, mi, in.default_point);
  s.bind_optional(11, mi, in.risk_free_rate_cc);
  s.bind_optional(12, mi, in.horizon_years);
  s.bind_optional(13, mi, in.drift_annual);
  s.bind_optional(14, mm, m.asset_value);
  s.bind_optional(15, mm, m.asset_vol_annual);
  s.bind_optional(16, mm, m.leverage);
  s.bind_optional(17, mm, m.distance_to_default);
  s.bind_optional(18, mm, m.pd);
  s.bind_optional(19, mm, m.pd_risk_neutral);
  s.bind_optional(20, mm, m.debt_value);
  s.bind_optional(21, mm, m.spread_bp);
  if (o.iterations >= 0) {
    s.bind_int(22, o.iterations);
  } else {
    s.bind_real(22, std::nan(""));
  }
  s.bind_optional(23, o.residual >= 0.0, o.residual);
  if (o.grade.empty()) {
    s.bind_real(24, std::nan(""));
  } else {
    s.bind_text(24, o.grade);
  }
  s.bind_real(25, o.pd_calibrated);
  s.bind_real(26, o.pd_calibrated_lower);
  s.bind_real(27, o.pd_calibrated_upper);
  if (std::isnan(o.pd_calibrated)) {
    s.bind_real(28, std::nan(""));
  } else {
    s.bind_int(28, o.pd_calibrated_extrapolated ? 1 : 0);
  }
  s.step();
  s.reset();
  ++count_;
}

std::int64_t RunWriter::commit() {
  RunStore::Impl& im = *store_.impl_;
  insert_.reset();
  {
    Stmt s(im, "UPDATE runs SET obligor_count = ? WHERE run_id = ?");
    s.bind_int(1, count_);
    s.bind_int(2, run_id_);
    s.step();
  }
  im.exec("COMMIT", "finishing the run");
  open_ = false;
  return run_id_;
}

std::string resolve_store_path(const std::string& db_option, const MonitorSettings& monitor) {
  if (!db_option.empty()) return db_option;
  if (!monitor.store.empty()) return monitor.store;
  return default_store_path();
}

std::string default_store_path() {
  const char* xdg = std::getenv("XDG_DATA_HOME");
  if (xdg && xdg[0] == '/') return std::string(xdg) + "/firmcall/history.sqlite";
  const char* home = std::getenv("HOME");
  if (home && home[0] == '/') return std::string(home) + "/.local/share/firmcall/history.sqlite";
  throw StoreError("no place for the history store: neither XDG_DATA_HOME nor HOME is set",
                   StoreAdvice::name_store_file);
}

bool is_calendar_date(std::string_view s) noexcept {
  if (s.size() != 10 || s[4] != '-' || s[7] != '-') return false;
  int v[3] = {0, 0, 0};
  const int start[3] = {0, 5, 8};
  const int len[3] = {4, 2, 2};
  for (int k = 0; k < 3; ++k) {
    for (int i = 0; i < len[k]; ++i) {
      const char c = s[static_cast<std::size_t>(start[k] + i)];
      if (c < '0' || c > '9') return false;
      v[k] = v[k] * 10 + (c - '0');
    }
  }
  const int y = v[0], m = v[1], d = v[2];
  if (y < 1000 || m < 1 || m > 12 || d < 1) return false;
  static constexpr int kDays[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
  return d <= kDays[m - 1] + (m == 2 && leap ? 1 : 0);
}

}  // namespace firmcall
