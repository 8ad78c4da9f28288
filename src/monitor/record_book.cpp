#include "firmcall/monitor/record_book.hpp"

#include <charconv>
#include <ctime>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/sha256.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

std::string resolve_store_path(const std::string& db_option, const MonitorSettings& monitor) {
  if (!db_option.empty()) return db_option;
  if (!monitor.store.empty()) return monitor.store;
  return default_store_path();
}

std::string fields_json(const ObligorRecord& rec) {
  std::string out = "{";
  bool first = true;
  const auto key = [&out, &first](std::string_view k) {
    if (!first) out += ',';
    first = false;
    append_json_string(out, k);
    out += ':';
  };
  for (std::size_t i = 0; i < kTextFieldCount; ++i) {
    const auto f = static_cast<TextField>(i);
    if (rec.get(f).empty()) continue;
    key(to_string(f));
    append_json_string(out, rec.get(f));
  }
  for (std::size_t i = 0; i < kNumFieldCount; ++i) {
    const auto f = static_cast<NumField>(i);
    if (!rec.has(f)) continue;
    key(to_string(f));
    // Shortest text that reads back as the same double: the store keeps it compact, and exact.
    char buf[32];
    const auto r = std::to_chars(buf, buf + sizeof buf, rec.get(f));
    out.append(buf, r.ptr);
  }
  out += "}";
  return out;
}

StoredObligor stored_obligor(const ObligorRecord& rec, const ScoredObligor& s, const GradeScale& grades) {
  StoredObligor o;
  o.id = rec.get(TextField::id);
  o.name = rec.get(TextField::name);
  o.status = s.status;
  o.message = s.message;
  o.fields_json = fields_json(rec);
  o.has_inputs = s.resolved.ok();
  if (o.has_inputs) o.inputs = s.resolved.inputs;
  o.has_measures = s.status == RowStatus::ok;
  if (o.has_measures) {
    o.measures = s.measures;
    o.grade = std::string(grades.label_of(s.measures.pd));
  }
  if (s.solution.residual >= 0.0) {
    o.iterations = s.solution.iterations;
    o.residual = s.solution.residual;
  }
  return o;
}

std::string settings_json(const ScoreSettings& s, const GradeScale& grades) {
  std::string out = "{\"default_point_weight\": ";
  append_json_number(out, s.default_point_weight);
  out += ", \"horizon\": ";
  append_json_number(out, s.horizon_years);
  out += ", \"measure\": ";
  append_json_string(out, to_string(s.measure));
  out += ", \"default_lgd\": ";
  append_json_number(out, s.default_lgd);
  out += ", \"max_equity_vol\": ";
  append_json_number(out, s.max_equity_vol);
  out += ", \"solver\": {\"max_newton_iterations\": " + std::to_string(s.solver.max_newton_iterations) +
         ", \"max_fallback_iterations\": " + std::to_string(s.solver.max_fallback_iterations) +
         ", \"residual_tolerance\": ";
  append_json_number(out, s.solver.residual_tolerance);
  out += "}, \"overrides\": {";
  bool first = true;
  const auto over = [&](const char* name, const std::optional<double>& v) {
    if (!v) return;
    if (!first) out += ", ";
    first = false;
    append_json_string(out, name);
    out += ": ";
    append_json_number(out, *v);
  };
  over("rate", s.rate_override);
  over("horizon", s.horizon_override);
  over("default_point_weight", s.weight_override);
  out += "}, \"grades\": [";
  for (std::size_t i = 0; i < grades.bands.size(); ++i) {
    out += i == 0 ? "{\"label\": " : ", {\"label\": ";
    append_json_string(out, grades.bands[i].label);
    out += ", \"max_pd\": ";
    append_json_number(out, grades.bands[i].max_pd);
    out += "}";
  }
  out += "]}";
  return out;
}

std::string today_local() {
  const std::time_t t = std::time(nullptr);
  std::tm tm{};
  localtime_r(&t, &tm);
  char buf[16];
  std::strftime(buf, sizeof buf, "%Y-%m-%d", &tm);
  return buf;
}

std::string utc_timestamp() {
  const std::time_t t = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

RecordResult record_book(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                         const RecordOptions& options) {
  const BookFormat format = book_format_of(book_path);
  const std::string bytes = detail::read_text_file(book_path);
  const Book book =
      format == BookFormat::yaml ? parse_yaml_book(bytes, book_path) : parse_csv_book(bytes, book_path);

  RecordResult result;
  if (!options.as_of.empty()) {
    if (!is_calendar_date(options.as_of)) {
      throw OptionError("as_of", "expected a date YYYY-MM-DD, got '" + options.as_of + "'");
    }
    result.as_of = options.as_of;
  } else if (!book.as_of.empty()) {
    if (!is_calendar_date(book.as_of)) {
      throw InputError(
          located(book_path, 0, "field 'as_of': expected a date YYYY-MM-DD, got '" + book.as_of + "'"));
    }
    result.as_of = book.as_of;
  } else {
    result.as_of = today_local();
  }

  RunInfo info;
  info.as_of = result.as_of;
  info.recorded_at = utc_timestamp();
  info.book_path = book_path;
  info.book_label = book.label;
  info.input_sha256 = sha256_hex(bytes);
  info.settings_json = settings_json(settings, config.grades);
  info.tool_version = options.tool_version;

  // Score first, then hold the store only while writing.
  std::vector<StoredObligor> rows;
  rows.reserve(book.obligors.size());
  ScoredObligor scored;
  for (const ObligorRecord& rec : book.obligors) {
    score_obligor(rec, book.defaults, settings, scored);
    rows.push_back(stored_obligor(rec, scored, config.grades));
    if (scored.status == RowStatus::ok) ++result.scored;
  }
  RunStore store(options.store_path, StoreOpen::create, config.monitor.busy_timeout_seconds);
  RunWriter writer(store, info);
  for (const StoredObligor& o : rows) writer.add(o);
  result.run_id = writer.commit();
  result.obligors = rows.size();
  return result;
}

}  // namespace firmcall
