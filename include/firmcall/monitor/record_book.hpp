// Recording a scored book as a run in the history store (run_store.hpp): the glue between the
// scoring engine and the store, used by `firmcall score BOOK --record`.
//
// **Example**:
//   firmcall::RecordBookOptions opt{.store_path = "h.sqlite", .as_of = "", .tool_version = "0.1.0"};
//   firmcall::RecordedRun r = firmcall::record_book("week1.yaml", config.score, config, opt);
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/estimate/calibration.hpp"
#include "firmcall/io/book_stream.hpp"
#include "firmcall/monitor/run_store.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Where and how record_book() records.
struct RecordBookOptions {
  std::string store_path;    ///< history store file (see resolve_store_path)
  std::string as_of;         ///< YYYY-MM-DD; empty: the book's as_of, else today's local date
  std::string tool_version;  ///< written with the run
  /// With a calibration (score --pd-calibration): each obligor's calibrated one-year PD is stored
  /// beside the model PD, and `calibration` names it in the run.
  const PdCalibration* pd_calibration = nullptr;
  RunCalibration calibration = {};
  DrivingPd driving_pd = DrivingPd::model;  ///< the PD behind the stored grades; calibrated needs one
  /// A run of the same book (same SHA-256 of its bytes) as of the same date is refused
  /// (SameBookRun) unless this is set; then it is replaced in the transaction of the new run.
  bool replace_run = false;
  /// Worker threads scoring a piece of the book while it is recorded; 0 is read as 1. The run
  /// stored does not depend on it.
  unsigned threads = 1;
  /// Obligors read, scored and inserted at a time (memory grows with it, not with the book); 0 is
  /// read as 1. The run stored does not depend on it.
  std::size_t piece_obligors = 8192;
  /// store_path not empty; as_of empty or a calendar date (is_calendar_date); driving_pd calibrated
  /// only with pd_calibration. record_book() throws InputError for an as_of this refuses.
  OptionCheck validate() const;
};

/// The run record_book() wrote.
struct RecordedRun {
  std::int64_t run_id = 0;
  std::string as_of;
  std::size_t obligors = 0;
  std::size_t scored = 0;                      ///< obligors with status ok
  std::vector<std::int64_t> replaced_run_ids;  ///< runs of the same book and date it replaced
};

/// A book ready to be recorded: the run's header (as-of date, digest of the book's bytes, settings)
/// and the book opened for reading, not yet scored. Move-only.
struct PreparedRun {
  RunInfo info;
  std::unique_ptr<BookStream> book;  ///< read (and scored) by record_prepared_run
  ScoreSettings settings;
  GradeScale grades;
  /// Size and modification time of the book when its digest was taken: a book that changes before
  /// it is recorded is refused instead of being stored under the old digest.
  std::uintmax_t book_bytes = 0;
  std::int64_t book_mtime_ns = 0;
};

/// Reads the book's bytes once for their SHA-256 (streaming), opens the book (a CSV header, or a
/// YAML book's top-level keys, are checked here) and resolves the as-of date; nothing is scored and
/// the store is not touched. InputError for an unreadable book or a bad as-of date.
PreparedRun prepare_run(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options);

/// Throws SameBookRun when the store at options.store_path already holds a run of the same book as
/// of the same date and options.replace_run is not set. Opens the store read-only, so nothing is
/// written (an older schema is not upgraded); a missing or empty file holds no run.
void refuse_same_book(const PreparedRun& run, const RecordBookOptions& options, double busy_timeout_seconds);

/// Scores the prepared book a piece at a time (options.piece_obligors, on options.threads workers)
/// and writes the run in one transaction, inserting each piece as it is scored, so that memory does
/// not grow with the book (refuse_same_book first; with options.replace_run the runs it replaces
/// are deleted in the same transaction). The store is held from the first piece to the commit.
/// StoreBusy when another process holds the store; InputError when the book's size or modification
/// time changed since prepare_run, and then nothing is written. Consumes run.book.
RecordedRun record_prepared_run(PreparedRun& run, const RecordBookOptions& options,
                                double busy_timeout_seconds);

/// record_prepared_run() on a thread of its own, so that the caller can write the scored output
/// meanwhile: the constructor starts scoring and inserting (inside the run's transaction), finish()
/// waits, rethrows what the recording threw and commits. Destroyed unfinished, it stops, rolls the
/// run back and removes a store file it created that holds no run. `run` and `options` must
/// outlive it.
class RunRecorder {
 public:
  RunRecorder(PreparedRun& run, const RecordBookOptions& options, double busy_timeout_seconds);
  ~RunRecorder();
  RunRecorder(const RunRecorder&) = delete;
  RunRecorder& operator=(const RunRecorder&) = delete;
  /// Waits for the recording and commits it; call once.
  RecordedRun finish();

  struct State;  ///< the recording thread's store, writer and outcome (record_book.cpp)

 private:
  std::unique_ptr<State> state_;
};

/// prepare_run() and record_prepared_run(). InputError for an unreadable book, a bad as-of date or an
/// unusable store; SameBookRun for a run of the same book and date; StoreBusy when another process
/// holds the store too long.
RecordedRun record_book(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options);

/// One obligor as stored: its fields as given, resolved inputs, measures and grade on `grades`;
/// with `calibration`, its calibrated one-year PD, and the grade on that PD when `driving_pd` is
/// calibrated.
StoredObligor stored_obligor(const ObligorRecord& rec, const ScoredObligor& scored, const GradeScale& grades,
                             const PdCalibration* calibration = nullptr,
                             DrivingPd driving_pd = DrivingPd::model);

/// The fields an obligor gave in its book, as a compact JSON object (numbers in their shortest form
/// that reads back exactly).
std::string fields_json(const ObligorRecord& rec);

/// The effective settings of a run as a JSON object: scoring, solver, command-line overrides and
/// the grade scale.
std::string settings_json(const ScoreSettings& settings, const GradeScale& grades);

}  // namespace firmcall
