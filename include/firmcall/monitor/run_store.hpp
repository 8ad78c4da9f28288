// History store: every recorded monitoring run -- its as-of date, time of recording, input file
// digest, settings, tool version and every obligor's inputs and outputs -- in one SQLite file.
//
// Each run is written in one transaction (RunWriter), so a reader sees a run whole or not at all,
// also after a writer was killed. Several processes may use one store: a writer waits up to the
// busy timeout for another writer and then fails with StoreBusy; nothing already stored is lost.
// The schema carries a version (table firmcall_schema) and is migrated forward on open. Files that
// are not firmcall stores (not SQLite, or another application's SQLite database) are refused
// without being modified. A run is identified as a recording of a book by its as-of date and the
// SHA-256 of the book's bytes: a writer can refuse, or replace, a second run of the same book as of
// the same date (SameBook), and remove_run() takes one run out, each in one transaction.
//
// **Example**:
//   firmcall::RunStore store("history.sqlite", firmcall::StoreOpen::create, 10.0);
//   firmcall::RunWriter w(store, info);              // BEGIN
//   for (const auto& o : obligors) w.add(o);
//   std::int64_t run_id = w.commit();                // COMMIT
//   auto last = store.select("");                    // the latest run
#pragma once

#include <cstdint>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/model/merton.hpp"

namespace firmcall {

namespace detail {
class StoreStatement;  ///< a prepared SQLite statement (run_store.cpp)
}

/// Version of the store schema this build writes; older stores are migrated up to it on open.
/// 1: runs and their obligors. 2: each obligor's grade; index by obligor id. 3: each obligor's
/// calibrated one-year PD (with its interval and extrapolation flag); each run's driving PD and the
/// identity of its calibration. A store opened read-only is read at its own version (columns it
/// lacks read as absent) and never written; opening it for recording migrates it.
inline constexpr int kStoreSchemaVersion = 3;
/// SQLite application_id of firmcall stores (bytes 68-71 of the file header, "fcal").
inline constexpr std::int32_t kStoreApplicationId = 0x6663616c;

/// The calibration a run was recorded with (score --pd-calibration); all empty without one.
struct RunCalibration {
  std::string file;         ///< the calibration file as named on the command line
  std::string method;       ///< logistic, isotonic or binned
  std::string data_sha256;  ///< SHA-256 of the default history the calibration was fitted to
  bool present() const noexcept { return !method.empty(); }
  bool operator==(const RunCalibration&) const = default;
};

/// One recorded run.
struct RunInfo {
  std::int64_t run_id = 0;    ///< assigned by the store, increasing
  std::string as_of;          ///< the date the figures describe, YYYY-MM-DD
  std::string recorded_at;    ///< when the run was written, UTC, YYYY-MM-DDTHH:MM:SSZ
  std::string book_path;      ///< input file as named on the command line
  std::string book_label;     ///< the YAML book's `book:` label, or ""
  std::string input_sha256;   ///< SHA-256 of the input file's bytes, 64 hex digits
  std::string settings_json;  ///< effective settings of the run, a JSON object
  std::string tool_version;   ///< firmcall version that scored the run
  std::int64_t obligor_count = 0;
  /// The PD behind the run's grades (model before schema 3); calibrated only with a calibration.
  DrivingPd driving_pd = DrivingPd::model;
  RunCalibration calibration = {};
};

/// One obligor of a run, as stored.
struct StoredObligor {
  std::int64_t seq = 0;  ///< position in the book, from 0
  std::string id;        ///< obligor id ("" when the book gave none)
  std::string name;
  RowStatus status = RowStatus::invalid_input;
  std::string message;      ///< why status is not ok
  std::string fields_json;  ///< the obligor's fields as given in the book, a JSON object
  bool has_inputs = false;  ///< inputs resolved (E, sE, DP, r, T, mu); false for invalid_input
  MertonInputs inputs;
  bool has_measures = false;  ///< scored (status ok); d1 and d2 are not stored
  MertonMeasures measures;
  int iterations = -1;     ///< solver iterations; -1 when the solver did not run
  double residual = -1.0;  ///< solver residual; -1 when the solver did not run
  std::string grade;       ///< grade on the scale of the run ("" when not scored, or before schema 2)
  /// Calibrated one-year PD of the obligor's DD and its interval; NaN when the run had no
  /// calibration, the obligor was not scored, or the run was recorded before schema 3.
  double pd_calibrated = std::numeric_limits<double>::quiet_NaN();
  double pd_calibrated_lower = std::numeric_limits<double>::quiet_NaN();
  double pd_calibrated_upper = std::numeric_limits<double>::quiet_NaN();
  bool pd_calibrated_extrapolated = false;  ///< the DD lay outside the calibration sample's range
};

/// How to open a store.
enum class StoreOpen {
  existing,   ///< the file must exist and be a store; opened for writing
  read_only,  ///< as existing, opened read-only (reading commands); an empty file is refused
  create,     ///< create the file (and its folder) when missing (recording)
};

/// The store is held by another process for longer than the busy timeout.
class StoreBusy : public InputError {
 public:
  using InputError::InputError;
};

/// What a RunWriter does when the store already holds runs of the same book (equal input_sha256)
/// as of the same date: recording it again would only add a run in which nothing moved.
enum class SameBook {
  allow,    ///< record beside them (no check)
  refuse,   ///< throw SameBookRun; nothing is written
  replace,  ///< remove them in the transaction of the new run
};

/// The store already holds runs of the same book as of the same date (SameBook::refuse). what() is
/// message() followed by the library's advice; run_ids() are the runs, oldest first.
class SameBookRun : public InputError {
 public:
  SameBookRun(std::string message, std::vector<std::int64_t> run_ids)
      : InputError(message + " (replace it, or record the book as of another date)"),
        message_(std::move(message)),
        run_ids_(std::move(run_ids)) {}
  const std::string& message() const noexcept { return message_; }
  const std::vector<std::int64_t>& run_ids() const noexcept { return run_ids_; }

