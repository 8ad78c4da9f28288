// The score writers (table for people, CSV and JSON for programs) and the sensitivity columns.
#pragma once

#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/grades.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/model/sensitivity.hpp"

namespace firmcall {

/// Names of the machine-readable score columns, in order.
const std::vector<std::string_view>& score_columns();

/// Names of the optional sensitivity columns (--sensitivities), in order: sensitivity_status, then
/// DD, PD and spread per +1% equity value, per +1 equity-volatility point, per +1% default point and
/// per +1 bp of rate (units in sensitivity.hpp). Appended after the other columns.
const std::vector<std::string_view>& sensitivity_columns();

/// Sensitivities of a solved obligor (its own inputs and solution).
MertonSensitivities sensitivities_of(const ResolvedObligor& resolved, const AssetSolution& solution);

/// Appends ",status,v1,...,v12" in sensitivity_columns() order; cells are empty when `usable` is
/// false or the sensitivities are not ok.
void append_sensitivities_csv(std::string& out, const MertonSensitivities& s, bool usable);
/// Appends ", \"sensitivity_status\": ..., \"dd_per_equity_pct\": ..." (null when not usable).
void append_sensitivities_json(std::string& out, const MertonSensitivities& s, bool usable);
/// Appends one fixed-width line of the twelve values under a table row (see the table header).
void append_sensitivities_table(std::string& out, const MertonSensitivities& s, std::size_t indent);
/// Appends the two header lines that explain append_sensitivities_table's columns.
void append_sensitivities_table_header(std::string& out, std::size_t indent);

/// Appends the JSON run fields of the score settings every Merton run shows: default_point_weight,
/// rate_override and horizon_override (null when not overridden), after fields already written.
void append_score_settings_json(std::string& out, const ScoreSettings& settings);
/// Appends the close of a JSON document's row list and opens its summary with the counts of the
/// book as it stands; the caller may add fields to the returned writer, then appends "}\n}\n".
JsonFields open_json_summary(std::string& out, std::size_t obligors, std::size_t scored, std::size_t invalid,
                             std::size_t not_converged);
/// Appends the end of a scored JSON document: the row list's close and the summary counts.
void append_score_summary_json(std::string& out, const ScoreSummary& summary);
/// Appends the tally under a table, "<what> N of M obligors" and the failures, then the problems.
void append_score_tally(std::string& out, std::string_view what, const ScoreSummary& summary,
                        std::size_t wrap_width = 0);

/// Writes scored obligors in one format. Rows are appended to a caller's buffer so that workers
/// can format in parallel; `separator` is written between rows by the caller.
class ScoreWriter {
 public:
  virtual ~ScoreWriter() = default;
  virtual void begin(std::string& out) const = 0;
  virtual void row(const ObligorRecord& rec, const ScoredObligor& s, std::string& out) const = 0;
  virtual std::string_view separator() const { return {}; }
  virtual void end(const ScoreSummary& summary, std::string& out) const = 0;
};

/// A writer for the format; `origin` and `settings` appear in the JSON run block. With
/// `sensitivities` every format adds the sensitivity columns (the table a second line per obligor).
/// With `grades`, each scored obligor also shows its grade (a last CSV column and JSON key `grade`,
/// a table column). With `pd_calibration`, every format ends with the one-year calibrated PD of the
/// obligor's DD (pd_calibration_columns(); the table a line per obligor). With a calibration and
/// `driving_pd` calibrated, grades are on the calibrated one-year PD. Every format with a
/// calibration states the driving PD: a last CSV column `driving_pd` (model or calibrated), the JSON
/// run keys `pd_calibration` (`pd_calibration_origin`, the file), `pd_calibration_method` and
/// `driving_pd`, a table header line.
std::unique_ptr<ScoreWriter> make_score_writer(OutputFormat format, const std::string& origin,
                                               const ScoreSettings& settings, bool sensitivities = false,
                                               const GradeScale* grades = nullptr,
                                               const PdCalibration* pd_calibration = nullptr,
                                               DrivingPd driving_pd = DrivingPd::model,
                                               std::string_view pd_calibration_origin = {});

/// Names of the calibrated-PD columns (--pd-calibration), appended after every other column:
/// pd_calibrated, pd_calibrated_lower, pd_calibrated_upper (one-year PDs at the calibration's
/// confidence level) and pd_calibrated_extrapolated (true when the DD lies outside the sample's).
const std::vector<std::string_view>& pd_calibration_columns();
/// Appends ",pd,lower,upper,extrapolated" of one calibrated PD, in pd_calibration_columns() order
/// (every cell empty when p.pd is NaN).
void append_calibrated_pd_csv(std::string& out, const CalibratedPd& p);
/// Appends the same four values as JSON fields named `names` (four names; null when p.pd is NaN).
void append_calibrated_pd_json(std::string& out, const CalibratedPd& p,
                               std::span<const std::string_view> names);

}  // namespace firmcall
