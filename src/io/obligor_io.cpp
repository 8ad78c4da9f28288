#include "firmcall/io/obligor_io.hpp"

#include <algorithm>
#include <cstdio>
#include <memory>
#include <string_view>
#include <unordered_map>
#include <unordered_set>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/yaml_book_reader.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {
bool ends_with(const std::string& s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

}  // namespace

BookFormat book_format_of(const std::string& path) {
  if (ends_with(path, ".yaml") || ends_with(path, ".yml")) return BookFormat::yaml;
  if (ends_with(path, ".csv")) return BookFormat::csv;
  throw InputError("'" + path + "': unknown book format (name it .yaml, .yml or .csv)");
}

namespace {
Book read_yaml_book(YamlBookReader& reader, const std::string& origin) {
  Book book;
  book.origin = origin;
  while (reader.next(book.obligors.emplace_back())) {
  }
  book.obligors.pop_back();
  book.label = reader.label();
  book.as_of = reader.as_of();
  book.defaults = reader.defaults();
  mark_duplicate_ids(book.obligors);
  return book;
}
}  // namespace

Book parse_yaml_book(const std::string& text, const std::string& origin) {
  YamlBookReader reader(text, origin);
  return read_yaml_book(reader, origin);
}

namespace detail {

CsvColumns parse_csv_header(std::string_view& rest, std::size_t& line, const std::string& origin, BookUse use,
                            std::vector<std::string>& notes) {
  if (rest.substr(0, 3) == "\xEF\xBB\xBF") rest.remove_prefix(3);
  // Skip leading blank lines before the header.
  while (!rest.empty() && (rest.front() == '\n' || rest.front() == '\r')) {
    if (rest.front() == '\n') ++line;
    rest.remove_prefix(1);
  }
  if (rest.empty()) throw InputError(located(origin, 0, "empty file: a header row is required"));
  std::vector<std::string_view> fields;
  std::string scratch;
  bool unterminated = false;
  const std::size_t used = split_csv_record(rest, fields, scratch, unterminated);
  CsvColumns cols = CsvColumns::from_header(fields, origin, use);
  for (const auto& u : cols.unused)
    notes.push_back(located(origin, line, "note: column '" + u + "' is not used"));
  line += count_lines(rest.substr(0, used));
  rest.remove_prefix(used);
  return cols;
}

std::size_t parse_csv_records(std::string_view& rest, std::size_t& line, const CsvColumns& cols,
                              std::size_t max_records, std::vector<ObligorRecord>& out, CsvParseScratch& sc) {
  std::size_t last_line = 0;  // line of the last record that is not blank
  std::size_t taken = 0;
  while (!rest.empty() && taken < max_records) {
    const std::size_t record_line = line;
    std::size_t stray = kNoStrayQuote;
    bool unterminated = false;
    const std::size_t used = split_csv_record(rest, sc.fields, sc.unescaped, unterminated, &stray);
    const std::string_view raw = rest.substr(0, used);
    line += count_lines(raw);
    rest.remove_prefix(used);
    if (sc.fields.size() == 1 && sc.fields[0].find_first_not_of(" \t") == std::string_view::npos)
      continue;  // blank
    last_line = record_line;
    ++taken;
    ObligorRecord& rec = out.emplace_back();
    rec.line = record_line;
    if (raw.size() > kMaxCsvRecordBytes) {  // the limit of every command that reads a book
      rec.read_error = record_too_long_problem();
      continue;
    }
    parse_obligor_fields(sc.fields, cols, rec);
    if (unterminated) {
      rec.read_error = "a quoted field is never closed";
    } else if (stray != kNoStrayQuote) {
      rec.read_error = stray_quote_problem(cols.name_of(stray), sc.fields[stray]);
    }
  }
  return last_line;
}

}  // namespace detail

Book parse_csv_book(const std::string& text, const std::string& origin, BookUse use) {
  Book book;
  book.origin = origin;
  std::string_view rest(text);
  std::size_t line = 1;
  const CsvColumns cols = detail::parse_csv_header(rest, line, origin, use, book.notes);
  detail::CsvParseScratch scratch;
  const std::size_t last_line =
      detail::parse_csv_records(rest, line, cols, static_cast<std::size_t>(-1), book.obligors, scratch);
  if (last_line != 0 && text.back() != '\n' && text.back() != '\r') {
    book.notes.push_back(located(origin, last_line, no_final_line_break_note()));
  }
  mark_duplicate_ids(book.obligors);
  return book;
}

Book load_book(const std::string& path, BookUse use) {
  if (book_format_of(path) == BookFormat::yaml) {
    std::unique_ptr<std::FILE, int (*)(std::FILE*)> in(std::fopen(path.c_str(), "rb"), &std::fclose);
    if (!in) throw InputError("cannot open file '" + path + "'");
    YamlBookReader reader(in.get(), path);
    Book book = read_yaml_book(reader, path);
    if (std::ferror(in.get())) throw InputError("cannot read file '" + path + "'");
    return book;
  }
  return parse_csv_book(detail::read_text_file(path), path, use);
}

void mark_duplicate_ids(std::vector<ObligorRecord>& obligors) {
  std::unordered_map<std::string_view, std::size_t> first;
  first.reserve(obligors.size());
  for (auto& rec : obligors) {
    const std::string& id = rec.get(TextField::id);
    if (id.empty()) continue;
    const auto [it, inserted] = first.emplace(id, rec.line);
    if (!inserted && rec.read_error.empty()) {
      rec.read_error = "field 'id': duplicate of the obligor at line " + std::to_string(it->second);
    }
  }
}

}  // namespace firmcall