 private:
  std::string message_;
  std::vector<std::int64_t> run_ids_;
};

/// What RunStore::remove_run() took out of the store.
struct RemovedRun {
  RunInfo run;                    ///< the run as it was stored
  std::int64_t obligor_rows = 0;  ///< its rows of run_obligors, all deleted with it
};

/// An open history store. Errors are InputError naming the file.
class RunStore {
 public:
  /// Opens (or creates) the store at `path` and migrates its schema to kStoreSchemaVersion.
  /// Refuses, untouched, a file that is not SQLite, another application's database, or a store
  /// of a newer schema.
  RunStore(const std::string& path, StoreOpen mode, double busy_timeout_seconds);
  ~RunStore();
  RunStore(const RunStore&) = delete;
  RunStore& operator=(const RunStore&) = delete;

  const std::string& path() const noexcept;
  /// Schema version of the open store (kStoreSchemaVersion once opened for writing; a store
  /// opened read-only keeps its own).
  int schema_version() const;

  /// Every run, oldest first (by as-of date, then run id).
  std::vector<RunInfo> runs() const;
  /// The run named by `selector`: "" the latest; digits a run id; YYYY-MM-DD the latest run as of
  /// that date. InputError when there is no such run.
  RunInfo select(std::string_view selector) const;
  /// The run before `run` (by as-of date, then run id), if any.
  std::optional<RunInfo> previous(const RunInfo& run) const;
  /// Every obligor of a run, in book order; without `with_fields`, fields_json is left empty.
  std::vector<StoredObligor> obligors(std::int64_t run_id, bool with_fields = true) const;

  /// One obligor in one run.
  struct SeriesPoint {
    RunInfo run;
    StoredObligor obligor;
  };
  /// An obligor's entries in every run that holds it, oldest first.
  std::vector<SeriesPoint> series(std::string_view obligor_id) const;

  /// The runs recorded from a book with SHA-256 `input_sha256` as of `as_of`, by run id.
  std::vector<RunInfo> same_book_runs(std::string_view as_of, std::string_view input_sha256) const;
  /// Throws SameBookRun, naming them, when the store holds runs of `run`'s book and as-of date.
  void refuse_same_book(const RunInfo& run) const;

  /// Deletes run `run_id` and its obligors in one transaction (waiting up to the busy timeout);
  /// every other run stays as it was. InputError, nothing deleted, when there is no such run or the
  /// store was opened read-only; StoreBusy as for a writer.
  RemovedRun remove_run(std::int64_t run_id);

  struct Impl;  ///< SQLite connection and statements (run_store.cpp)

 private:
  friend class RunWriter;
  std::unique_ptr<Impl> impl_;
};

/// Writes one run in one transaction. Destroying an uncommitted writer rolls the run back.
class RunWriter {
 public:
  /// Begins the transaction (waiting up to the busy timeout), applies `same` to the runs of the
  /// same book as of the same date (SameBookRun for refuse, after rolling back), and inserts the
  /// run's header; info.run_id and info.obligor_count are ignored.
  RunWriter(RunStore& store, const RunInfo& info, SameBook same = SameBook::allow);
  ~RunWriter();
  RunWriter(const RunWriter&) = delete;
  RunWriter& operator=(const RunWriter&) = delete;

  /// Adds an obligor (seq is taken from the order of calls).
  void add(const StoredObligor& obligor);
  /// Commits the run; returns its id.
  std::int64_t commit();
  /// The runs this one replaces (SameBook::replace), oldest first; deleted when it commits.
  const std::vector<RunInfo>& replaced() const noexcept { return replaced_; }

 private:
  RunStore& store_;
  std::vector<RunInfo> replaced_;
  std::unique_ptr<detail::StoreStatement> insert_;
  std::int64_t run_id_ = 0;
  std::int64_t count_ = 0;
  bool open_ = false;
};

/// The store file: `db_option` (--db) when given, else monitoring.store, else default_store_path().
std::string resolve_store_path(const std::string& db_option, const MonitorSettings& monitor);

/// Default store location: $XDG_DATA_HOME/firmcall/history.sqlite when XDG_DATA_HOME is an
/// absolute path, else $HOME/.local/share/firmcall/history.sqlite (XDG Base Directory spec).
/// InputError when neither variable is usable.
std::string default_store_path();

/// True when `s` is a calendar date written YYYY-MM-DD (Gregorian, years 1000-9999).
bool is_calendar_date(std::string_view s) noexcept;

}  // namespace firmcall
