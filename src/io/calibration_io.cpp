// Reading default histories; writing and reading calibration files. See calibration_io.hpp.
#include "firmcall/io/calibration_io.hpp"

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <functional>
#include <optional>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/sha256.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {

bool is_date(std::string_view s) {
  if (s.size() != 10 || s[4] != '-' || s[7] != '-') return false;
  int y = 0;
  unsigned m = 0, d = 0;
  const auto num = [&s](std::size_t at, std::size_t len, auto& v) {
    const auto r = std::from_chars(s.data() + at, s.data() + at + len, v);
    return r.ec == std::errc() && r.ptr == s.data() + at + len;
  };
  if (!num(0, 4, y) || !num(5, 2, m) || !num(8, 2, d)) return false;
  return std::chrono::year_month_day(std::chrono::year(y), std::chrono::month(m), std::chrono::day(d)).ok();
}

enum Column : std::size_t { kId, kAsOf, kDd, kDefaulted, kWeight, kColumns };
constexpr std::string_view kColumnNames[kColumns] = {"id", "as_of", "distance_to_default", "defaulted",
                                                     "weight"};

// A column of an obligor book's number fields (market_cap, equity_vol, default_point, rate...).
bool is_book_number_column(std::string_view name) {
  std::optional<NumField> num;
  std::optional<TextField> text;
  return field_from_string(name, num, text) && num.has_value();
}

std::string quoted_list(const std::vector<std::string>& names) {
  std::string s;
  for (const std::string& n : names) s += (s.empty() ? "'" : ", '") + n + "'";
  return s;
}

// The (id, as_of) pairs of the rows read so far, to find a repeat: an open-addressing table
// (linear probing, at most half full) of row numbers with 32 bits of each pair's hash, compared by
// their text on a hash match. No allocation per row, unlike a map of joined keys.
class ObservationIndex {
 public:
  static constexpr std::size_t kNone = static_cast<std::size_t>(-1);

  explicit ObservationIndex(std::size_t expected_rows) {
    std::size_t n = 64;
    while (n < 2 * expected_rows) n *= 2;
    slots_.assign(n, 0);
  }

  // The row of an earlier equal pair; else adds `row` (the next row of h) and returns kNone.
  std::size_t find_or_add(std::string_view id, std::string_view as_of, const DefaultHistory& h) {
    const std::uint64_t key = hash(id, as_of);
    const std::size_t row = h.id.size();
    if (row >= 0xFFFFFFFFU) throw InputError(located(h.origin, 0, "too many rows (at most 4294967294)"));
    const std::size_t mask = slots_.size() - 1;
    for (std::size_t at = key & mask;; at = (at + 1) & mask) {
      const std::uint64_t slot = slots_[at];
      if (slot == 0) {
        slots_[at] = (key & 0xFFFFFFFF00000000U) | (row + 1);
        if (2 * ++used_ > slots_.size()) grow(h, key);
        return kNone;
      }
      const std::size_t other = static_cast<std::size_t>(slot & 0xFFFFFFFFU) - 1;
      if ((slot >> 32) == (key >> 32) && h.id[other] == id && h.as_of[other] == as_of) return other;
    }
  }

 private:
  static std::uint64_t hash(std::string_view id, std::string_view as_of) {
    const std::uint64_t a = std::hash<std::string_view>{}(id);
    const std::uint64_t b = std::hash<std::string_view>{}(as_of);
    std::uint64_t x = a ^ (b + 0x9E3779B97F4A7C15U + (a << 6) + (a >> 2));
    x ^= x >> 33;  // a final mix (MurmurHash3's fmix64) spreads both halves over the table
    x *= 0xFF51AFD7ED558CCDU;
    x ^= x >> 33;
    return x;
  }

  // Doubles the table, which holds the rows of h and the row being added (hash `added`).
  void grow(const DefaultHistory& h, std::uint64_t added) {
    std::vector<std::uint64_t> old;
    old.swap(slots_);
    slots_.assign(old.size() * 2, 0);
    const std::size_t mask = slots_.size() - 1;
    for (const std::uint64_t slot : old) {
      if (slot == 0) continue;
      const std::size_t row = static_cast<std::size_t>(slot & 0xFFFFFFFFU) - 1;
      const std::uint64_t key = row < h.id.size() ? hash(h.id[row], h.as_of[row]) : added;
      std::size_t at = key & mask;
      while (slots_[at] != 0) at = (at + 1) & mask;
      slots_[at] = slot;
    }
  }

