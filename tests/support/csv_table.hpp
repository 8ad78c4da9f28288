// Test-only reader of the CSV the commands write (RFC 4180: double-quoted fields may hold commas
// and "" for a quote), written independently of src/csv.cpp so that output checks do not go
// through the program's own parser. Cells are looked up by header name.
#pragma once

#include <doctest/doctest.h>

#include <charconv>
#include <cmath>
#include <string>
#include <vector>

namespace firmcall::testing {

struct CsvTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;

  std::size_t col(const std::string& name) const {
    for (std::size_t i = 0; i < header.size(); ++i) {
      if (header[i] == name) return i;
    }
    FAIL("no column " << name);
    return 0;
  }
  const std::string& cell(std::size_t row, const std::string& name) const {
    return rows.at(row).at(col(name));
  }
  /// The cell as a number (exact for 17-digit output); NaN when empty.
  double number(std::size_t row, const std::string& name) const {
    const std::string& s = cell(row, name);
    double v = std::nan("");
    std::from_chars(s.data(), s.data() + s.size(), v);
    return v;
  }
};

inline CsvTable parse_csv_table(const std::string& text) {
  CsvTable csv;
  std::vector<std::string> cells;
  std::string cell;
  bool quoted = false;
  bool first = true;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"' && i + 1 < text.size() && text[i + 1] == '"') {
        cell.push_back('"');
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        cell.push_back(c);
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      cells.push_back(cell);
      cell.clear();
    } else if (c == '\n') {
      cells.push_back(cell);
      cell.clear();
      if (first) {
        csv.header = cells;
        first = false;
      } else {
        csv.rows.push_back(cells);
      }
      cells.clear();
    } else if (c != '\r') {
      cell.push_back(c);
    }
  }
  return csv;
}

}  // namespace firmcall::testing
