// The command line's wording of the library's option errors. See command_line_errors.hpp.
#include "command_line_errors.hpp"

#include <string_view>
#include <utility>

namespace firmcall::cli {

namespace {
// The flag that sets each field of the library's options structs.
constexpr std::pair<std::string_view, std::string_view> kFlags[] = {
    {"horizons", "--horizons"},              // TermOptionText, ReportOptions
    {"model", "--model"},                    // TermOptionText
    {"calibration", "--calibration"},        // TermOptionText
    {"barrier_ratio", "--barrier-ratio"},    // TermOptionText
    {"barrier_growth", "--barrier-growth"},  // TermOptionText
    {"term_ids", "--names"},                 // ReportOptions
    {"sheet_ids", "--sheet"},                // ReportOptions
    {"as_of", "--as-of"},                    // RecordOptions
};
}  // namespace

std::string command_line_message(const OptionError& e) {
  for (const auto& [field, flag] : kFlags) {
    if (field != e.field()) continue;
    const std::string name(flag);
    switch (e.need()) {
      case OptionNeed::none:
        return name + ": " + e.reason();
      case OptionNeed::term_structure:
        return name + ": applies to term structures; add --horizons LIST or --model first-passage|both";
      case OptionNeed::first_passage:
        return name + ": applies to the first-passage model (--model first-passage or both)";
    }
  }
  return e.what();
}

std::string command_line_message(const StoreError& e) {
  switch (e.advice()) {
    case StoreAdvice::name_earlier_run:
      return e.message() + " (name a run with --against)";
    case StoreAdvice::record_first:
      return e.message() + " (record a run first: firmcall score BOOK --record)";
    case StoreAdvice::name_store_file:
      return e.message() + "; name a file with --db or monitoring.store";
  }
  return e.what();
}

}  // namespace firmcall::cli
