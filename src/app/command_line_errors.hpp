// The command line's wording of the library's option and store errors: the library names the field
// of its options struct ("barrier_ratio") where the user typed a flag (--barrier-ratio), and gives
// advice on the store in its own terms where the user needs a command or a flag.
#pragma once

#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/monitor/store_error.hpp"

namespace firmcall::cli {

/// The message for `e` in the command line's terms, e.g. "--barrier-ratio: applies to the
/// first-passage model (--model first-passage or both)"; e.what() for a field no flag sets.
std::string command_line_message(const OptionError& e);

/// The message for `e` with its advice in the command line's terms, e.g. "no history store at
/// 'h.sqlite' (record a run first: firmcall score BOOK --record)".
std::string command_line_message(const StoreError& e);

}  // namespace firmcall::cli