  std::vector<std::uint64_t> slots_;  // 0: empty; else (hash >> 32) << 32 | (row + 1)
  std::size_t used_ = 0;
};

// Reads a default history record by record: the header, then one observation per row. Every
// problem is an InputError naming the file, the line and the field.
class HistoryReader {
 public:
  HistoryReader(const std::string& path, DefaultHistory& h, std::size_t expected_rows)
      : path_(path), h_(h), seen_(expected_rows) {
    for (auto* v : {&h.distance_to_default, &h.defaulted}) v->reserve(expected_rows);
    h.id.reserve(expected_rows);
    h.as_of.reserve(expected_rows);
    h.line.reserve(expected_rows);
  }

  void header(const std::vector<std::string_view>& fields, std::size_t line);
  void row(const std::vector<std::string_view>& fields, std::size_t line);

 private:
  std::string_view cell(const std::vector<std::string_view>& fields, std::size_t k) const {
    const auto i = static_cast<std::size_t>(at_[k]);
    return i < fields.size() ? trim_blanks(fields[i]) : std::string_view{};
  }
  [[noreturn]] void fail(std::size_t line, std::size_t k, const std::string& why) const {
    throw InputError(located(path_, line, "field '" + std::string(kColumnNames[k]) + "': " + why));
  }
  void read_distance(const std::vector<std::string_view>& fields, std::size_t line);
  void check_repeat(std::string_view id, std::string_view as_of, std::size_t line);

  const std::string& path_;
  DefaultHistory& h_;
  int at_[kColumns] = {-1, -1, -1, -1, -1};
  std::optional<CsvColumns> book_;  // set when DD comes from the book columns
  ObligorRecord rec_;               // the row being read, with book_
  ObservationIndex seen_;
};

void HistoryReader::header(const std::vector<std::string_view>& fields, std::size_t line) {
  std::vector<std::string> book_columns;
  for (std::size_t i = 0; i < fields.size(); ++i) {
    const std::string_view name = trim_blanks(fields[i]);
    const auto* it = std::find(std::begin(kColumnNames), std::end(kColumnNames), name);
    if (it == std::end(kColumnNames)) {
      if (is_book_number_column(name)) {
        book_columns.emplace_back(name);
      } else {
        h_.notes.push_back(located(path_, line, "note: column '" + std::string(name) + "' is not used"));
      }
      continue;
    }
    int& slot = at_[it - std::begin(kColumnNames)];
    if (slot >= 0)
      throw InputError(located(path_, line, "header: column '" + std::string(name) + "' appears twice"));
    slot = static_cast<int>(i);
  }
  if (at_[kDd] >= 0 && !book_columns.empty()) {
    h_.notes.push_back(located(path_, line,
                               "note: book columns " + quoted_list(book_columns) +
                                   " are not used: the DD is read from column 'distance_to_default'"));
  } else if (at_[kDd] < 0 && !book_columns.empty()) {
    book_ = CsvColumns::from_header(fields, path_);
    at_[kDd] = 0;  // not read: the DD is computed from the book columns
    h_.notes.push_back(located(path_, line,
                               "note: no column 'distance_to_default': each row's DD is computed from its "
                               "book columns as score computes it (settings: scoring, solver)"));
  }
  for (std::size_t k = 0; k < kWeight; ++k) {
    if (at_[k] < 0) {
      std::string what = "header: required column '" + std::string(kColumnNames[k]) + "' is missing";
      if (k == kDd) what += " (or give the book columns of a score book to compute it from)";
      throw InputError(located(path_, line, what));
    }
  }
}

void HistoryReader::read_distance(const std::vector<std::string_view>& fields, std::size_t line) {
  if (book_) {
    rec_.clear();
    parse_obligor_fields(fields, *book_, rec_);
    if (!rec_.read_error.empty()) throw InputError(located(path_, line, rec_.read_error));
    h_.book_rows.push_back({rec_.num, rec_.present});
    return;
  }
  double dd = 0.0;
  if (cell(fields, kDd).empty()) fail(line, kDd, "missing");
  if (!parse_number(cell(fields, kDd), dd))
    fail(line, kDd, "expected a finite number, got " + quoted_cell(cell(fields, kDd)));
  h_.distance_to_default.push_back(dd);
}

