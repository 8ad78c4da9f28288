// Reading market history: equity values in long format and dated balance sheets (CSV, the
// dialect of csv.hpp).
//
// Equity history, one row per obligor and trading day, rows in any order:
//   date,id,market_cap                    or    date,id,close,shares_outstanding
//   2026-01-02,ALD-01,2450.5                    2026-01-02,ALD-01,24.505,100
// When a row gives both, market_cap wins. Other columns are reported as unused.
//
// Balance sheets, one row per obligor and reporting date; on each trading day the latest sheet
// dated on or before it applies:
//   id,as_of,short_term_debt,long_term_debt[,default_point]
//
// Policies (file problems stop the run; obligor problems make only that obligor fail):
//   file:     unreadable or empty file, a missing or repeated required column, a quote never
//             closed, a row without an id (it belongs to no obligor).
//   obligor:  a bad date, a number that does not parse, a non-positive price, market value or
//             share count, a field count different from the header, a date given twice.
//   notes:    rows out of date order (sorted, noted); a row with no equity value (a missing day);
//             trading days missing inside an obligor's span (returns across a gap are taken as
//             multi-day returns). The trading calendar is every date that appears in the file.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

namespace firmcall {

/// The supported range of dates. ISO 8601 itself runs from 0000-01-01, but market data before
/// year 1000 is a placeholder (0001-01-01 is a common "no date" value), so it is refused by name.
inline constexpr std::string_view kFirstIsoDate = "1000-01-01";
inline constexpr std::string_view kLastIsoDate = "9999-12-31";

/// Days since 1970-01-01 of an ISO 8601 calendar date "YYYY-MM-DD" (surrounding spaces allowed);
/// nullopt unless it is a real date from kFirstIsoDate to kLastIsoDate.
std::optional<std::int32_t> parse_iso_date(std::string_view s) noexcept;

/// "YYYY-MM-DD" of a day number from parse_iso_date.
std::string format_iso_date(std::int32_t days);

/// A problem tied to a file line (line 0: none), already phrased "field 'x': reason, got 'v'".
struct LocatedProblem {
  std::size_t line = 0;
  std::string text;
  bool empty() const noexcept { return text.empty(); }
};

/// One equity observation.
struct EquityRow {
  std::int32_t date = 0;         ///< days since 1970-01-01
  std::int32_t trading_day = 0;  ///< position of the date in the file's trading calendar
  std::uint32_t line = 0;        ///< 1-based line in the file
  double equity_value = 0.0;     ///< market value of equity, currency units (> 0)
};

/// One obligor's rows, in date order once the file is read.
struct ObligorEquityHistory {
  std::string id;
  std::vector<EquityRow> rows;
  LocatedProblem error;           ///< the first problem; empty when usable
  std::size_t more_problems = 0;  ///< further problems after the first
  std::vector<LocatedProblem> notes;
  std::size_t missing_days = 0;  ///< trading days absent between the first and last row
  bool usable() const noexcept { return error.empty(); }
};

/// A whole equity history file.
struct EquityHistory {
  std::string origin;                          ///< file name used in messages
  std::vector<ObligorEquityHistory> obligors;  ///< in order of first appearance
  std::vector<std::int32_t> calendar;          ///< every date in the file, ascending, unique
  std::vector<std::string> notes;              ///< file-level notes (unused columns)
  /// The obligor with this id, or nullptr.
  const ObligorEquityHistory* find(std::string_view id) const;

  struct Hash {
    using is_transparent = void;
    std::size_t operator()(std::string_view s) const noexcept { return std::hash<std::string_view>{}(s); }
  };
  std::unordered_map<std::string, std::size_t, Hash, std::equal_to<>> index;  ///< id -> position
};

/// Parses an equity history held in memory. Throws InputError ("file:line: ...") for file
/// problems; obligor problems and notes are recorded per obligor (see the file comment).
EquityHistory parse_equity_history(std::string_view text, const std::string& origin);

/// Reads an equity history file.
EquityHistory load_equity_history(const std::string& path);

/// One dated balance sheet.
struct BalanceSheet {
  std::int32_t as_of = 0;  ///< days since 1970-01-01
  std::size_t line = 0;
  std::optional<double> short_term_debt;  ///< currency units (>= 0)
  std::optional<double> long_term_debt;   ///< currency units (>= 0)
  std::optional<double> default_point;    ///< currency units (> 0); overrides the debt rule
};

/// One obligor's balance sheets, ascending by as_of once the file is read.
struct ObligorBalanceSheets {
  std::vector<BalanceSheet> sheets;
  LocatedProblem error;  ///< the first problem; empty when usable
  std::size_t more_problems = 0;
};

/// A whole balance-sheet file.
struct BalanceSheets {
  std::string origin;
  std::vector<std::string> ids;  ///< in order of first appearance
  std::unordered_map<std::string, ObligorBalanceSheets, EquityHistory::Hash, std::equal_to<>> by_id;
  std::vector<std::string> notes;
  const ObligorBalanceSheets* find(std::string_view id) const;
};

/// Parses a balance-sheet file held in memory (same error policy as the equity history; a date
/// given twice for one obligor is an obligor problem; a row needs both debts or default_point).
BalanceSheets parse_balance_sheets(std::string_view text, const std::string& origin);

/// Reads a balance-sheet file.
BalanceSheets load_balance_sheets(const std::string& path);

}  // namespace firmcall
