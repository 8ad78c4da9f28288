// Reading equity histories and balance sheets. See include/firmcall/history_io.hpp.
#include "firmcall/io/history_io.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <limits>
#include <memory>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"

namespace firmcall {

namespace {

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

std::string read_file(const std::string& path) {
  std::unique_ptr<std::FILE, FileCloser> f(std::fopen(path.c_str(), "rb"));
  if (!f) throw InputError("cannot open file '" + path + "'");
  std::string text;
  if (std::fseek(f.get(), 0, SEEK_END) == 0) {
    const long size = std::ftell(f.get());
    if (size > 0) text.reserve(static_cast<std::size_t>(size));
    std::fseek(f.get(), 0, SEEK_SET);
  }
  char buf[1 << 16];
  std::size_t got;
  while ((got = std::fread(buf, 1, sizeof buf, f.get())) > 0) text.append(buf, got);
  if (std::ferror(f.get())) throw InputError("cannot read file '" + path + "'");
  return text;
}

// Walks the records of a CSV text with their first line numbers; skips a byte-order mark and
// blank records. A quote that never closes is a file error.
class CsvCursor {
 public:
  CsvCursor(std::string_view text, const std::string& origin) : rest_(text), origin_(origin) {
    if (rest_.substr(0, 3) == "\xEF\xBB\xBF") rest_.remove_prefix(3);
  }
  bool next(std::vector<std::string_view>& fields, std::size_t& line) {
    while (!rest_.empty()) {
      bool unterminated = false;
      const std::size_t used = split_csv_record(rest_, fields, scratch_, unterminated, &stray_);
      line = line_;
      const std::string_view raw = rest_.substr(0, used);
      line_ += raw.size() > 0 && raw.find('\n') == raw.size() - 1 ? 1 : count_lines(raw);
      rest_.remove_prefix(used);
      if (unterminated) throw InputError(located(origin_, line, "a quoted field is never closed"));
      if (fields.size() == 1 && trim_blanks(fields[0]).empty()) continue;  // blank line
      return true;
    }
    return false;
  }

 private:
  std::string_view rest_;
  const std::string& origin_;
  std::string scratch_;
  std::size_t line_ = 1;

