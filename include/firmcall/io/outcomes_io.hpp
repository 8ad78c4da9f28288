// The outcomes file of a validation: one row per obligor and observation period, with the PD
// given at the start of the period and whether the obligor defaulted within it (docs/validation.md).
//
//   id,pd,defaulted[,grade][,as_of][,segment]
//
// `pd` is a probability in [0, 1] (another column with OutcomeReadOptions::pd_column), `defaulted`
// is 0 or 1. Without a grade column each row is graded from its PD on the settings' master scale.
// `segment` is a non-empty label, `as_of` a calendar date YYYY-MM-DD (the start of the period).
// A missing column, a bad cell, or a sample with only one class (no defaults, or only defaults) is
// an InputError naming the file, the line and the field: a validation needs the whole sample.
//
// **Example**:
//   firmcall::OutcomeSample s = firmcall::load_outcomes("samples/outcomes.csv", {},
//   firmcall::default_grade_scale());
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "firmcall/book/grades.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

struct OutcomeReadOptions {
  std::string pd_column = "pd";  ///< the column of the PD under test
  std::string compare_column;    ///< a second PD column on the same rows (empty: none)
  bool keep_ids = false;         ///< keep the ids (matching two samples); duplicates are then errors
  /// Column names non-empty and different from each other and from the fixed columns.
  OptionCheck validate() const;
};

struct OutcomeSample {
  std::string origin;          ///< the file name, for messages
  std::string pd_column;       ///< the column that drives every figure
  std::string compare_column;  ///< empty when none
  std::vector<double> pd;
  std::vector<double> compare_pd;  ///< empty when no compare column
  std::vector<std::uint8_t> defaulted;
  std::vector<int> grade;                   ///< index into grade_labels per row
  std::vector<std::string> grade_labels;    ///< the scale's labels in order, then other labels as first seen
  bool graded_from_pd = false;              ///< no grade column: graded on the master scale from the PD
  std::vector<std::string> ids;             ///< only with keep_ids
  std::vector<int> segment;                 ///< index into segment_labels per row; empty without the column
  std::vector<std::string> segment_labels;  ///< the segments in the order they first appear
  std::vector<std::int32_t> as_of;          ///< days since 1970-01-01 per row; empty without the column
  std::size_t defaults = 0;
  std::vector<std::string> notes;  ///< e.g. columns not used
};

/// Reads an outcomes CSV file. Throws InputError (file:line: field 'x': reason, got 'value').
OutcomeSample load_outcomes(const std::string& path, const OutcomeReadOptions& options,
                            const GradeScale& scale);

/// The same from text in memory; `origin` names it in messages.
OutcomeSample parse_outcomes(std::string_view text, const std::string& origin,
                             const OutcomeReadOptions& options, const GradeScale& scale);

}  // namespace firmcall
