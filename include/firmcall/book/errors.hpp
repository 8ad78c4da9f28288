// Errors at the edges (files, YAML, command line). The numerical core never throws; these carry
// a location first and the offending value quoted, e.g.
//   book.csv:17: field 'equity_vol': expected a decimal such as 0.35, got '35%'
#pragma once

#include <stdexcept>
#include <string>

namespace firmcall {

/// Exit codes of the command-line tool (documented in README.md).
enum ExitCode : int {
  kExitOk = 0,          ///< every obligor scored
  kExitRowsFailed = 1,  ///< the run completed, but at least one obligor could not be scored
  kExitInputError = 2,  ///< a file could not be read or is malformed, or the command line is wrong
  kExitInternal = 3,    ///< an unexpected internal error (a bug): please report it
};

/// A whole file (or the command line) is unusable. Carries the exit code kExitInputError.
class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// Formats "file:line: message" (line omitted when 0).
std::string located(const std::string& file, std::size_t line, const std::string& message);

}  // namespace firmcall