 public:
  std::size_t stray_ = kNoStrayQuote;  ///< field of the last record with a stray quote
};

// Column positions of a header, by the names a reader knows; unknown names become notes.
struct Header {
  std::vector<int> at;  // per known name: column index or -1
  std::size_t width = 0;
  std::vector<std::string> names;  // of every column
  bool has(std::size_t k) const { return at[k] >= 0; }
  std::string name_of(std::size_t i) const {
    return i < names.size() ? names[i] : "column " + std::to_string(i + 1);
  }
};

Header map_header(const std::vector<std::string_view>& fields, std::initializer_list<std::string_view> known,
                  const std::string& origin, std::size_t line, std::vector<std::string>& notes) {
  Header h;
  h.at.assign(known.size(), -1);
  h.width = fields.size();
  for (std::size_t i = 0; i < fields.size(); ++i) {
    const std::string_view name = trim_blanks(fields[i]);
    h.names.emplace_back(name);
    if (name.empty()) {
      throw InputError(located(origin, line, "header: column " + std::to_string(i + 1) + " has no name"));
    }
    const auto it = std::find(known.begin(), known.end(), name);
    if (it == known.end()) {
      notes.push_back(located(origin, line, "note: column '" + std::string(name) + "' is not used"));
      continue;
    }
    int& slot = h.at[static_cast<std::size_t>(it - known.begin())];
    if (slot >= 0) {
      throw InputError(located(origin, line, "header: column '" + std::string(name) + "' appears twice"));
    }
    slot = static_cast<int>(i);
  }
  return h;
}

void require_column(const Header& h, std::size_t k, std::string_view name, const std::string& origin,
                    std::size_t line) {
  if (!h.has(k)) {
    throw InputError(located(origin, line, "header: required column '" + std::string(name) + "' is missing"));
  }
}

// A CSV text read record by record: after next(), `fields` and `line` describe the record.
struct CsvRecords {
  CsvRecords(std::string_view text, const std::string& origin) : cursor(text, origin) {}
  bool next() { return cursor.next(fields, line); }
  CsvCursor cursor;
  std::vector<std::string_view> fields;
  std::size_t line = 0;
};

// The first record of a file, as a header of the `known` columns; an empty file is an error.
Header read_header(CsvRecords& in, std::initializer_list<std::string_view> known, const std::string& origin,
                   std::vector<std::string>& notes) {
  if (!in.next()) throw InputError(located(origin, 0, "empty file: a header row is required"));
  return map_header(in.fields, known, origin, in.line, notes);
}

// The trimmed id cell of a row (column `k` of the header); a row without one is a file error.
std::string_view row_id(const std::vector<std::string_view>& fields, const Header& hdr, std::size_t k,
                        const std::string& origin, std::size_t line) {
  const std::size_t id_col = static_cast<std::size_t>(hdr.at[k]);
  const std::string_view id = id_col < fields.size() ? trim_blanks(fields[id_col]) : std::string_view{};
  if (id.empty())
    throw InputError(located(origin, line, "field 'id': missing (every row needs an obligor id)"));
  return id;
}

std::string width_problem(std::size_t fields, std::size_t header_width) {
  return "row has " + std::to_string(fields) + " fields, the header has " + std::to_string(header_width);
}

void add_problem(LocatedProblem& error, std::size_t& more, std::size_t line, std::string text) {
  if (error.empty()) {
    error = {line, std::move(text)};
  } else {
    ++more;
  }
}

// A number cell: absent when empty; the problem text when it does not parse.
enum class Cell { absent, ok, bad };
Cell read_number(std::string_view cell, double& v) {
  cell = trim_blanks(cell);
  if (cell.empty()) return Cell::absent;
  return parse_number(cell, v) ? Cell::ok : Cell::bad;
}

std::string not_a_number(std::string_view field, std::string_view cell) {
  return "field '" + std::string(field) + "': expected a decimal number such as 24.5, got " +
         quoted_cell(trim_blanks(cell));
}

std::string not_a_date(std::string_view field, std::string_view cell) {
  cell = trim_blanks(cell);
  if (cell.size() == 10 && cell[4] == '-' && cell[7] == '-' && cell.substr(0, 4) < "1000" &&
      std::all_of(cell.begin(), cell.end(), [](char c) { return c == '-' || (c >= '0' && c <= '9'); })) {
    // Well formed, but before the supported years (e.g. 0001-01-01, a common placeholder).
    return "field '" + std::string(field) + "': " + std::string(cell) + " is outside the supported range " +
           std::string(kFirstIsoDate) + " to " + std::string(kLastIsoDate);
  }
  return "field '" + std::string(field) + "': expected an ISO 8601 date such as 2026-03-31, got " +
         quoted_cell(cell);
}

std::string not_positive(std::string_view field, std::string_view cell) {
  return "field '" + std::string(field) + "': must be positive, got " + quoted_cell(trim_blanks(cell));
}

// A positive value too small for a double's full precision (subnormal, below 2.2e-308): logs and
// ratios of such values are meaningless, so the cell is refused rather than read.
bool too_small(double v) noexcept {
  return v > 0.0 && !std::isnormal(v);
}

std::string too_small_problem(std::string_view field, std::string_view cell) {
  return "field '" + std::string(field) + "': " + quoted_cell(trim_blanks(cell)) +
         " is too small (below 2.2250738585072014e-308, the smallest normal double)";
}

}  // namespace

std::optional<std::int32_t> parse_iso_date(std::string_view s) noexcept {
  s = trim_blanks(s);
  if (s.size() != 10 || s[4] != '-' || s[7] != '-') return std::nullopt;
  int parts[3] = {0, 0, 0};
  const std::size_t starts[3] = {0, 5, 8};
  const std::size_t lens[3] = {4, 2, 2};
  for (int p = 0; p < 3; ++p) {
    for (std::size_t i = 0; i < lens[p]; ++i) {
      const char c = s[starts[p] + i];
      if (c < '0' || c > '9') return std::nullopt;
      parts[p] = parts[p] * 10 + (c - '0');
    }
  }
  if (parts[0] < 1000) return std::nullopt;
  const std::chrono::year_month_day ymd{std::chrono::year{parts[0]},
                                        std::chrono::month{static_cast<unsigned>(parts[1])},
                                        std::chrono::day{static_cast<unsigned>(parts[2])}};
  if (!ymd.ok()) return std::nullopt;
  return static_cast<std::int32_t>(std::chrono::sys_days{ymd}.time_since_epoch().count());
}

std::string format_iso_date(std::int32_t days) {
  const std::chrono::year_month_day ymd{std::chrono::sys_days{std::chrono::days{days}}};
  char buf[32];
  std::snprintf(buf, sizeof buf, "%04d-%02u-%02u", static_cast<int>(ymd.year()),
                static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()));
  return buf;
}

