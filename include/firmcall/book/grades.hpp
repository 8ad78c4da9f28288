// Grades: a master scale that maps a one-year default probability to a grade label. Each band covers the
// PDs above the previous band's upper bound up to and including its own (PD in (max_pd[i-1],
// max_pd[i]]); the first band starts at 0 and the last ends at 1. Grades are ordered best first,
// so "notches" between two grades are the difference of their positions (positive: worse).
//
// The bands are one-year PDs: a PD over another horizon is first converted to one year
// (pd_one_year in model/pd_horizon.hpp, constant annual default intensity) by index_of_pd_at and
// label_of_pd_at, so the same firm gets the same grade whatever horizon it was scored at. A PD that
// is already one-year (e.g. a calibrated one) goes to index_of / label_of directly.
//
// The default scale (config/firmcall.yaml, `grades:`) is our own invented ten-notch scale,
// FC1 (best) to FC10; an institution replaces it with its own in the settings file.
//
// **Example**:
//   const firmcall::GradeScale scale = firmcall::default_grade_scale();
//   int g = scale.index_of(0.003);        // 5: 0.0025 < 0.003 <= 0.005, label "FC6"
//   int h = scale.index_of_pd_at(0.05, 5);  // 7: one-year PD 0.0102, label "FC8"
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// One grade: its label and the largest PD it covers.
struct GradeBand {
  std::string label;    ///< e.g. "FC3"; unique within a scale
  double max_pd = 1.0;  ///< upper bound of the band, probability (inclusive)
};

/// An ordered master scale, best grade first.
struct GradeScale {
  std::vector<GradeBand> bands;

  /// Position of the band holding the one-year PD `pd` (0 = best), or -1 when pd is not a
  /// probability in [0, 1].
  int index_of(double pd) const noexcept;
  /// Label of the band holding the one-year PD `pd`, or "" when index_of(pd) is -1.
  std::string_view label_of(double pd) const noexcept;
  /// index_of the one-year PD of `pd`, a PD over `horizon_years` (pd_one_year); -1 when either is
  /// unusable.
  int index_of_pd_at(double pd, double horizon_years) const noexcept;
  /// Label of index_of_pd_at(pd, horizon_years), or "".
  std::string_view label_of_pd_at(double pd, double horizon_years) const noexcept;
  /// Label at a position, or "" when out of range.
  std::string_view label_at(int index) const noexcept;
  /// Empty when the scale is usable; otherwise why not: at least one band, labels non-empty and
  /// unique, upper bounds strictly increasing within (0, 1], the last equal to 1.
  std::string problem() const;
  /// problem() as an OptionProblem on the field "bands" (the value is the number of grades).
  OptionCheck validate() const;
};

/// The built-in scale, equal to `grades:` in config/firmcall.yaml (ten invented notches).
GradeScale default_grade_scale();

}  // namespace firmcall
