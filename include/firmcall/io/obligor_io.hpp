// Reading obligor books: YAML (hand-written books, run-wide defaults) and CSV (one obligor a row).
//
// YAML book:
//   book: Demo counterparties          # optional label
//   as_of: 2026-11-30                  # optional
//   defaults: {rate: 0.03, horizon: 1, default_point_weight: 0.5, drift: 0.05, lgd: 0.45}
//   obligors:
//     - {id: ALD-01, name: Alder Freight, market_cap: 1250, equity_vol: 0.32,
//        short_term_debt: 400, long_term_debt: 900, rate: 0.031}
// Keys of an obligor are the CSV column names. An unknown key makes that obligor invalid (a typo
// must not fall back to a default silently); an unknown top-level or defaults key is a file error.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/io/csv.hpp"

namespace firmcall {

/// A whole book in memory (YAML books, and CSV books for the commands that need every row at once).
struct Book {
  std::string origin;  ///< file name used in messages
  std::string label;   ///< YAML `book:` or empty
  std::string as_of;   ///< YAML `as_of:` or empty
  BookDefaults defaults;
  std::vector<ObligorRecord> obligors;
  std::vector<std::string> notes;  ///< e.g. CSV columns that are not used
};

enum class BookFormat { yaml, csv };

/// Format from the file name: .yaml/.yml are YAML, .csv is CSV; anything else is an InputError.
BookFormat book_format_of(const std::string& path);

/// Parses a YAML book. InputError (file:line: ...) for syntax errors and unknown top-level keys.
Book parse_yaml_book(const std::string& text, const std::string& origin);

/// Parses a whole CSV book held in memory (see csv.hpp for the dialect).
Book parse_csv_book(const std::string& text, const std::string& origin, BookUse use = BookUse::scoring);

/// Reads a book of either format from a file.
Book load_book(const std::string& path, BookUse use = BookUse::scoring);

/// Marks every obligor whose id repeats an earlier one (read_error names the first line).
void mark_duplicate_ids(std::vector<ObligorRecord>& obligors);

namespace detail {

/// Buffers of parse_csv_records, reused from call to call.
struct CsvParseScratch {
  std::vector<std::string_view> fields;
  std::string unescaped;
};

/// Reads the header record at the start of `rest` (a byte-order mark and blank lines before it
/// skipped; `line` is the line of rest[0] and moves past the header); notes unused columns.
CsvColumns parse_csv_header(std::string_view& rest, std::size_t& line, const std::string& origin, BookUse use,
                            std::vector<std::string>& notes);

/// Appends the next records of `rest` (whole records only) to `out`, at most `max_records` that
/// are not blank, as parse_csv_book reads them (ids not checked for duplicates); moves `rest` and
/// `line` past them. Returns the line of the last record taken (0 when none).
std::size_t parse_csv_records(std::string_view& rest, std::size_t& line, const CsvColumns& cols,
                              std::size_t max_records, std::vector<ObligorRecord>& out, CsvParseScratch& sc);

}  // namespace detail

}  // namespace firmcall