const ObligorEquityHistory* EquityHistory::find(std::string_view id) const {
  const auto it = index.find(id);
  return it == index.end() ? nullptr : &obligors[it->second];
}

const ObligorBalanceSheets* BalanceSheets::find(std::string_view id) const {
  const auto it = by_id.find(id);
  return it == by_id.end() ? nullptr : &it->second;
}

namespace {

// The steps of parse_equity_history.

enum : std::size_t { kDate, kId, kMarketCap, kClose, kShares };

Header read_equity_header(CsvRecords& in, EquityHistory& h) {
  const Header hdr =
      read_header(in, {"date", "id", "market_cap", "close", "shares_outstanding"}, h.origin, h.notes);
  const std::size_t line = in.line;
  require_column(hdr, kDate, "date", h.origin, line);
  require_column(hdr, kId, "id", h.origin, line);
  if (!hdr.has(kMarketCap) && !(hdr.has(kClose) && hdr.has(kShares))) {
    throw InputError(located(h.origin, line,
                             "header: required column 'market_cap' (or 'close' with 'shares_outstanding') "
                             "is missing"));
  }
  return hdr;
}

// Rows without an equity value of one obligor, reported as one note.
struct EmptyRows {
  std::size_t count = 0;
  std::size_t first_line = 0;
};

// Index of obligor `id` in h.obligors, adding it when new. `last` is the previous row's obligor
// (npos before the first row): files come grouped by obligor or by date with obligors in a fixed
// order, so the id is usually the last one or the one after it.
std::size_t obligor_index(EquityHistory& h, std::vector<EmptyRows>& empty_rows, std::size_t last,
                          std::string_view id) {
  constexpr std::size_t npos = static_cast<std::size_t>(-1);
  if (last != npos && h.obligors[last].id == id) return last;
  if (last + 1 < h.obligors.size() && h.obligors[last + 1].id == id) return last + 1;
  if (last != npos && !h.obligors.empty() && h.obligors[0].id == id) return 0;
  const auto it = h.index.find(id);
  if (it != h.index.end()) return it->second;
  const std::size_t added = h.obligors.size();
  h.index.emplace(std::string(id), added);
  h.obligors.emplace_back().id = std::string(id);
  empty_rows.emplace_back();
  return added;
}

// The equity value of a row: market_cap, else close x shares_outstanding. Cell::bad after
// reporting the problem through `problem`; Cell::absent when the row gives none.
template <class Report>
Cell row_equity_value(const std::vector<std::string_view>& fields, const Header& hdr, double& e,
                      const Report& problem) {
  const auto cell = [&](std::size_t k) { return fields[static_cast<std::size_t>(hdr.at[k])]; };
  const auto fail = [&](std::string text) {
    problem(std::move(text));
    return Cell::bad;
  };
  Cell mc = Cell::absent;
  if (hdr.has(kMarketCap)) {
    mc = read_number(cell(kMarketCap), e);
    if (mc == Cell::bad) return fail(not_a_number("market_cap", cell(kMarketCap)));
    if (mc == Cell::ok && !(e > 0.0)) return fail(not_positive("market_cap", cell(kMarketCap)));
    if (mc == Cell::ok && too_small(e)) return fail(too_small_problem("market_cap", cell(kMarketCap)));
    // The book reader's equity bound: log returns of values outside it overflow the variance.
    if (mc == Cell::ok && !(e >= 1e-150 && e <= 1e150)) {
      return fail("field 'market_cap': equity value must lie in [1e-150, 1e150], got " +
                  quoted_cell(trim_blanks(cell(kMarketCap))));
    }
  }
  if (mc != Cell::absent || !hdr.has(kClose) || !hdr.has(kShares)) return mc;
  double price = 0.0;
  double shares = 0.0;
  const Cell cp = read_number(cell(kClose), price);
  const Cell cs = read_number(cell(kShares), shares);
  if (cp == Cell::bad) return fail(not_a_number("close", cell(kClose)));
  if (cs == Cell::bad) return fail(not_a_number("shares_outstanding", cell(kShares)));
  if (cp == Cell::ok && !(price > 0.0)) return fail(not_positive("close", cell(kClose)));
  if (cs == Cell::ok && !(shares > 0.0)) return fail(not_positive("shares_outstanding", cell(kShares)));
  if (cp == Cell::ok && too_small(price)) return fail(too_small_problem("close", cell(kClose)));
  if (cs == Cell::ok && too_small(shares))
    return fail(too_small_problem("shares_outstanding", cell(kShares)));
  if (cp == Cell::ok && cs == Cell::absent) {
    return fail("field 'shares_outstanding': missing (needed with close when market_cap is empty)");
  }
  if (cp == Cell::absent && cs == Cell::ok) {
    return fail("field 'close': missing (needed with shares_outstanding when market_cap is empty)");
  }
  if (cp == Cell::absent) return Cell::absent;
  e = price * shares;
  if (!std::isfinite(e)) return fail("field 'close': close x shares_outstanding overflows");
  if (!std::isnormal(e)) {
    return fail("field 'close': close x shares_outstanding is too small (below 2.2250738585072014e-308)");
  }
  if (!(e >= 1e-150 && e <= 1e150)) {
    return fail("field 'close': equity value close x shares_outstanding must lie in [1e-150, 1e150]");
  }
  return Cell::ok;
}

// A row read, before it goes to its obligor.
struct ParsedRow {
  std::uint32_t obligor;
  std::int32_t date;
  std::uint32_t line;
  double equity_value;
};

// Moves the rows to exact-size per-obligor arrays, in file order.
void distribute_rows(std::vector<ParsedRow>& parsed, EquityHistory& h) {
  std::vector<std::size_t> count(h.obligors.size(), 0);
  for (const ParsedRow& r : parsed) ++count[r.obligor];
  for (std::size_t i = 0; i < h.obligors.size(); ++i) h.obligors[i].rows.reserve(count[i]);
  for (const ParsedRow& r : parsed) h.obligors[r.obligor].rows.push_back({r.date, 0, r.line, r.equity_value});
  std::vector<ParsedRow>().swap(parsed);
}

// Trading calendar: every date in the file, into h.calendar. Returns the calendar position of
// each day from `lo` (the first date) on, -1 for days without rows.
std::vector<std::int32_t> build_calendar(EquityHistory& h, std::int32_t& lo) {
  lo = std::numeric_limits<std::int32_t>::max();
  std::int32_t hi = std::numeric_limits<std::int32_t>::min();
  for (const auto& ob : h.obligors) {
    for (const auto& r : ob.rows) {
      lo = std::min(lo, r.date);
      hi = std::max(hi, r.date);
    }
  }
  std::vector<std::int32_t> position;
  if (lo <= hi) {
    std::vector<char> seen(static_cast<std::size_t>(hi - lo) + 1, 0);
    for (const auto& ob : h.obligors) {
      for (const auto& r : ob.rows) seen[static_cast<std::size_t>(r.date - lo)] = 1;
    }
    position.assign(seen.size(), -1);
    for (std::size_t d = 0; d < seen.size(); ++d) {
      if (seen[d] != 0) {
        position[d] = static_cast<std::int32_t>(h.calendar.size());
        h.calendar.push_back(lo + static_cast<std::int32_t>(d));
      }
    }
  }
  return position;
}

// Sorts an obligor's rows by date, finds repeated dates, places the rows on the calendar and
// notes empty rows and missing trading days.
void finish_obligor(ObligorEquityHistory& ob, const EmptyRows& empty,
                    const std::vector<std::int32_t>& position, std::int32_t lo,
                    const std::vector<std::int32_t>& calendar) {
  auto& rows = ob.rows;
  const auto by_date = [](const EquityRow& a, const EquityRow& b) { return a.date < b.date; };
  const auto out_of_order = std::is_sorted_until(rows.begin(), rows.end(), by_date);
  if (out_of_order != rows.end()) {
    ob.notes.push_back({out_of_order->line, "rows are not in date order: sorted by date"});
    std::stable_sort(rows.begin(), rows.end(), by_date);
  }
  for (std::size_t k = 1; k < rows.size(); ++k) {
    if (rows[k].date == rows[k - 1].date) {
      const std::size_t later = std::max(rows[k].line, rows[k - 1].line);
      const std::size_t earlier = std::min(rows[k].line, rows[k - 1].line);
      add_problem(ob.error, ob.more_problems, later,
                  "field 'date': " + format_iso_date(rows[k].date) + " appears twice (also line " +
                      std::to_string(earlier) + "); a date may appear once per obligor");
    }
  }
  for (auto& r : rows) r.trading_day = position[static_cast<std::size_t>(r.date - lo)];
  if (empty.count > 0) {
    ob.notes.push_back({empty.first_line, std::to_string(empty.count) +
                                              (empty.count == 1 ? " row has" : " rows have") +
                                              " no equity value: treated as missing days"});
  }
  if (ob.usable() && rows.size() >= 2) {
    const std::int32_t span = rows.back().trading_day - rows.front().trading_day + 1;
    ob.missing_days = static_cast<std::size_t>(span) - rows.size();
    if (ob.missing_days > 0) {
      std::size_t k = 1;
      while (rows[k].trading_day == rows[k - 1].trading_day + 1) ++k;
      const std::int32_t first_missing = calendar[static_cast<std::size_t>(rows[k - 1].trading_day) + 1];
      ob.notes.push_back({0, std::to_string(ob.missing_days) +
                                 " trading days missing between its first and last date (first " +
                                 format_iso_date(first_missing) +
                                 "); returns across a gap are taken as multi-day returns"});
    }
  }
}

}  // namespace

