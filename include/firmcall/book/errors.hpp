// Errors at the edges (files, YAML, command line). The numerical core never throws; these carry
// a location first and the offending value quoted, e.g.
//   book.csv:17: field 'equity_vol': expected a decimal such as 0.35, got '35%'
#pragma once

#include <stdexcept>
#include <string>

namespace firmcall {

/// A whole file (or the command line) is unusable. The command-line tool exits with code 2 on it.
class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// Formats "file:line: message" (line omitted when 0).
std::string located(const std::string& file, std::size_t line, const std::string& message);

}  // namespace firmcall