void HistoryReader::check_repeat(std::string_view id, std::string_view as_of, std::size_t line) {
  const std::size_t earlier = seen_.find_or_add(id, as_of, h_);
  if (earlier != ObservationIndex::kNone) {
    throw InputError(located(path_, line,
                             "field 'id': obligor '" + std::string(id) + "' as of " + std::string(as_of) +
                                 " repeats line " + std::to_string(h_.line[earlier])));
  }
}

void HistoryReader::row(const std::vector<std::string_view>& fields, std::size_t line) {
  const std::string_view id = cell(fields, kId), as_of = cell(fields, kAsOf);
  if (id.empty()) fail(line, kId, "missing");
  if (!is_date(as_of)) fail(line, kAsOf, "expected a date YYYY-MM-DD, got " + quoted_cell(as_of));
  read_distance(fields, line);
  const std::string_view y = cell(fields, kDefaulted);
  if (y != "0" && y != "1") fail(line, kDefaulted, "expected 0 or 1, got " + quoted_cell(y));
  if (at_[kWeight] >= 0) {
    double w = 1.0;
    if (!parse_number(cell(fields, kWeight), w) || w < 0.0) {
      fail(line, kWeight, "expected a non-negative number, got " + quoted_cell(cell(fields, kWeight)));
    }
    h_.weight.push_back(w);
  }
  check_repeat(id, as_of, line);
  h_.id.emplace_back(id);
  h_.as_of.emplace_back(as_of);
  h_.line.push_back(line);
  h_.defaulted.push_back(y == "1" ? 1.0 : 0.0);
  if (h_.as_of_first.empty() || as_of < h_.as_of_first) h_.as_of_first = std::string(as_of);
  if (as_of > h_.as_of_last) h_.as_of_last = std::string(as_of);
}

// Both classes are needed: defaults to set the PD level, survivors to set the slope.
void check_both_classes(const DefaultHistory& h) {
  if (h.id.empty()) throw InputError(located(h.origin, 0, "no observations after the header"));
  double wd = 0.0, ws = 0.0;
  for (std::size_t i = 0; i < h.id.size(); ++i) {
    const double w = h.weight.empty() ? 1.0 : h.weight[i];
    (h.defaulted[i] == 1.0 ? wd : ws) += w;
  }
  if (!(wd > 0.0)) {
    throw InputError(located(h.origin, 0,
                             "field 'defaulted': no defaults (with positive weight) in " +
                                 std::to_string(h.id.size()) +
                                 " observations: nothing to calibrate the PD level to"));
  }
  if (!(ws > 0.0)) {
    throw InputError(located(h.origin, 0, "field 'defaulted': every observation defaulted: one class only"));
  }
}

}  // namespace

void DefaultHistory::book_record(std::size_t i, ObligorRecord& rec) const {
  rec.clear();
  rec.get(TextField::id) = id[i];
  rec.line = line[i];
  rec.num = book_rows[i].num;
  rec.present = book_rows[i].present;
}

DefaultHistory read_default_history(const std::string& path) {
  DefaultHistory h;
  h.origin = path;
  const std::string text = detail::read_text_file(path);
  h.data_sha256 = sha256_hex(text);
  CsvRecordReader records(path);
  records.start(text);
  if (!records.next()) throw InputError(located(path, 0, "empty file: a header row is required"));
  HistoryReader reader(path, h, text.size() / 24 + 16);  // rows are rarely shorter than 24 bytes
  reader.header(records.fields(), records.line());
  std::size_t last_line = 0;
  while (records.next()) {
    reader.row(records.fields(), records.line());
    last_line = records.line();
  }
  check_both_classes(h);
  if (records.ended_without_line_break() && last_line != 0) {
    h.notes.push_back(located(path, last_line, no_final_line_break_note()));
  }
  return h;
}

