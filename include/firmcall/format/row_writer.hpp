// Rows of the monitoring commands in three formats from one column layout: a fixed-width table for
// people, and CSV and JSON for programs with numbers at 17 significant digits (output.hpp). Rows
// are written as they come, so long reports need no memory beyond one row.
//
// **Example**:
//   firmcall::RowWriter w({{"id", "obligor", "", 12, firmcall::CellStyle::text},
//                             {"pd", "PD", "%", 10, firmcall::CellStyle::percent_pd}},
//                            firmcall::OutputFormat::csv);
//   std::string out;
//   w.header(out);
//   w.row({firmcall::ReportCell::text("ALD-01"), firmcall::ReportCell::number(0.0123)}, out);
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/format/cells.hpp"
#include "firmcall/format/table_text.hpp"

namespace firmcall {

/// How a number is shown in the table (CSV and JSON always carry the full value).
enum class CellStyle : std::uint8_t {
  text,        ///< left-aligned text, cut with '~' when too long (unless in the last table column)
  integer,     ///< whole number
  decimal3,    ///< three decimals (distance to default)
  signed3,     ///< three decimals with a sign (change in distance to default)
  percent_pd,  ///< probability in percent, four decimals, scientific below 0.001%
  signed_pp,   ///< change of a probability in percentage points, signed
  ratio,       ///< two decimals
  amount,      ///< currency, two decimals
  percent,     ///< decimal in percent, two decimals (volatility)
};

struct ReportColumn {
  std::string key;    ///< CSV header and JSON key; empty: shown in the table only
  std::string title;  ///< table heading, first line
  std::string unit;   ///< table heading, second line
  int width = 0;      ///< table width in characters; 0: not in the table
  CellStyle style = CellStyle::text;
};

/// One value: absent (empty CSV cell, JSON null, '-' in the table), text, or a number.
struct ReportCell {
  enum class Kind : std::uint8_t { none, text, number } kind = Kind::none;
  std::string text_value;
  double number_value = 0.0;
  std::string json;  ///< when not empty, written as is in JSON instead of the text (e.g. a list)
  static ReportCell none() { return {}; }
  static ReportCell text(std::string s) { return {Kind::text, std::move(s), 0.0, {}}; }
  /// A number; non-finite values are absent.
  static ReportCell number(double v);
};

/// Writes rows of one column layout as a table, CSV or JSON.
class RowWriter {
 public:
  RowWriter(std::vector<ReportColumn> columns, OutputFormat format);
  /// Table: two heading lines and a rule. CSV: the header line. JSON: nothing.
  void header(std::string& out) const;
  /// One row (one cell per column). JSON rows are objects separated by ",\n", each after `indent`.
  void row(const std::vector<ReportCell>& cells, std::string& out);
  /// Table: a rule as wide as the heading. Other formats: nothing.
  void rule(std::string& out) const;
  std::size_t rows() const noexcept { return rows_; }
  std::string json_indent = "    ";

 private:
  std::vector<ReportColumn> columns_;
  OutputFormat format_;
  std::size_t rows_ = 0;
};

/// The former name of RowWriter, kept for its users.
using ReportWriter = RowWriter;

/// Table text of a number in a style ('-' when not finite).
std::string format_cell(double v, CellStyle style);

}  // namespace firmcall
