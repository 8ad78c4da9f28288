#include "firmcall/io/csv.hpp"

#include <algorithm>
#include <bit>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>

#include "firmcall/book/errors.hpp"

#ifdef __SSE2__
#include <emmintrin.h>
#endif

namespace firmcall {

std::string record_too_long_problem() {
  return "row is longer than " + std::to_string(kMaxCsvRecordBytes) + " bytes (skipped)";
}

std::string no_final_line_break_note() {
  return "note: the file does not end with a line break; its last row was read as it stands "
         "(check that the file was not cut short)";
}

std::string quoted_cell(std::string_view cell) {
  std::string s = "'";
  s += cell.substr(0, 40);
  if (cell.size() > 40) s += "...";
  return s + "'";
}

std::string stray_quote_problem(std::string_view column, std::string_view cell) {
  return "field '" + std::string(column) + "': stray '\"' in the cell " + quoted_cell(cell) +
         " (a cell holding quotes must be quoted whole, with each inner quote doubled)";
}

std::size_t split_csv_record(std::string_view text, std::vector<std::string_view>& fields,
                             std::string& scratch, bool& unterminated, std::size_t* stray_quote) {
  fields.clear();
  unterminated = false;
  std::size_t stray = kNoStrayQuote;
  const auto done = [&](std::size_t used) {
    if (stray_quote != nullptr) *stray_quote = stray;
    return used;
  };
  scratch.clear();
  if (scratch.capacity() < text.size()) scratch.reserve(std::min<std::size_t>(text.size(), 1 << 20));
  const char* p = text.data();
  const char* const end = p + text.size();
  while (true) {
    if (p < end && *p == '"') {
      // Quoted field.
      ++p;
      const char* start = p;
      bool escaped = false;
      while (true) {
        const char* q = static_cast<const char*>(std::memchr(p, '"', static_cast<std::size_t>(end - p)));
        if (q == nullptr) {
          unterminated = true;
          fields.emplace_back(start, static_cast<std::size_t>(end - start));
          return done(text.size());
        }
        if (q + 1 < end && q[1] == '"') {
          escaped = true;
          p = q + 2;
          continue;
        }
        p = q + 1;
        std::string_view raw(start, static_cast<std::size_t>(q - start));
        if (escaped) {
          if (scratch.capacity() - scratch.size() < raw.size()) {
            // Rare: very long escaped field; fall back to the raw text (still readable).
            fields.push_back(raw);
          } else {
            const std::size_t at = scratch.size();
            for (std::size_t i = 0; i < raw.size(); ++i) {
              scratch.push_back(raw[i]);
              if (raw[i] == '"') ++i;
            }
            fields.emplace_back(scratch.data() + at, scratch.size() - at);
          }
        } else {
          fields.push_back(raw);
        }
        // Blanks between the closing quote and the separator are tolerated; anything else is a
        // stray quote (e.g. "Bir"ch"), which would otherwise be dropped silently.
        bool stray_here = false;
        while (p < end && *p != ',' && *p != '\n' && *p != '\r') {
          if (*p != ' ' && *p != '\t') stray_here = true;
          ++p;
        }
        if (stray_here) {  // the cell is kept as written, quotes and all, for the message
          fields.back() = std::string_view(start - 1, static_cast<std::size_t>(p - (start - 1)));
          if (stray == kNoStrayQuote) stray = fields.size() - 1;
        }
        break;
      }
    } else {
      const char* start = p;
      while (p < end && *p != ',' && *p != '\n' && *p != '\r') {
        if (*p == '"' && stray == kNoStrayQuote) stray = fields.size();
        ++p;
      }
      fields.emplace_back(start, static_cast<std::size_t>(p - start));
    }
    if (p >= end) return done(text.size());
    if (*p == ',') {
      ++p;
      continue;
    }
    // Line end.
    if (*p == '\r') ++p;
    if (p < end && *p == '\n') ++p;
    return done(static_cast<std::size_t>(p - text.data()));
  }
}

std::size_t split_plain_record(std::string_view text, std::vector<std::string_view>& fields) {
  fields.clear();
  const char* const begin = text.data();
  const char* const end = begin + text.size();
  const char* field_start = begin;
  // At a line break: the record's fields are complete; it is consumed up to the next '\n'.
  const auto line_end = [&](const char* at) {
    fields.emplace_back(field_start, static_cast<std::size_t>(at - field_start));
    const void* nl = std::memchr(at, '\n', static_cast<std::size_t>(end - at));
    return nl ? static_cast<std::size_t>(static_cast<const char*>(nl) - begin) + 1 : text.size();
  };
  const char* p = begin;
#ifdef __SSE2__
  const __m128i comma = _mm_set1_epi8(',');
  const __m128i lf = _mm_set1_epi8('\n');
  const __m128i cr = _mm_set1_epi8('\r');
  while (end - p >= 16) {
    const __m128i v = _mm_loadu_si128(reinterpret_cast<const __m128i*>(p));
    auto mask = static_cast<unsigned>(_mm_movemask_epi8(
        _mm_or_si128(_mm_cmpeq_epi8(v, comma), _mm_or_si128(_mm_cmpeq_epi8(v, lf), _mm_cmpeq_epi8(v, cr)))));
    while (mask != 0) {
      const char* q = p + std::countr_zero(mask);
      mask &= mask - 1;
      if (*q != ',') return line_end(q);
      fields.emplace_back(field_start, static_cast<std::size_t>(q - field_start));
      field_start = q + 1;
    }
    p += 16;
  }
#endif
  for (; p < end; ++p) {
    if (*p == ',') {
      fields.emplace_back(field_start, static_cast<std::size_t>(p - field_start));
      field_start = p + 1;
    } else if (*p == '\n' || *p == '\r') {
      return line_end(p);
    }
  }
  fields.emplace_back(field_start, static_cast<std::size_t>(end - field_start));
  return text.size();
}

namespace {
// One byte of a CSV scan; true when it is a '\n' that ends a record.
inline bool scan_byte(CsvScanState::At& at, char c) noexcept {
  using At = CsvScanState::At;
  switch (at) {
    case At::in_quotes:
      if (c == '"') at = At::quote_in_quotes;
      return false;
    case At::quote_in_quotes:
      if (c == '"') {  // "" inside quotes
        at = At::in_quotes;
        return false;
      }
      break;  // the field is closed: c is read as outside quotes
    case At::field_start:
      if (c == '"') {
        at = At::in_quotes;
        return false;
      }
      break;
    case At::in_field:
      break;
  }
  if (c == ',' || c == '\r') {
    at = At::field_start;
  } else if (c == '\n') {
    at = At::field_start;
    return true;
  } else {
    at = At::in_field;  // a '"' here is a stray quote: it opens nothing
  }
  return false;
}
}  // namespace

std::size_t CsvScanState::find_record_end(std::string_view text, std::size_t& lines) noexcept {
  for (std::size_t i = 0; i < text.size(); ++i) {
    if (text[i] == '\n') ++lines;
    if (scan_byte(at, text[i])) return i + 1;
  }
  return std::string_view::npos;
}

std::size_t last_record_end(std::string_view text) noexcept {
  CsvScanState::At at = CsvScanState::At::field_start;
  std::size_t last = 0;
  for (std::size_t i = 0; i < text.size(); ++i) {
    if (scan_byte(at, text[i])) last = i + 1;
  }
  return last;
}

std::size_t count_lines(std::string_view text) noexcept {
  std::size_t n = 0;
  const char* p = text.data();
  const char* const end = p + text.size();
  while (p < end) {
    const void* nl = std::memchr(p, '\n', static_cast<std::size_t>(end - p));
    if (nl == nullptr) break;
    ++n;
    p = static_cast<const char*>(nl) + 1;
  }
  return n;
}

void CsvRecordReader::start(std::string_view text, std::size_t first_line, bool at_end) noexcept {
  rest_ = text;
  consumed_ = 0;
  line_ = first_line;
  next_line_ = first_line;
  record_bytes_ = 0;
  ended_without_line_break_ = false;
  if (first_line == 1 && rest_.substr(0, 3) == "\xEF\xBB\xBF") {
    rest_.remove_prefix(3);
    consumed_ = 3;
  }
  if (!at_end) rest_ = rest_.substr(0, last_record_end(rest_));
}

bool CsvRecordReader::next() {
  while (!rest_.empty()) {
    bool unterminated = false;
    const std::size_t used = split_csv_record(rest_, fields_, scratch_, unterminated);
    const std::string_view raw = rest_.substr(0, used);
    line_ = next_line_;
    next_line_ += count_lines(raw);
    rest_.remove_prefix(used);
    consumed_ += used;
    if (unterminated) throw InputError(located(origin_, line_, "a quoted field is never closed"));
    if (fields_.size() == 1 && trim_blanks(fields_[0]).empty()) continue;  // blank line
    record_bytes_ = used;
    ended_without_line_break_ = rest_.empty() && raw.back() != '\n' && raw.back() != '\r';
    return true;
  }
  return false;
}

std::string_view trim_blanks(std::string_view s) noexcept {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

namespace {

// Exact powers of ten as doubles (10^22 is the largest one a double holds exactly).
constexpr double kExactPow10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
                                  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

// The common cell "[-]digits[.digits]" whose digits form an integer m <= 2^53 with at most 22
// decimals: m and 10^decimals are exact doubles, so one division rounds correctly (Clinger 1990,
// "How to read floating point numbers accurately") and gives the value from_chars gives. Returns
// false for anything else, which from_chars then reads.
bool plain_decimal(std::string_view s, double& value) noexcept {
  const char* p = s.data();
  const char* const end = p + s.size();
  const bool negative = p < end && *p == '-';
  if (negative) ++p;
  std::uint64_t m = 0;
  int digits = 0;
  const char* const int_start = p;
  for (; p < end && static_cast<unsigned>(*p - '0') < 10U; ++p, ++digits) {
    if (digits >= 18) return false;
    m = m * 10 + static_cast<unsigned>(*p - '0');
  }
  if (p == int_start) return false;
  int decimals = 0;
  if (p < end && *p == '.') {
    ++p;
    const char* const frac_start = p;
    for (; p < end && static_cast<unsigned>(*p - '0') < 10U; ++p, ++digits, ++decimals) {
      if (digits >= 18) return false;
      m = m * 10 + static_cast<unsigned>(*p - '0');
    }
    if (p == frac_start) return false;
  }
  if (p != end || m > (std::uint64_t{1} << 53) || decimals > 22) return false;
  const double v = static_cast<double>(m) / kExactPow10[decimals];
  value = negative ? -v : v;
  return true;
}

}  // namespace

bool parse_number(std::string_view cell, double& value) noexcept {
  cell = trim_blanks(cell);
  if (cell.empty()) return false;
  if (cell.front() == '+') {
    cell.remove_prefix(1);
    if (cell.empty() || cell.front() == '-' || cell.front() == '+') return false;  // "+-0.03"
  }
  if (plain_decimal(cell, value)) return true;
  const auto r = std::from_chars(cell.data(), cell.data() + cell.size(), value, std::chars_format::general);
  return r.ec == std::errc() && r.ptr == cell.data() + cell.size() && std::isfinite(value);
}

CsvColumns CsvColumns::from_header(const std::vector<std::string_view>& header, const std::string& origin,
                                   BookUse use) {
  CsvColumns cols;
  bool seen_num[kNumFieldCount] = {};
  bool seen_text[kTextFieldCount] = {};
  for (std::size_t i = 0; i < header.size(); ++i) {
    Column c;
    c.name = std::string(trim_blanks(header[i]));
    if (c.name.empty()) {
      throw InputError(located(origin, 1, "header: column " + std::to_string(i + 1) + " has no name"));
    }
    if (field_from_string(c.name, c.num, c.text)) {
      bool& seen =
          c.num ? seen_num[static_cast<std::size_t>(*c.num)] : seen_text[static_cast<std::size_t>(*c.text)];
      if (seen) throw InputError(located(origin, 1, "header: column '" + c.name + "' appears twice"));
      seen = true;
    } else {
      cols.unused.push_back(c.name);
    }
    cols.columns.push_back(std::move(c));
  }
  if (!seen_text[static_cast<std::size_t>(TextField::id)]) {
    throw InputError(located(origin, 1, "header: required column 'id' is missing"));
  }
  if (use == BookUse::history) return cols;
  if (!seen_num[static_cast<std::size_t>(NumField::market_cap)] &&
      !(seen_num[static_cast<std::size_t>(NumField::share_price)] &&
        seen_num[static_cast<std::size_t>(NumField::shares_outstanding)])) {
    throw InputError(located(
        origin, 1,
        "header: required column 'market_cap' (or 'share_price' with 'shares_outstanding') is missing"));
  }
  if (!seen_num[static_cast<std::size_t>(NumField::equity_vol)]) {
    throw InputError(located(origin, 1, "header: required column 'equity_vol' is missing"));
  }
  return cols;
}

std::string CsvColumns::name_of(std::size_t i) const {
  return i < columns.size() ? columns[i].name : "column " + std::to_string(i + 1);
}

void parse_obligor_fields(const std::vector<std::string_view>& fields, const CsvColumns& cols,
                          ObligorRecord& rec) {
  const std::size_t n = std::min(fields.size(), cols.columns.size());
  for (std::size_t i = 0; i < n; ++i) {
    const CsvColumns::Column& c = cols.columns[i];
    if (c.text) {
      const std::string_view cell = trim_blanks(fields[i]);
      rec.get(*c.text).assign(cell);
      if (!valid_utf8(cell) && rec.read_error.empty()) {
        rec.read_error = "field '" + c.name + "': not valid UTF-8 (save the file as UTF-8)";
      }
    } else if (c.num) {
      const std::string_view cell = trim_blanks(fields[i]);
      if (cell.empty()) continue;
      double v = 0.0;
      if (parse_number(cell, v)) {
        rec.set(*c.num, v);
      } else if (rec.read_error.empty()) {
        rec.read_error = "field '" + c.name + "': expected a finite decimal number such as 0.35, got '" +
                         std::string(cell.substr(0, 40)) + "'";
      }
    }
  }
  if (fields.size() != cols.columns.size() && rec.read_error.empty()) {
    rec.read_error = "row has " + std::to_string(fields.size()) + " fields, the header has " +
                     std::to_string(cols.columns.size());
  }
}

}  // namespace firmcall
