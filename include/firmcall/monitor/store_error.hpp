// History-store errors that end in advice on what to do next. How to do it depends on the caller
// (the command line names its commands and flags), so the error carries the kind of advice beside
// the message; what() adds the library's own wording of it.
#pragma once

#include <string>
#include <utility>

#include "firmcall/book/errors.hpp"

namespace firmcall {

/// What the user can do about a StoreError.
enum class StoreAdvice {
  name_earlier_run,  ///< name the run to compare with (the run is the first one)
  record_first,      ///< record a run first (there is no store yet)
  name_store_file,   ///< name the store file (there is no default place for it)
};

/// A history-store error with advice: what() is message() followed by the advice in the
/// library's words, e.g. "no history store at 'h.sqlite' (record a run first)".
class StoreError : public InputError {
 public:
  StoreError(std::string message, StoreAdvice advice)
      : InputError(message + advice_text(advice)), message_(std::move(message)), advice_(advice) {}
  const std::string& message() const noexcept { return message_; }
  StoreAdvice advice() const noexcept { return advice_; }

  /// The library's wording of `advice`, as appended to the message.
  static std::string advice_text(StoreAdvice advice) {
    switch (advice) {
      case StoreAdvice::name_earlier_run:
        return " (name the run to compare with)";
      case StoreAdvice::record_first:
        return " (record a run first)";
      case StoreAdvice::name_store_file:
        return "; name the store file or set monitoring.store";
    }
    return {};
  }

 private:
  std::string message_;
  StoreAdvice advice_;
};

}  // namespace firmcall
