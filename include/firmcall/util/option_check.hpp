// What every options and settings struct's validate() returns: the field, its value and the
// constraint it breaks (as Ceres' Solver::Options::IsValid does), so that the settings reader and
// the command line can say which value is wrong without knowing the struct's rules.
#pragma once

#include <optional>
#include <string>

namespace firmcall {

/// One broken constraint of an options or settings struct.
struct OptionProblem {
  std::string field;       ///< the field's name as the struct spells it, e.g. "residual_tolerance"
  std::string value;       ///< the value as given, shortest round-trip form for numbers
  std::string constraint;  ///< what it must be, e.g. "must be positive"
  /// "field 'residual_tolerance': must be positive, got -1".
  std::string to_string() const { return "field '" + field + "': " + constraint + ", got " + value; }
};

/// nullopt: the struct is valid.
using OptionCheck = std::optional<OptionProblem>;

/// The shortest text that reads back to v (for OptionProblem::value).
std::string option_value_text(double v);

/// options.validate() passes, for the numerical core's noexcept calls: building the message of a
/// broken constraint may allocate, and a failed allocation counts as invalid.
template <class Options>
bool options_valid(const Options& options) noexcept {
  try {
    return !options.validate();
  } catch (...) {
    return false;
  }
}

}  // namespace firmcall
