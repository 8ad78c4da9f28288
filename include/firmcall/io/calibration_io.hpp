// The default history a PD calibration is fitted to, and the calibration file.
//
// Default history (CSV, header required): `id`, `as_of` (YYYY-MM-DD), `distance_to_default`,
// `defaulted` (1 when the obligor defaulted within one year after as_of, else 0) and an optional
// `weight` (non-negative; default 1). Instead of `distance_to_default` a history may give the book
// columns of a score book (market_cap or share_price with shares_outstanding, equity_vol, debt or
// default_point, rate, horizon, ...): each row's number fields are then kept (BookFieldRow), and
// the engine computes its DD as score does (calibration_book.hpp). With both, the DD column is used and the
// book columns are named in a note. Other columns are ignored (listed as notes). Rejected with
// InputError naming file, line and field: a missing column, a DD that is empty or not a finite
// number, a book cell that is not a number, `defaulted` other than 0 or 1, a bad date or weight, a
// repeated (id, as_of), and a history without defaults or without survivors.
//
// Calibration file (YAML, format version 1):
//   firmcall_calibration: 1
//   method: logistic            # logistic, isotonic or binned
//   pd_horizon_years: 1         # every calibrated PD is a one-year PD
//   confidence_level: 0.95
//   sample: {observations: 6000, defaults: 120, as_of_first: 2019-12-31, as_of_last: 2024-12-31,
//            dd_min: -0.5, dd_max: 9.1, data_sha256: <64 hex digits of the history file>}
//   logistic: {intercept: ..., slope: ..., intercept_se: ..., slope_se: ..., covariance: ...,
//              log_likelihood: ...}
//   blocks:                     # isotonic and binned, in increasing DD
//     - {dd_lower: ..., dd_upper: ..., observations: ..., defaults: ..., pd_raw: ..., pd: ...}
// Numbers are written in shortest round-trip form, so a file read back evaluates exactly as the fit.
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/estimate/calibration.hpp"

namespace firmcall {

/// The number fields of one row of a history of book fields, as an obligor record holds them.
struct BookFieldRow {
  std::array<double, kNumFieldCount> num{};
  std::uint32_t present = 0;  ///< bit i set: num[i] was given
};

/// A default history as read from its file.
struct DefaultHistory {
  std::string origin;
  std::vector<std::string> id;
  std::vector<std::string> as_of;
  std::vector<std::size_t> line;            ///< line of each observation in the file
  std::vector<double> distance_to_default;  ///< empty when the DD comes from book_rows
  std::vector<BookFieldRow> book_rows;      ///< without a DD column: each row's book fields
  std::vector<double> defaulted;
  std::vector<double> weight;  ///< empty when the file has no weight column
  std::string as_of_first, as_of_last;
  std::string data_sha256;
  std::vector<std::string> notes;  ///< e.g. columns not used

  /// True when each row's DD is to be computed from its book fields (no DD column).
  bool dd_from_book_fields() const noexcept { return distance_to_default.empty() && !book_rows.empty(); }
  /// Row i of a history of book fields as an obligor record (id, line, number fields).
  void book_record(std::size_t i, ObligorRecord& rec) const;
  /// The sample with the DD column (see dd_from_book_fields).
  CalibrationSample sample() const { return {distance_to_default, defaulted, weight}; }
};

/// Reads and checks a default history; InputError on any bad row (nothing is used then).
DefaultHistory read_default_history(const std::string& path);

/// A calibration with where it came from.
struct CalibrationRecord {
  PdCalibration calibration;
  std::string as_of_first, as_of_last;
  std::string data_sha256;
};

/// The calibration file's text (the calibration must be ok).
std::string calibration_yaml(const CalibrationRecord& record);

/// Reads a calibration file; InputError naming file, line and field when it is not a valid
/// version-1 calibration (unknown keys, a missing or non-finite number, a slope not negative,
/// blocks not in increasing DD or with PD increasing in DD).
CalibrationRecord read_calibration(const std::string& path);
/// The same from text; `origin` names it in messages.
CalibrationRecord parse_calibration(const std::string& text, const std::string& origin);

}  // namespace firmcall
