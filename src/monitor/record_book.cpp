#include "firmcall/monitor/record_book.hpp"

#include <charconv>
#include <filesystem>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/sha256.hpp"
#include "firmcall/util/timestamp.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {

// Writes the members of one JSON object in order, `"key": value` joined by ", " (compact: by ","
// with ":" after the key). The caller writes the braces.
class JsonMembers {
 public:
  JsonMembers(std::string& out, bool compact) : out_(out), compact_(compact) {}
  /// The separator and the key; the caller appends the value to the string returned.
  std::string& key(std::string_view k) {
    if (!first_) out_ += compact_ ? "," : ", ";
    first_ = false;
    append_json_string(out_, k);
    out_ += compact_ ? ":" : ": ";
    return out_;
  }
  void number(std::string_view k, double v) { append_json_number(key(k), v); }
  void text(std::string_view k, std::string_view v) { append_json_string(key(k), v); }

 private:
  std::string& out_;
  bool compact_;
  bool first_ = true;
};

}  // namespace

OptionCheck RecordBookOptions::validate() const {
  if (store_path.empty()) return OptionProblem{"store_path", "", "must name the history store file"};
  if (!as_of.empty() && !is_calendar_date(as_of)) {
    return OptionProblem{"as_of", as_of, "must be empty or a date YYYY-MM-DD"};
  }
  if (driving_pd == DrivingPd::calibrated && pd_calibration == nullptr) {
    return OptionProblem{"driving_pd", "calibrated", "needs pd_calibration"};
  }
  return std::nullopt;
}

std::string fields_json(const ObligorRecord& rec) {
  std::string out = "{";
  JsonMembers fields(out, true);
  for (std::size_t i = 0; i < kTextFieldCount; ++i) {
    const auto f = static_cast<TextField>(i);
    if (!rec.get(f).empty()) fields.text(to_string(f), rec.get(f));
  }
  for (std::size_t i = 0; i < kNumFieldCount; ++i) {
    const auto f = static_cast<NumField>(i);
    if (!rec.has(f)) continue;
    // Shortest text that reads back as the same double: the store keeps it compact, and exact.
    char buf[32];
    const auto r = std::to_chars(buf, buf + sizeof buf, rec.get(f));
    fields.key(to_string(f)).append(buf, r.ptr);
  }
  out += "}";
  return out;
}

StoredObligor stored_obligor(const ObligorRecord& rec, const ScoredObligor& s, const GradeScale& grades,
                             const PdCalibration* calibration, DrivingPd driving_pd) {
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
    o.grade = std::string(grades.label_of_pd_at(s.measures.pd, s.resolved.inputs.horizon_years));
    if (calibration != nullptr) {
      const CalibratedPd c = calibration->evaluate(s.measures.distance_to_default);
      o.pd_calibrated = c.pd;
      o.pd_calibrated_lower = c.lower;
      o.pd_calibrated_upper = c.upper;
      o.pd_calibrated_extrapolated = c.extrapolated;
      if (driving_pd == DrivingPd::calibrated) o.grade = std::string(grades.label_of(c.pd));
    }
  }
  if (s.solution.residual >= 0.0) {
    o.iterations = s.solution.iterations;
    o.residual = s.solution.residual;
  }
  return o;
}

std::string settings_json(const ScoreSettings& s, const GradeScale& grades) {
  std::string out = "{";
  JsonMembers run(out, false);
  run.number("default_point_weight", s.default_point_weight);
  run.number("horizon", s.horizon_years);
  run.text("measure", to_string(s.measure));
  run.number("default_lgd", s.default_lgd);
  run.number("max_equity_vol", s.max_equity_vol);
  run.key("solver") += "{";
  JsonMembers solver(out, false);
  solver.number("max_newton_iterations", s.solver.max_newton_iterations);
  solver.number("max_fallback_iterations", s.solver.max_fallback_iterations);
  solver.number("residual_tolerance", s.solver.residual_tolerance);
  out += "}";
  run.key("overrides") += "{";
  JsonMembers overrides(out, false);
  for (const auto& [name, value] :
       {std::pair{"rate", s.rate_override}, std::pair{"horizon", s.horizon_override},
        std::pair{"default_point_weight", s.weight_override}}) {
    if (value) overrides.number(name, *value);
  }
  out += "}";
  run.key("grades") += "[";
  for (std::size_t i = 0; i < grades.bands.size(); ++i) {
    out += i == 0 ? "{" : ", {";
    JsonMembers band(out, false);
    band.text("label", grades.bands[i].label);
    band.number("max_pd", grades.bands[i].max_pd);
    out += "}";
  }
  out += "]}";
  return out;
}

