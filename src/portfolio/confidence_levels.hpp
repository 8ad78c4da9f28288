// The rule for the confidence levels of a loss distribution or simulation, shared by their
// options' validate() and by the calls that refuse invalid levels.
#pragma once

#include <algorithm>
#include <string>
#include <vector>

#include "firmcall/util/option_check.hpp"

namespace firmcall::detail {

/// Non-empty, distinct, ascending and inside (0, 1).
inline bool confidence_levels_valid(const std::vector<double>& levels) noexcept {
  return !levels.empty() && std::is_sorted(levels.begin(), levels.end()) &&
         std::adjacent_find(levels.begin(), levels.end()) == levels.end() && levels.front() > 0.0 &&
         levels.back() < 1.0;
}

/// The text of OptionProblem::value for a list of numbers: "0.99,0.995" ("" when empty).
inline std::string number_list_text(const std::vector<double>& levels) {
  std::string s;
  for (const double v : levels) {
    if (!s.empty()) s += ',';
    s.append(option_value_text(v));
  }
  return s;
}

}  // namespace firmcall::detail
