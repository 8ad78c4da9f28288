// `calibrate`: fitting a PD calibration to a default history and writing the fit (table for
// people, CSV and JSON for programs). Every PD here is a one-year calibrated PD (the history's
// outcome is a default within one year).
#pragma once

#include <string>

#include "firmcall/estimate/calibration.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/io/calibration_io.hpp"

namespace firmcall {

/// Fits `options.method` to the history. Throws InputError naming the file when the fit is not
/// usable (e.g. a slope that is not negative, or Newton's method not converging).
CalibrationRecord calibrate_history(const DefaultHistory& history, const CalibrationOptions& options);

/// The fit as text. JSON of a logistic fit: method, observations, defaults, intercept, slope,
/// intercept_se, slope_se, covariance, log_likelihood; of isotonic and binned fits: blocks, a list
/// of {dd_lower, dd_upper, observations, defaults, pd_raw, pd, pd_lower, pd_upper}.
std::string calibration_report(const CalibrationRecord& record, OutputFormat format,
                               const std::string& origin);

}  // namespace firmcall