EquityHistory parse_equity_history(std::string_view text, const std::string& origin) {
  EquityHistory h;
  h.origin = origin;
  CsvRecords in(text, origin);
  const Header hdr = read_equity_header(in, h);
  std::vector<EmptyRows> empty_rows;
  // Rows go to one array first (sized from the line count), then to exact-size per-obligor arrays.
  std::vector<ParsedRow> parsed;
  parsed.reserve(count_lines(text) + 1);
  std::size_t last = static_cast<std::size_t>(-1);
  // The date of the last row, usually that of the next: a copy, as a quoted cell may live in
  // reused scratch memory.
  std::string last_date_text;
  std::int32_t last_date = 0;
  while (in.next()) {
    const std::vector<std::string_view>& fields = in.fields;
    const std::size_t line = in.line;
    last = obligor_index(h, empty_rows, last, row_id(fields, hdr, kId, origin, line));
    ObligorEquityHistory& ob = h.obligors[last];
    const auto problem = [&](std::string t) { add_problem(ob.error, ob.more_problems, line, std::move(t)); };
    if (const std::size_t s = in.cursor.stray_; s != kNoStrayQuote) {
      problem(stray_quote_problem(hdr.name_of(s), fields[s]));
      continue;
    }
    if (fields.size() != hdr.width) {
      problem(width_problem(fields.size(), hdr.width));
      continue;
    }
    const std::string_view date_text = fields[static_cast<std::size_t>(hdr.at[kDate])];
    if (last_date_text.empty() || date_text != last_date_text) {
      const std::optional<std::int32_t> date = parse_iso_date(date_text);
      if (!date) {
        problem(not_a_date("date", date_text));
        continue;
      }
      last_date_text.assign(date_text);
      last_date = *date;
    }
    double e = 0.0;
    const Cell value = row_equity_value(fields, hdr, e, problem);
    if (value == Cell::bad) continue;
    if (value == Cell::absent) {
      EmptyRows& p = empty_rows[last];
      if (p.count++ == 0) p.first_line = line;
      continue;
    }
    parsed.push_back({static_cast<std::uint32_t>(last), last_date, static_cast<std::uint32_t>(line), e});
  }
  distribute_rows(parsed, h);
  std::int32_t lo = 0;
  const std::vector<std::int32_t> position = build_calendar(h, lo);
  for (std::size_t i = 0; i < h.obligors.size(); ++i) {
    finish_obligor(h.obligors[i], empty_rows[i], position, lo, h.calendar);
  }
  return h;
}

