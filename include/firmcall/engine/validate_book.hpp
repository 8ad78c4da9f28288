// Validation runs: the statistics of estimate/validation.hpp on an outcomes sample (io/outcomes_io.hpp),
// optionally compared with a second PD column on the same rows and with an earlier sample
// (population stability and grade migration, matched on id), and their writers: a table for people,
// CSV (long format) and JSON for programs. Every output names the PD column that drives it.
//
// **Example**:
//   firmcall::OutcomeSample s = firmcall::load_outcomes("samples/outcomes.csv", {},
//   firmcall::default_grade_scale()); firmcall::ValidationRun run = firmcall::run_validation(s, nullptr);
//   std::string out;
//   firmcall::write_validation(run, firmcall::OutputFormat::json, [&](std::string_view t) { out += t; });
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "firmcall/estimate/validation.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/io/outcomes_io.hpp"

namespace firmcall {

/// Population stability and grade migration against an earlier sample.
struct StabilityResult {
  std::string origin;                 ///< the earlier sample's file
  std::vector<std::size_t> actual;    ///< obligors per grade in this sample
  std::vector<std::size_t> expected;  ///< obligors per grade in the earlier sample
  double psi = 0.0;
  std::size_t matched = 0;             ///< ids in both samples
  std::vector<std::size_t> migration;  ///< [from (earlier) * grades + to (this)]
};

/// One segment of the sample (the `segment` column).
struct SegmentResult {
  std::string label;
  GroupValidation figures;
  /// Why the segment has no AUC (it holds one class only); empty when it has one.
  std::string auc_note;
};

/// The calibration of the observations of one calendar year of `as_of`.
struct PeriodResult {
  int year = 0;
  GroupCalibration calibration;
};

struct ValidationRun {
  std::string origin;
  std::string pd_column;
  std::string compare_column;
  std::vector<std::string> grade_labels;  ///< every grade index's label
  Discrimination discrimination;
  CalibrationTests calibration;
  std::optional<Discrimination> compare_discrimination;
  std::optional<AucComparison> comparison;
  std::optional<StabilityResult> stability;
  std::vector<SegmentResult> segments;  ///< in the order they first appear; empty without the column
  std::string as_of_first;              ///< the sample's dates, YYYY-MM-DD; empty without the column
  std::string as_of_last;
  std::vector<PeriodResult> periods;  ///< years with observations, ascending; empty without as_of
};

/// Runs every statistic on `sample` (and against `earlier` when not null; both read with
/// keep_ids), per segment and per calendar year of as_of when the sample has them; with `curves`,
/// also the ROC and CAP points (discrimination.curve). Throws InputError
/// when a statistic cannot be computed (the message says why).
ValidationRun run_validation(const OutcomeSample& sample, const OutcomeSample* earlier, bool curves = false);

/// Writes the run as a table, CSV (pd_column,grade,statistic,value; with segments a `segment`
/// column and with dates a `period` column after pd_column) or JSON.
void write_validation(const ValidationRun& run, OutputFormat format, const TextSink& sink);

/// Writes the ROC and CAP points of a run made with `curves` as CSV:
/// pd_threshold,false_positive_rate,true_positive_rate,population_fraction,defaults_fraction, one
/// row per distinct PD from the highest down, after a first row (0, 0, 0, 0) whose threshold is
/// left empty (above every PD). defaults_fraction (CAP y) equals true_positive_rate (ROC y).
void write_validation_curves(const ValidationRun& run, const TextSink& sink);

}  // namespace firmcall
