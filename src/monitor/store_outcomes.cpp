// Outcomes from the history store (store_outcomes.hpp).
#include "firmcall/monitor/store_outcomes.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"

namespace firmcall {

namespace {

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

}  // namespace

bool calendar_day(std::string_view date, std::int64_t& day) noexcept {
  day = -1;
  if (!is_calendar_date(date)) return false;
  const auto digits = [&](std::size_t at, std::size_t n) {
    int v = 0;
    for (std::size_t k = at; k < at + n; ++k) v = v * 10 + (date[k] - '0');
    return v;
  };
  const std::chrono::year_month_day ymd{std::chrono::year{digits(0, 4)},
                                        std::chrono::month{static_cast<unsigned>(digits(5, 2))},
                                        std::chrono::day{static_cast<unsigned>(digits(8, 2))}};
  if (!ymd.ok()) return false;
  day = std::chrono::sys_days{ymd}.time_since_epoch().count();
  return true;
}

DefaultDates parse_default_dates(std::string_view text, const std::string& origin) {
  DefaultDates d;
  d.origin = origin;
  CsvRecordReader records(origin);
  records.start(text);
  bool have_header = false;
  std::size_t width = 0;
  std::size_t id_at = 0;
  std::size_t date_at = 0;
  while (records.next()) {
    const std::vector<std::string_view>& fields = records.fields();
    const std::size_t at = records.line();
    if (!have_header) {
      have_header = true;
      width = fields.size();
      int id = -1;
      int date = -1;
      for (std::size_t i = 0; i < fields.size(); ++i) {
        const std::string_view name = trim_blanks(fields[i]);
        int* slot = name == "id" ? &id : name == "default_date" ? &date : nullptr;
        if (slot == nullptr) continue;
        if (*slot >= 0) {
          throw InputError(located(origin, at, "header: column '" + std::string(name) + "' appears twice"));
        }
        *slot = static_cast<int>(i);
      }
      if (id < 0) throw InputError(located(origin, at, "header: required column 'id' is missing"));
      if (date < 0)
        throw InputError(located(origin, at, "header: required column 'default_date' is missing"));
      id_at = static_cast<std::size_t>(id);
      date_at = static_cast<std::size_t>(date);
      continue;
    }
    if (fields.size() != width) {
      throw InputError(located(
          origin, at,
          "row has " + std::to_string(fields.size()) + " fields, the header has " + std::to_string(width)));
    }
    const std::string_view id = trim_blanks(fields[id_at]);
    if (id.empty())
      throw InputError(located(origin, at, "field 'id': missing (every row needs an obligor id)"));
    const std::string_view date = trim_blanks(fields[date_at]);
    std::int64_t day = 0;
    if (!calendar_day(date, day)) {
      throw InputError(located(
          origin, at, "field 'default_date': expected a calendar date YYYY-MM-DD, got " + quoted_cell(date)));
    }
    if (!d.day_of.emplace(std::string(id), day).second) {
      throw InputError(located(
          origin, at, "field 'id': appears twice (one default date per obligor), got " + quoted_cell(id)));
    }
  }
  if (!have_header) throw InputError(located(origin, 0, "empty file: a header row is required"));
  return d;
}

DefaultDates load_default_dates(const std::string& path) {
  std::unique_ptr<std::FILE, FileCloser> f(std::fopen(path.c_str(), "rb"));
  if (!f) throw InputError("cannot open file '" + path + "'");
  std::string text;
  char buffer[1 << 16];
  for (;;) {
    const std::size_t got = std::fread(buffer, 1, sizeof buffer, f.get());
    text.append(buffer, got);
    if (got < sizeof buffer) break;
  }
  if (std::ferror(f.get())) throw InputError("cannot read file '" + path + "'");
  return parse_default_dates(text, path);
}

OptionCheck StoreOutcomeOptions::validate() const {
  if (!(std::isfinite(horizon_years) && horizon_years > 0.0)) {
    return OptionProblem{"horizon_years", option_value_text(horizon_years),
                         "must be a positive number of years"};
  }
  if (pd_column != "pd" && pd_column != "pd_calibrated") {
    return OptionProblem{"pd_column", pd_column,
                         "must be pd or pd_calibrated for outcomes from the history store"};
  }
  return std::nullopt;
}

OutcomeSample outcomes_from_store(const RunStore& store, const DefaultDates& defaults,
                                  const StoreOutcomeOptions& options, const GradeScale& scale,
                                  StoreOutcomeCounts* counts) {
  if (const OptionCheck problem = options.validate()) throw OptionError(problem->field, problem->constraint);
  OutcomeSample s;
  s.origin = store.path();
  const bool calibrated = options.pd_column == "pd_calibrated";
  s.pd_column = options.pd_column;
  s.graded_from_pd = true;
  for (const GradeBand& b : scale.bands) s.grade_labels.push_back(b.label);
  StoreOutcomeCounts c;
  const std::vector<RunInfo> runs = store.runs();
  if (runs.empty()) throw InputError(store.path() + ": the history store holds no runs");
  const double horizon_days = options.horizon_years * kDaysPerYear;
  for (const RunInfo& run : runs) {
    ++c.runs;
    std::int64_t as_of = 0;
    if (!calendar_day(run.as_of, as_of)) {
      throw InputError(store.path() + ": run " + std::to_string(run.run_id) + ": as-of date " +
                       quoted_cell(run.as_of) + " is not a calendar date");
    }
    for (const StoredObligor& o : store.obligors(run.run_id, false)) {
      // The PD under test: the model PD at the run's horizon, or the calibrated one-year PD.
      const double pd = calibrated ? o.pd_calibrated : o.measures.pd;
      if (!o.has_measures || o.id.empty() || !(pd >= 0.0 && pd <= 1.0)) {
        ++c.not_scored;
        continue;
      }
      std::uint8_t flag = 0;
      if (const auto it = defaults.day_of.find(o.id); it != defaults.day_of.end()) {
        const std::int64_t after = it->second - as_of;
        if (after <= 0) {
          ++c.defaulted_before;
          continue;
        }
        flag = static_cast<double>(after) <= horizon_days ? 1 : 0;
      }
      s.pd.push_back(pd);
      s.defaulted.push_back(flag);
      s.defaults += flag;
      const int grade =
          !calibrated && o.has_inputs ? scale.index_of_pd_at(pd, o.inputs.horizon_years) : scale.index_of(pd);
      s.grade.push_back(grade >= 0 ? grade : scale.index_of(pd));
      s.ids.push_back(std::to_string(run.run_id) + ":" + o.id);
    }
  }
  if (counts != nullptr) *counts = c;
  if (s.pd.empty() && calibrated) {
    throw InputError(store.path() +
                     ": no run of the history store holds a calibrated PD (record runs with "
                     "a calibration to test pd_calibrated)");
  }
  if (s.pd.empty()) throw InputError(store.path() + ": no scored obligors in the history store's runs");
  if (s.defaults == 0 || s.defaults == s.pd.size()) {
    throw InputError(defaults.origin + ": field 'default_date': " +
                     (s.defaults == 0 ? "no defaults" : "every observation defaulted") + " within " +
                     option_value_text(options.horizon_years) + " years of the as-of dates in " +
                     std::to_string(s.pd.size()) +
                     " observations; discrimination needs both defaulters and non-defaulters");
  }
  return s;
}

}  // namespace firmcall
