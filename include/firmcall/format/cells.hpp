// Cells of every output: numbers at 17 significant digits (they read back to the same double),
// CSV and JSON escaping, the problem list and caution under tables, and the output format word.
#pragma once

#include <cstddef>
#include <functional>
#include <initializer_list>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace firmcall {

/// Output formats.
enum class OutputFormat { table, csv, json };

/// A writer of the class that writes `format` (Csv, Json or Table, each derived from Base), built
/// from `args`.
template <class Base, class Csv, class Json, class Table, class... Args>
std::unique_ptr<Base> make_format_writer(OutputFormat format, const Args&... args) {
  switch (format) {
    case OutputFormat::json:
      return std::make_unique<Json>(args...);
    case OutputFormat::table:
      return std::make_unique<Table>(args...);
    case OutputFormat::csv:
      break;
  }
  return std::make_unique<Csv>(args...);
}

/// Where the output text goes (a file, stdout, or a string in tests).
using TextSink = std::function<void(std::string_view)>;

/// Appends v as the shortest decimal that reads back to the same double (Python's repr layout,
/// integers without ".0"); non-finite values append nothing.
void append_number(std::string& out, double v);

/// Room write_number needs (it may write scratch bytes past the number's end, within this).
inline constexpr std::size_t kMaxNumberChars = 40;

/// Writes v as append_number does at p (room for kMaxNumberChars); returns the end.
char* write_number(char* p, double v) noexcept;
/// Appends ",v" for each value as append_number writes it (",", alone when not finite).
void append_csv_numbers(std::string& out, std::span<const double> values);
/// Appends each cell as append_csv_text does, each followed by a comma (the leading text cells of a row).
void append_csv_texts(std::string& out, std::initializer_list<std::string_view> cells);
/// Appends column names joined by commas (a CSV header, or its continuation after a comma).
void append_csv_names(std::string& out, const std::vector<std::string_view>& names);
/// The names of a comma-separated list such as "id,name,pd" (a column layout kept as one literal);
/// the views point into `list`, which must outlive them.
std::vector<std::string_view> split_names(std::string_view list);
/// Appends a CSV cell, quoted when it holds a comma, quote or line break. A text cell that a
/// spreadsheet would read as a formula (csv_formula_like) is counted, and written after a single
/// quote when the guard is on (set_csv_text_guard).
void append_csv_text(std::string& out, std::string_view s);

/// True when a spreadsheet would read `s` as a formula: it begins with = + - @, tab or CR and is not
/// a number (OWASP, "CSV Injection").
bool csv_formula_like(std::string_view s) noexcept;

/// The CSV text guard for this process: off (the default) keeps text cells exact; on writes a single
/// quote before each formula-like text cell (OWASP's advice). Numbers are never altered.
void set_csv_text_guard(bool neutralise) noexcept;

/// The formula-like text cells written since the last call: how many, and the first few (as written
/// in the data, at most 3). Resets the count.
struct CsvFormulaCells {
  std::size_t count = 0;
  bool guarded = false;  ///< the guard was on: they were written after a single quote
  std::vector<std::string> first;
};
CsvFormulaCells take_csv_formula_cells();
/// Appends a JSON string literal (with quotes), escaping as RFC 8259 requires.
void append_json_string(std::string& out, std::string_view s);
/// Appends a JSON number, or null when v is not finite.
void append_json_number(std::string& out, double v);

/// The caution printed under every table of a Merton-model run.
inline constexpr std::string_view kTableCaution =
    "Model estimates under the Merton assumptions; not a credit decision on their own.\n";

/// Appends the problems listed under a table, one per line indented by two spaces (wrapped at
/// `wrap_width` columns when it is not 0), then "  ... and N more (see --format csv, column
/// message)" when `not_listed` is not 0.
void append_table_problems(std::string& out, const std::vector<std::string>& problems, std::size_t not_listed,
                           std::size_t wrap_width = 0);

namespace detail {
/// Text broken at spaces into lines of at most `width` columns, `indent` spaces first and twice that
/// on continuation lines; ends with a line break.
std::string wrapped(const std::string& text, std::size_t indent, std::size_t width);
}  // namespace detail

}  // namespace firmcall