namespace {

std::string num(double v) {
  char buf[64];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

}  // namespace

std::string calibration_yaml(const CalibrationRecord& rec) {
  const PdCalibration& c = rec.calibration;
  std::string s = "# firmcall PD calibration: distance to default -> one-year PD (docs/calibration.md)\n";
  s += "firmcall_calibration: 1\n";
  s += "method: " + std::string(to_string(c.method)) + "\n";
  s += "pd_horizon_years: 1\n";
  s += "confidence_level: " + num(c.confidence_level) + "\n";
  s += "sample:\n";
  s += "  observations: " + std::to_string(c.observations) + "\n";
  s += "  defaults: " + std::to_string(c.defaults) + "\n";
  s += "  as_of_first: " + rec.as_of_first + "\n";
  s += "  as_of_last: " + rec.as_of_last + "\n";
  s += "  dd_min: " + num(c.dd_min) + "\n";
  s += "  dd_max: " + num(c.dd_max) + "\n";
  s += "  data_sha256: " + rec.data_sha256 + "\n";
  if (c.method == CalibrationMethod::logistic) {
    const LogisticFit& f = c.logistic;
    s += "logistic:\n";
    s += "  intercept: " + num(f.intercept) + "\n";
    s += "  slope: " + num(f.slope) + "\n";
    s += "  intercept_se: " + num(f.intercept_se) + "\n";
    s += "  slope_se: " + num(f.slope_se) + "\n";
    s += "  covariance: " + num(f.covariance) + "\n";
    s += "  log_likelihood: " + num(f.log_likelihood) + "\n";
  } else {
    s += "blocks:\n";
    for (const CalibrationBlock& b : c.blocks) {
      s += "  - {dd_lower: " + num(b.dd_lower) + ", dd_upper: " + num(b.dd_upper) +
           ", observations: " + num(b.observations) + ", defaults: " + num(b.defaults) +
           ", pd_raw: " + num(b.pd_raw) + ", pd: " + num(b.pd) + "}\n";
    }
  }
  return s;
}

namespace {

YAML::Node required(const YAML::Node& map, const char* key, const std::string& origin) {
  YAML::Node found = map[key];
  if (!found)
    throw InputError(located(origin, detail::yaml_line(map), "key '" + std::string(key) + "' is missing"));
  return found;
}

double number_at(const YAML::Node& map, const char* key, const std::string& origin) {
  return detail::yaml_number(required(map, key, origin), origin, key);
}

void fail_at(const YAML::Node& node, const std::string& origin, const std::string& what) {
  throw InputError(located(origin, detail::yaml_line(node), what));
}

}  // namespace

CalibrationRecord parse_calibration(const std::string& text, const std::string& origin) {
  const YAML::Node root = detail::yaml_load(text, origin);
  detail::yaml_check_keys(root,
                          {"firmcall_calibration", "method", "pd_horizon_years", "confidence_level", "sample",
                           "logistic", "blocks"},
                          origin, "calibration");
  CalibrationRecord rec;
  PdCalibration& c = rec.calibration;
  const YAML::Node version = required(root, "firmcall_calibration", origin);
  if (detail::yaml_string(version, origin, "firmcall_calibration") != "1") {
    fail_at(version, origin,
            "key 'firmcall_calibration': format version 1 expected, got '" +
                detail::yaml_string(version, origin, "firmcall_calibration") + "'");
  }
  const YAML::Node method = required(root, "method", origin);
  if (!parse_calibration_method(detail::yaml_string(method, origin, "method"), c.method)) {
    fail_at(method, origin,
            "key 'method': expected logistic, isotonic or binned, got '" +
                detail::yaml_string(method, origin, "method") + "'");
  }
  const YAML::Node horizon = required(root, "pd_horizon_years", origin);
  if (detail::yaml_number(horizon, origin, "pd_horizon_years") != 1.0) {
    fail_at(horizon, origin, "key 'pd_horizon_years': only one-year calibrations are supported");
  }
  c.confidence_level = number_at(root, "confidence_level", origin);
  if (!(c.confidence_level > 0.0 && c.confidence_level < 1.0)) {
    fail_at(root["confidence_level"], origin, "key 'confidence_level': must lie in (0, 1)");
  }
  const YAML::Node sample = required(root, "sample", origin);
  detail::yaml_check_keys(
      sample, {"observations", "defaults", "as_of_first", "as_of_last", "dd_min", "dd_max", "data_sha256"},
      origin, "sample");
  const double n = number_at(sample, "observations", origin), d = number_at(sample, "defaults", origin);
  if (!(n >= 1.0) || !(d >= 0.0) || d > n)
    fail_at(sample, origin, "sample: observations and defaults do not agree");
  c.observations = static_cast<std::size_t>(n);
  c.defaults = static_cast<std::size_t>(d);
  c.dd_min = number_at(sample, "dd_min", origin);
  c.dd_max = number_at(sample, "dd_max", origin);
  if (c.dd_min > c.dd_max) fail_at(sample, origin, "sample: dd_min is above dd_max");
  rec.as_of_first = detail::yaml_string(required(sample, "as_of_first", origin), origin, "as_of_first");
  rec.as_of_last = detail::yaml_string(required(sample, "as_of_last", origin), origin, "as_of_last");
  rec.data_sha256 = detail::yaml_string(required(sample, "data_sha256", origin), origin, "data_sha256");
  if (c.method == CalibrationMethod::logistic) {
    if (root["blocks"]) fail_at(root["blocks"], origin, "key 'blocks': not used by method logistic");
    const YAML::Node f = required(root, "logistic", origin);
    detail::yaml_check_keys(
        f, {"intercept", "slope", "intercept_se", "slope_se", "covariance", "log_likelihood"}, origin,
        "logistic");
    LogisticFit& l = c.logistic;
    l.intercept = number_at(f, "intercept", origin);
    l.slope = number_at(f, "slope", origin);
    l.intercept_se = number_at(f, "intercept_se", origin);
    l.slope_se = number_at(f, "slope_se", origin);
    l.covariance = number_at(f, "covariance", origin);
    l.log_likelihood = number_at(f, "log_likelihood", origin);
    if (!(l.slope < 0.0)) fail_at(f["slope"], origin, "key 'slope': must be negative (PD falls as DD grows)");
    if (!(l.intercept_se >= 0.0) || !(l.slope_se >= 0.0)) {
      fail_at(f, origin, "logistic: standard errors must be non-negative");
    }
  } else {
    if (root["logistic"]) fail_at(root["logistic"], origin, "key 'logistic': used by method logistic only");
    const YAML::Node blocks = required(root, "blocks", origin);
    if (!blocks.IsSequence() || blocks.size() == 0)
      fail_at(blocks, origin, "key 'blocks': expected a list of blocks");
    for (const YAML::Node& b : blocks) {
      detail::yaml_check_keys(b, {"dd_lower", "dd_upper", "observations", "defaults", "pd_raw", "pd"}, origin,
                              "block");
      CalibrationBlock k;
      k.dd_lower = number_at(b, "dd_lower", origin);
      k.dd_upper = number_at(b, "dd_upper", origin);
      k.observations = number_at(b, "observations", origin);
      k.defaults = number_at(b, "defaults", origin);
      k.pd_raw = number_at(b, "pd_raw", origin);
      k.pd = number_at(b, "pd", origin);
      if (k.dd_lower > k.dd_upper) fail_at(b, origin, "block: dd_lower is above dd_upper");
      if (!(k.observations > 0.0) || !(k.defaults >= 0.0) || k.defaults > k.observations) {
        fail_at(b, origin, "block: observations and defaults do not agree");
      }
      if (!(k.pd > 0.0 && k.pd < 1.0)) fail_at(b, origin, "block: field 'pd' must lie in (0, 1)");
      if (!c.blocks.empty()) {
        const CalibrationBlock& left = c.blocks.back();
        if (!(k.dd_lower > left.dd_upper)) fail_at(b, origin, "block: blocks must be in increasing DD");
        if (c.method == CalibrationMethod::isotonic && k.pd > left.pd) {
          fail_at(b, origin, "block: field 'pd': PD must not increase with DD");
        }
      }
      c.blocks.push_back(k);
    }
  }
  c.status = CalibrationStatus::ok;
  c.prepare_intervals();
  return rec;
}

CalibrationRecord read_calibration(const std::string& path) {
  return parse_calibration(detail::read_text_file(path), path);
}

}  // namespace firmcall
