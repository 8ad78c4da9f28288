// `calibrate`: fitting a PD calibration to a default history and writing the fit (table for
// people, CSV and JSON for programs). Every PD here is a one-year calibrated PD (the history's
// outcome is a default within one year).
#pragma once

#include <string>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/estimate/calibration.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/io/calibration_io.hpp"

namespace firmcall {

/// The DD of each row of a history given as book fields (DefaultHistory::dd_from_book_fields), as
/// `score` computes it with `settings`: the inputs resolved as for a CSV book, the asset value and
/// volatility solved, the Merton DD of the solution. A calibration uses every observation, so a row
/// that score would not score (an invalid input, a solve that does not converge) is an InputError
/// "file:line: obligor 'id': field 'x': reason" (score's wording), with the count of further such
/// rows.
std::vector<double> history_distances(const DefaultHistory& history, const ScoreSettings& settings);

/// Fits `options.method` to the history; a history of book fields is first turned into DDs with
/// `settings` (history_distances). Throws InputError naming the file when the fit is not usable
/// (e.g. a slope that is not negative, or Newton's method not converging).
CalibrationRecord calibrate_history(const DefaultHistory& history, const CalibrationOptions& options,
                                    const ScoreSettings& settings = {});

/// The fit as text. JSON of a logistic fit: method, observations, defaults, intercept, slope,
/// intercept_se, slope_se, covariance, log_likelihood; of isotonic and binned fits: blocks, a list
/// of {dd_lower, dd_upper, observations, defaults, pd_raw, pd, pd_lower, pd_upper}.
std::string calibration_report(const CalibrationRecord& record, OutputFormat format,
                               const std::string& origin);

}  // namespace firmcall
