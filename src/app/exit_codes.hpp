// Exit codes of the command-line tool (documented in README.md). The library reports failures as
// exceptions (InputError for unusable input) and per-row statuses; main.cpp maps each class of
// failure to one of these codes, and each command maps its run's row statuses.
#pragma once

#include <cstddef>

namespace firmcall::cli {

/// Exit codes of the command-line tool.
enum ExitCode : int {
  kExitOk = 0,          ///< every obligor scored
  kExitRowsFailed = 1,  ///< the run completed, but at least one obligor could not be scored
  kExitInputError = 2,  ///< a file could not be read or is malformed, or the command line is wrong
  kExitInternal = 3,    ///< an unexpected internal error (a bug): please report it
};

/// The exit code of a run that completed with `failed` rows (obligors) not computed.
inline ExitCode rows_exit_code(std::size_t failed) {
  return failed > 0 ? kExitRowsFailed : kExitOk;
}

}  // namespace firmcall::cli