PreparedRun prepare_run(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options) {
  const BookFormat format = book_format_of(book_path);
  const std::string bytes = detail::read_text_file(book_path);
  const Book book =
      format == BookFormat::yaml ? parse_yaml_book(bytes, book_path) : parse_csv_book(bytes, book_path);

  if (const OptionCheck problem = options.validate(); problem && problem->field == "driving_pd") {
    throw OptionError(problem->field, problem->constraint);
  }
  PreparedRun run;
  RunInfo& info = run.info;
  if (!options.as_of.empty()) {
    if (!is_calendar_date(options.as_of)) {
      throw OptionError("as_of", "expected a date YYYY-MM-DD, got '" + options.as_of + "'");
    }
    info.as_of = options.as_of;
  } else if (!book.as_of.empty()) {
    if (!is_calendar_date(book.as_of)) {
      throw InputError(
          located(book_path, 0, "field 'as_of': expected a date YYYY-MM-DD, got '" + book.as_of + "'"));
    }
    info.as_of = book.as_of;
  } else {
    info.as_of = local_date_today();
  }

  info.recorded_at = utc_timestamp_now();
  info.book_path = book_path;
  info.book_label = book.label;
  info.input_sha256 = sha256_hex(bytes);
  info.settings_json = settings_json(settings, config.grades);
  info.tool_version = options.tool_version;
  if (options.pd_calibration != nullptr) {
    info.calibration = options.calibration;
    info.driving_pd = options.driving_pd;
  }

  // Score first, then hold the store only while writing.
  run.obligors.reserve(book.obligors.size());
  ScoredObligor scored;
  for (const ObligorRecord& rec : book.obligors) {
    score_obligor(rec, book.defaults, settings, scored);
    run.obligors.push_back(
        stored_obligor(rec, scored, config.grades, options.pd_calibration, options.driving_pd));
    if (scored.status == RowStatus::ok) ++run.scored;
  }
  return run;
}

void refuse_same_book(const PreparedRun& run, const RecordBookOptions& options, double busy_timeout_seconds) {
  if (options.replace_run) return;
  std::error_code ec;
  const std::string& path = options.store_path;
  if (!std::filesystem::exists(path, ec) || std::filesystem::file_size(path, ec) == 0 || ec) return;
  const RunStore store(path, StoreOpen::read_only, busy_timeout_seconds);
  // Asked before the writer's transaction, so that an older store is not upgraded for a run that is
  // refused. The writer asks again, in case another process recorded meanwhile.
  store.refuse_same_book(run.info);
}

RecordedRun record_prepared_run(const PreparedRun& run, const RecordBookOptions& options,
                                double busy_timeout_seconds) {
  refuse_same_book(run, options, busy_timeout_seconds);
  RunStore store(options.store_path, StoreOpen::create, busy_timeout_seconds);
  RunWriter writer(store, run.info, options.replace_run ? SameBook::replace : SameBook::refuse);
  for (const StoredObligor& o : run.obligors) writer.add(o);
  RecordedRun result;
  result.run_id = writer.commit();
  result.as_of = run.info.as_of;
  result.obligors = run.obligors.size();
  result.scored = run.scored;
  for (const RunInfo& r : writer.replaced()) result.replaced_run_ids.push_back(r.run_id);
  return result;
}

RecordedRun record_book(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options) {
  return record_prepared_run(prepare_run(book_path, settings, config, options), options,
                             config.monitor.busy_timeout_seconds);
}

}  // namespace firmcall
