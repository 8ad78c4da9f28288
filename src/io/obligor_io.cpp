#include "firmcall/io/obligor_io.hpp"

#include <yaml-cpp/yaml.h>

#include <algorithm>
#include <string_view>
#include <unordered_map>
#include <unordered_set>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {
bool ends_with(const std::string& s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

// Unknown keys named in an obligor's error before the rest are counted.
constexpr std::size_t kListedUnknownKeys = 5;

bool all_digits(const std::string& s) {
  return !s.empty() && s.find_first_not_of("0123456789") == std::string::npos;
}

// In a {...} entry YAML ends a value at a comma: `market_cap: 1,200` reads as market_cap 1 and a
// key '200' without a value. Such a key right after a number is that number's other half.
bool is_comma_tail(const YAML::Node& key, const YAML::Node& value) {
  return all_digits(key.Scalar()) && value.IsNull();
}

std::string comma_problem(const std::string& field, const std::string& number) {
  return "field '" + field + "': a comma inside the number '" + number.substr(0, 40) +
         "' (YAML ends a value at a comma); write numbers without thousands separators and with a "
         "decimal point (1200, 0.35)";
}

void read_yaml_obligor(const YAML::Node& node, std::size_t line, ObligorRecord& rec) {
  rec.clear();
  rec.line = line;
  if (!node.IsMap()) {
    rec.read_error = "obligor entry is not a map of field: value";
    return;
  }
  // One pass, linear in the number of keys: a set of the keys seen, the unknown ones listed
  // (the first few by name, the rest counted).
  std::unordered_set<std::string> seen;
  std::string first_problem;  // the first problem other than an unknown key
  std::vector<std::string> unknown;
  std::size_t unknown_count = 0;
  bool problem_first = false;   // first_problem comes before the first unknown key
  std::string last_number_key;  // the number key just before, with its text (for a split at a comma)
  std::string last_number_text;
  for (const auto& kv : node) {
    const std::string& key = kv.first.Scalar();
    if (!last_number_key.empty() && is_comma_tail(kv.first, kv.second)) {
      last_number_text += "," + key;
      if (first_problem.empty() || first_problem.rfind("field '" + last_number_key + "': a comma", 0) == 0)
        first_problem = comma_problem(last_number_key, last_number_text);
      continue;
    }
    last_number_key.clear();
    if (!seen.insert(key).second) {
      if (first_problem.empty()) first_problem = "field '" + key + "' is given twice";
      continue;
    }
    std::optional<NumField> num;
    std::optional<TextField> text;
    if (!field_from_string(key, num, text)) {
      if (unknown_count == 0) problem_first = !first_problem.empty();
      if (unknown_count++ < kListedUnknownKeys) unknown.push_back(key);
      continue;
    }
    if (!kv.second.IsScalar()) {
      if (first_problem.empty()) first_problem = "field '" + key + "': expected a single value";
      continue;
    }
    const std::string& value = kv.second.Scalar();
    if (text) {
      rec.get(*text) = value;
      if (!valid_utf8(value) && first_problem.empty()) {
        first_problem = "field '" + key + "': not valid UTF-8 (save the file as UTF-8)";
      }
      continue;
    }
    if (value.empty() || value == "~" || value == "null") continue;  // left empty: absent
    double v = 0.0;
    if (parse_number(value, v)) {
      rec.set(*num, v);
      last_number_key = key;
      last_number_text = value;
    } else if (first_problem.empty()) {
      first_problem = value.find(',') != std::string::npos
                          ? comma_problem(key, value)
                          : "field '" + key + "': expected a finite decimal number such as 0.35, got '" +
                                value.substr(0, 40) + "'";
    }
  }
  if (unknown_count == 0 || problem_first) {
    rec.read_error = std::move(first_problem);
    return;
  }
  std::string& e = rec.read_error;
  e = unknown_count == 1 ? "unknown field " : "unknown fields ";
  for (std::size_t i = 0; i < unknown.size(); ++i) {
    if (i > 0) e += ", ";
    e += '\'';
    e.append(unknown[i], 0, 40);
    e += '\'';
  }
  if (unknown_count > unknown.size()) e += " and " + std::to_string(unknown_count - unknown.size()) + " more";
  if (unknown_count == 1) {
    const std::string hint = detail::closest_name(unknown[0], obligor_field_names());
    if (!hint.empty()) e += " (did you mean '" + hint + "'?)";
  }
}
}  // namespace

BookFormat book_format_of(const std::string& path) {
  if (ends_with(path, ".yaml") || ends_with(path, ".yml")) return BookFormat::yaml;
  if (ends_with(path, ".csv")) return BookFormat::csv;
  throw InputError("'" + path + "': unknown book format (name it .yaml, .yml or .csv)");
}

Book parse_yaml_book(const std::string& text, const std::string& origin) {
  Book book;
  book.origin = origin;
  const YAML::Node root = detail::yaml_load(text, origin);
  if (!root.IsMap()) throw InputError(located(origin, 0, "expected a map with an 'obligors' list"));
  detail::yaml_check_keys(root, {"book", "as_of", "description", "defaults", "obligors"}, origin, "book");
  if (root["book"]) book.label = detail::yaml_string(root["book"], origin, "book");
  if (root["as_of"]) book.as_of = detail::yaml_string(root["as_of"], origin, "as_of");
  if (const auto d = root["defaults"]) {
    detail::yaml_check_keys(d, {"rate", "horizon", "drift", "default_point_weight", "lgd"}, origin,
                            "defaults");
    if (d["rate"]) book.defaults.rate = detail::yaml_number(d["rate"], origin, "rate");
    if (d["horizon"]) book.defaults.horizon = detail::yaml_number(d["horizon"], origin, "horizon");
    if (d["drift"]) book.defaults.drift = detail::yaml_number(d["drift"], origin, "drift");
    if (d["lgd"]) book.defaults.lgd = detail::yaml_number(d["lgd"], origin, "lgd");
    if (d["default_point_weight"]) {
      const double w = detail::yaml_number(d["default_point_weight"], origin, "default_point_weight");
      if (w < 0.0 || w > 1.0) {
        throw InputError(located(origin, detail::yaml_line(d["default_point_weight"]),
                                 "key 'default_point_weight': must lie in [0, 1]"));
      }
      book.defaults.default_point_weight = w;
    }
  }
  const YAML::Node list = root["obligors"];
  if (!list) throw InputError(located(origin, 0, "missing key 'obligors' (the list of obligors)"));
  if (!list.IsSequence())
    throw InputError(located(origin, detail::yaml_line(list), "'obligors' must be a list"));
  book.obligors.resize(list.size());
  std::size_t i = 0;
  for (const auto& node : list) {
    read_yaml_obligor(node, detail::yaml_line(node), book.obligors[i]);
    ++i;
  }
  mark_duplicate_ids(book.obligors);
  return book;
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
  const BookFormat fmt = book_format_of(path);
  const std::string text = detail::read_text_file(path);
  if (fmt == BookFormat::yaml && text.size() > kMaxYamlBookBytes) {
    throw InputError("'" + path +
                     "': a YAML book larger than 8 MiB; YAML is for hand-written books, use CSV");
  }
  return fmt == BookFormat::yaml ? parse_yaml_book(text, path) : parse_csv_book(text, path, use);
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
