// Errors at the edges (files, YAML, command line). The numerical core never throws; these carry
// a location first and the offending value quoted, e.g.
//   book.csv:17: field 'equity_vol': expected a decimal such as 0.35, got '35%'
#pragma once

#include <stdexcept>
#include <string>
#include <utility>

namespace firmcall {

/// A whole file (or the command line) is unusable. The command-line tool exits with code 2 on it.
class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// What an option needs before it applies, carried by OptionError so that a caller can say it in
/// its own terms (the command line names its flags).
enum class OptionNeed {
  none,            ///< the value itself is unusable
  term_structure,  ///< applies to term structures only: horizons, or a model other than merton
  first_passage,   ///< applies only when the first-passage model is among the models
};

/// An option with an unusable value, or given where it does not apply. It names the field of the
/// options struct as spelled there, e.g. "barrier_ratio"; what() is "field 'barrier_ratio': reason".
class OptionError : public InputError {
 public:
  OptionError(std::string field, std::string reason, OptionNeed need = OptionNeed::none)
      : InputError("field '" + field + "': " + reason),
        field_(std::move(field)),
        reason_(std::move(reason)),
        need_(need) {}
  const std::string& field() const noexcept { return field_; }
  const std::string& reason() const noexcept { return reason_; }
  OptionNeed need() const noexcept { return need_; }

 private:
  std::string field_;
  std::string reason_;
  OptionNeed need_;
};

/// Formats "file:line: message" (line omitted when 0).
std::string located(const std::string& file, std::size_t line, const std::string& message);

}  // namespace firmcall