EquityHistory load_equity_history(const std::string& path) {
  return parse_equity_history(read_file(path), path);
}

BalanceSheets parse_balance_sheets(std::string_view text, const std::string& origin) {
  BalanceSheets b;
  b.origin = origin;
  CsvRecords in(text, origin);
  enum : std::size_t { kSheetId, kAsOf, kShort, kLong, kDefaultPoint };
  const Header hdr =
      read_header(in, {"id", "as_of", "short_term_debt", "long_term_debt", "default_point"}, origin, b.notes);
  require_column(hdr, kSheetId, "id", origin, in.line);
  require_column(hdr, kAsOf, "as_of", origin, in.line);
  if (!hdr.has(kDefaultPoint) && !(hdr.has(kShort) && hdr.has(kLong))) {
    throw InputError(located(origin, in.line,
                             "header: required columns 'short_term_debt' and 'long_term_debt' (or "
                             "'default_point') are missing"));
  }
  while (in.next()) {
    const std::vector<std::string_view>& fields = in.fields;
    const std::size_t line = in.line;
    const std::string_view id = row_id(fields, hdr, kSheetId, origin, line);
    auto it = b.by_id.find(id);
    if (it == b.by_id.end()) {
      it = b.by_id.emplace(std::string(id), ObligorBalanceSheets{}).first;
      b.ids.emplace_back(id);
    }
    ObligorBalanceSheets& ob = it->second;
    const auto problem = [&](std::string t) { add_problem(ob.error, ob.more_problems, line, std::move(t)); };
    if (const std::size_t k = in.cursor.stray_; k != kNoStrayQuote) {
      problem(stray_quote_problem(hdr.name_of(k), fields[k]));
      continue;
    }
    if (fields.size() != hdr.width) {
      problem(width_problem(fields.size(), hdr.width));
      continue;
    }
    BalanceSheet s;
    s.line = line;
    const std::string_view as_of = fields[static_cast<std::size_t>(hdr.at[kAsOf])];
    const std::optional<std::int32_t> date = parse_iso_date(as_of);
    if (!date) {
      problem(not_a_date("as_of", as_of));
      continue;
    }
    s.as_of = *date;
    bool bad = false;
    const std::pair<std::size_t, std::string_view> number_fields[] = {
        {kShort, "short_term_debt"}, {kLong, "long_term_debt"}, {kDefaultPoint, "default_point"}};
    for (const auto& [k, name] : number_fields) {
      if (!hdr.has(k)) continue;
      const std::string_view cell = fields[static_cast<std::size_t>(hdr.at[k])];
      double v = 0.0;
      const Cell c = read_number(cell, v);
      if (c == Cell::bad) {
        problem(not_a_number(name, cell));
        bad = true;
        break;
      }
      if (c == Cell::absent) continue;
      if (k == kDefaultPoint ? !(v > 0.0) : v < 0.0) {
        problem("field '" + std::string(name) + "': must be " +
                (k == kDefaultPoint ? "positive" : "non-negative") + ", got " +
                quoted_cell(trim_blanks(cell)));
        bad = true;
        break;
      }
      // The same amount bound as the book reader's: a default point outside it is a units slip.
      if (k == kDefaultPoint && !(v >= 1e-150 && v <= 1e150)) {
        problem("field 'default_point': must lie in [1e-150, 1e150], got " + quoted_cell(trim_blanks(cell)));
        bad = true;
        break;
      }
      (k == kShort ? s.short_term_debt : k == kLong ? s.long_term_debt : s.default_point) = v;
    }
    if (bad) continue;
    if (!s.default_point && !(s.short_term_debt && s.long_term_debt)) {
      problem(std::string("field '") + (s.short_term_debt ? "long_term_debt" : "short_term_debt") +
              "': missing (give short_term_debt and long_term_debt, or default_point)");
      continue;
    }
    ob.sheets.push_back(s);
  }
  for (auto& [id, ob] : b.by_id) {
    auto& sheets = ob.sheets;
    std::stable_sort(sheets.begin(), sheets.end(),
                     [](const BalanceSheet& x, const BalanceSheet& y) { return x.as_of < y.as_of; });
    for (std::size_t k = 1; k < sheets.size(); ++k) {
      if (sheets[k].as_of == sheets[k - 1].as_of) {
        add_problem(ob.error, ob.more_problems, std::max(sheets[k].line, sheets[k - 1].line),
                    "field 'as_of': " + format_iso_date(sheets[k].as_of) + " appears twice (also line " +
                        std::to_string(std::min(sheets[k].line, sheets[k - 1].line)) +
                        "); one balance sheet per obligor and date");
      }
    }
  }
  return b;
}

BalanceSheets load_balance_sheets(const std::string& path) {
  return parse_balance_sheets(read_file(path), path);
}

}  // namespace firmcall
