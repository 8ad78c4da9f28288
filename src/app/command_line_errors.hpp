// The command line's wording of the library's option errors: the library names the field of its
// options struct ("barrier_ratio"), the user typed a flag (--barrier-ratio).
#pragma once

#include <string>

#include "firmcall/book/errors.hpp"

namespace firmcall::cli {

/// The message for `e` in the command line's terms, e.g. "--barrier-ratio: applies to the
/// first-passage model (--model first-passage or both)"; e.what() for a field no flag sets.
std::string command_line_message(const OptionError& e);

}  // namespace firmcall::cli
