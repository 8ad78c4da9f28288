// Recording a scored book as a run in the history store (run_store.hpp): the glue between the
// scoring engine and the store, used by `firmcall score BOOK --record`.
//
// **Example**:
//   firmcall::RecordBookOptions opt{.store_path = "h.sqlite", .as_of = "", .tool_version = "0.1.0"};
//   firmcall::RecordedRun r = firmcall::record_book("week1.yaml", config.score, config, opt);
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/driving_pd.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/estimate/calibration.hpp"
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

/// A scored book ready to be written as a run: its header and its obligors as stored.
struct PreparedRun {
  RunInfo info;
  std::vector<StoredObligor> obligors;
  std::size_t scored = 0;  ///< obligors with status ok
};

/// Reads the book once (the digest is of exactly the bytes scored), resolves the as-of date and
/// scores every obligor with `settings`; the store is not touched. InputError for an unreadable
/// book or a bad as-of date.
PreparedRun prepare_run(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options);

/// Throws SameBookRun when the store at options.store_path already holds a run of the same book as
/// of the same date and options.replace_run is not set. Opens the store read-only, so nothing is
/// written (an older schema is not upgraded); a missing or empty file holds no run.
void refuse_same_book(const PreparedRun& run, const RecordBookOptions& options, double busy_timeout_seconds);

/// Writes `run` in one transaction (refuse_same_book first; with options.replace_run the runs it
/// replaces are deleted in the same transaction). StoreBusy when another process holds the store.
RecordedRun record_prepared_run(const PreparedRun& run, const RecordBookOptions& options,
                                double busy_timeout_seconds);

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
