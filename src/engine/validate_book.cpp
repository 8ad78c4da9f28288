// Validation runs and their writers (validate_book.hpp).
#include "firmcall/engine/validate_book.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <functional>
#include <unordered_map>

#include "firmcall/book/errors.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"
#include "firmcall/io/history_io.hpp"

namespace firmcall {

namespace {

void require_ok(ValidationStatus status, const std::string& origin, const std::string& column) {
  if (status == ValidationStatus::ok) return;
  throw InputError(origin + ": column '" + column + "': the validation statistics cannot be computed (" +
                   std::string(to_string(status)) + ")");
}

// The earlier sample's grades on this run's label list (labels new to it are appended).
std::vector<int> regrade(const OutcomeSample& earlier, std::vector<std::string>& labels) {
  std::unordered_map<std::string, int> index;
  for (std::size_t i = 0; i < labels.size(); ++i) index.emplace(labels[i], static_cast<int>(i));
  std::vector<int> map(earlier.grade_labels.size());
  for (std::size_t i = 0; i < earlier.grade_labels.size(); ++i) {
    const auto [it, added] = index.emplace(earlier.grade_labels[i], static_cast<int>(labels.size()));
    if (added) labels.push_back(earlier.grade_labels[i]);
    map[i] = it->second;
  }
  std::vector<int> g(earlier.grade.size());
  for (std::size_t k = 0; k < g.size(); ++k) g[k] = map[static_cast<std::size_t>(earlier.grade[k])];
  return g;
}

StabilityResult stability(const OutcomeSample& sample, const OutcomeSample& earlier,
                          std::vector<std::string>& labels) {
  StabilityResult s;
  s.origin = earlier.origin;
  const std::vector<int> earlier_grade = regrade(earlier, labels);
  const std::size_t g = labels.size();
  s.actual.assign(g, 0);
  s.expected.assign(g, 0);
  for (int x : sample.grade) ++s.actual[static_cast<std::size_t>(x)];
  for (int x : earlier_grade) ++s.expected[static_cast<std::size_t>(x)];
  s.psi = population_stability_index(s.actual, s.expected);
  std::unordered_map<std::string_view, std::size_t> row_of;
  for (std::size_t k = 0; k < earlier.ids.size(); ++k) row_of.emplace(earlier.ids[k], k);
  std::vector<int> from;
  std::vector<int> to;
  for (std::size_t k = 0; k < sample.ids.size(); ++k) {
    const auto it = row_of.find(sample.ids[k]);
    if (it == row_of.end()) continue;
    from.push_back(earlier_grade[it->second]);
    to.push_back(sample.grade[k]);
  }
  s.matched = from.size();
  s.migration = migration_counts(from, to, static_cast<int>(g));
  return s;
}

std::vector<SegmentResult> segments(const OutcomeSample& sample) {
  std::vector<SegmentResult> out;
  if (sample.segment.empty()) return out;
  GroupedValidation g = validation_by_group(sample.pd, sample.defaulted, sample.segment,
                                            static_cast<int>(sample.segment_labels.size()));
  require_ok(g.status, sample.origin, "segment");
  out.reserve(g.groups.size());
  for (std::size_t i = 0; i < g.groups.size(); ++i) {
    SegmentResult r{sample.segment_labels[i], std::move(g.groups[i]), ""};
    const Discrimination& d = r.figures.discrimination;
    if (d.status == ValidationStatus::one_class) {
      r.auc_note = std::string(d.defaults == 0 ? "no defaults in the segment"
                                               : "every obligor in the segment defaulted") +
                   ": the AUC needs defaulters and non-defaulters";
    } else {
      require_ok(d.status, sample.origin, "segment");
    }
    out.push_back(std::move(r));
  }
  return out;
}

int year_of(std::int32_t days) {
  const std::chrono::year_month_day ymd{std::chrono::sys_days{std::chrono::days{days}}};
  return static_cast<int>(ymd.year());
}

// The date range and the calibration per calendar year of as_of.
void periods(const OutcomeSample& sample, ValidationRun& run) {
  if (sample.as_of.empty()) return;
  const auto [lo, hi] = std::minmax_element(sample.as_of.begin(), sample.as_of.end());
  run.as_of_first = format_iso_date(*lo);
  run.as_of_last = format_iso_date(*hi);
  const int first_year = year_of(*lo);
  const std::size_t years = static_cast<std::size_t>(year_of(*hi) - first_year) + 1;
  // The first day of each year in the range, so that a row's year is found by comparison.
  std::vector<std::int32_t> year_start(years + 1);
  for (std::size_t y = 0; y <= years; ++y) {
    const std::chrono::year_month_day jan1{std::chrono::year{first_year + static_cast<int>(y)},
                                           std::chrono::January, std::chrono::day{1}};
    year_start[y] = static_cast<std::int32_t>(std::chrono::sys_days{jan1}.time_since_epoch().count());
  }
  std::vector<std::size_t> n(years, 0);
  std::vector<std::size_t> d(years, 0);
  std::vector<double> pd_sum(years, 0.0);
  for (std::size_t k = 0; k < sample.as_of.size(); ++k) {
    const std::size_t y = static_cast<std::size_t>(
        std::upper_bound(year_start.begin(), year_start.end(), sample.as_of[k]) - year_start.begin() - 1);
    ++n[y];
    d[y] += sample.defaulted[k];
    pd_sum[y] += sample.pd[k];
  }
  for (std::size_t y = 0; y < years; ++y) {
    if (n[y] == 0) continue;
    const double mean = std::min(1.0, pd_sum[y] / static_cast<double>(n[y]));
    run.periods.push_back(
        PeriodResult{first_year + static_cast<int>(y), group_calibration(n[y], d[y], mean)});
  }
}

// ---------------------------------------------------------------- JSON

void json_group(JsonFields& f, const GroupCalibration& g) {
  f.count("observations", g.observations)
      .count("defaults", g.defaults)
      .number("mean_pd", g.mean_pd)
      .number("default_rate", g.default_rate)
      .number("binomial_p", g.binomial_p)
      .number("jeffreys_p", g.jeffreys_p)
      .text("traffic_light", to_string(g.light));
}

void write_json(const ValidationRun& run, std::string& out) {
  const Discrimination& d = run.discrimination;
  const CalibrationTests& c = run.calibration;
  out += "{";
  JsonFields f(out);
  f.text("file", run.origin).text("pd_column", run.pd_column);
  f.count("observations", d.observations).count("defaults", d.defaults);
  f.number("mean_pd", c.overall.mean_pd).number("default_rate", c.overall.default_rate);
  if (!run.as_of_first.empty()) f.text("as_of_first", run.as_of_first).text("as_of_last", run.as_of_last);
  f.number("auc", d.auc)
      .number("auc_se", d.auc_se)
      .number("auc_lower", d.auc_lower)
      .number("auc_upper", d.auc_upper);
  f.number("accuracy_ratio", d.accuracy_ratio).number("ks", d.ks).number("ks_pd", d.ks_threshold_pd);
  f.number("brier", c.brier);
  f.number("hosmer_lemeshow", c.hosmer_lemeshow)
      .count("hosmer_lemeshow_df", c.hosmer_lemeshow_df)
      .number("hosmer_lemeshow_p", c.hosmer_lemeshow_p);
  f.number("spiegelhalter_z", c.spiegelhalter_z).number("spiegelhalter_p", c.spiegelhalter_p);
  f.number("binomial_p", c.overall.binomial_p)
      .number("jeffreys_p", c.overall.jeffreys_p)
      .text("traffic_light", to_string(c.overall.light));
  if (run.comparison) {
    const AucComparison& k = *run.comparison;
    f.text("compare_column", run.compare_column).number("compare_auc", k.auc_second);
    f.number("compare_auc_se", run.compare_discrimination->auc_se);
    f.number("auc_difference", k.difference).number("auc_difference_se", k.difference_se);
    f.number("auc_difference_z", k.z).number("auc_difference_p", k.p_value);
  }
  if (run.stability) {
    const StabilityResult& s = *run.stability;
    f.text("against", s.origin).number("psi", s.psi).count("matched", s.matched);
    std::string& list = f.key("migration");
    list += "[";
    bool first = true;
    const std::size_t g = run.grade_labels.size();
    for (std::size_t a = 0; a < g && !s.migration.empty(); ++a) {
      for (std::size_t b = 0; b < g; ++b) {
        if (s.migration[a * g + b] == 0) continue;
        list += first ? "{" : ", {";
        first = false;
        JsonFields(list)
            .text("from", run.grade_labels[a])
            .text("to", run.grade_labels[b])
            .count("count", s.migration[a * g + b]);
        list += "}";
      }
    }
    list += "]";
  }
  std::string& grades = f.key("grades");
  grades += "[";
  bool first = true;
  for (std::size_t i = 0; i < c.grades.size(); ++i) {
    if (c.grades[i].observations == 0) continue;
    grades += first ? "{" : ", {";
    first = false;
    JsonFields g(grades);
    g.text("grade", run.grade_labels[i]);
    json_group(g, c.grades[i]);
    grades += "}";
  }
  grades += "]";
  if (!run.segments.empty()) {
    std::string& list = f.key("segments");
    list += "[";
    for (std::size_t i = 0; i < run.segments.size(); ++i) {
      const SegmentResult& r = run.segments[i];
      const GroupCalibration& g = r.figures.calibration;
      const Discrimination& sd = r.figures.discrimination;
      const bool auc = r.auc_note.empty();
      const double none = std::nan("");
      list += i == 0 ? "{" : ", {";
      JsonFields e(list);
      e.text("segment", r.label).count("observations", g.observations).count("defaults", g.defaults);
      e.number("auc", auc ? sd.auc : none)
          .number("auc_lower", auc ? sd.auc_lower : none)
          .number("auc_upper", auc ? sd.auc_upper : none)
          .number("accuracy_ratio", auc ? sd.accuracy_ratio : none);
      if (!auc) e.text("auc_note", r.auc_note);
      e.number("mean_pd", g.mean_pd)
          .number("default_rate", g.default_rate)
          .number("binomial_p", g.binomial_p)
          .number("jeffreys_p", g.jeffreys_p);
      list += "}";
    }
    list += "]";
  }
  if (!run.as_of_first.empty()) {
    std::string& list = f.key("periods");
    list += "[";
    for (std::size_t i = 0; i < run.periods.size(); ++i) {
      const GroupCalibration& g = run.periods[i].calibration;
      list += i == 0 ? "{" : ", {";
      JsonFields(list)
          .text("period", std::to_string(run.periods[i].year))
          .count("observations", g.observations)
          .count("defaults", g.defaults)
          .number("mean_pd", g.mean_pd)
          .number("default_rate", g.default_rate)
          .number("binomial_p", g.binomial_p);
      list += "}";
    }
    list += "]";
  }
  out += "}\n";
}

// ---------------------------------------------------------------- CSV (long format)

// Where a CSV row belongs: the segment and the period (empty: the whole sample), written only
// when the sample has those columns.
struct CsvPlace {
  std::string_view segment;
  std::string_view period;
};

void csv_lead(std::string& out, const ValidationRun& run, const CsvPlace& at, std::string_view grade,
              std::string_view statistic) {
  append_csv_texts(out, {run.pd_column});
  if (!run.segments.empty()) append_csv_texts(out, {at.segment});
  if (!run.as_of_first.empty()) append_csv_texts(out, {at.period});
  append_csv_texts(out, {grade, statistic});
}

void csv_row(std::string& out, const ValidationRun& run, const CsvPlace& at, std::string_view grade,
             std::string_view statistic, double v) {
  csv_lead(out, run, at, grade, statistic);
  append_number(out, v);
  out += "\n";
}

void csv_row(std::string& out, const ValidationRun& run, std::string_view grade, std::string_view statistic,
             double v) {
  csv_row(out, run, CsvPlace{}, grade, statistic, v);
}

void csv_text_row(std::string& out, const ValidationRun& run, const CsvPlace& at, std::string_view grade,
                  std::string_view statistic, std::string_view v) {
  csv_lead(out, run, at, grade, statistic);
  append_csv_text(out, v);
  out += "\n";
}

void csv_text_row(std::string& out, const ValidationRun& run, std::string_view grade,
                  std::string_view statistic, std::string_view v) {
  csv_text_row(out, run, CsvPlace{}, grade, statistic, v);
}

void csv_group(std::string& out, const ValidationRun& run, std::string_view grade, const GroupCalibration& g,
               const CsvPlace& at = {}) {
  csv_row(out, run, at, grade, "observations", static_cast<double>(g.observations));
  csv_row(out, run, at, grade, "defaults", static_cast<double>(g.defaults));
  csv_row(out, run, at, grade, "mean_pd", g.mean_pd);
  csv_row(out, run, at, grade, "default_rate", g.default_rate);
  csv_row(out, run, at, grade, "binomial_p", g.binomial_p);
  csv_row(out, run, at, grade, "jeffreys_p", g.jeffreys_p);
  csv_text_row(out, run, at, grade, "traffic_light", to_string(g.light));
}

void csv_segments_and_periods(const ValidationRun& run, std::string& out) {
  for (const SegmentResult& r : run.segments) {
    const CsvPlace at{r.label, ""};
    csv_group(out, run, "all", r.figures.calibration, at);
    if (!r.auc_note.empty()) {
      csv_text_row(out, run, at, "all", "auc_note", r.auc_note);
      continue;
    }
    const Discrimination& d = r.figures.discrimination;
    csv_row(out, run, at, "all", "auc", d.auc);
    csv_row(out, run, at, "all", "auc_se", d.auc_se);
    csv_row(out, run, at, "all", "auc_lower", d.auc_lower);
    csv_row(out, run, at, "all", "auc_upper", d.auc_upper);
    csv_row(out, run, at, "all", "accuracy_ratio", d.accuracy_ratio);
  }
  for (const PeriodResult& p : run.periods) {
    const std::string year = std::to_string(p.year);
    const CsvPlace at{"", year};
    const GroupCalibration& g = p.calibration;
    csv_row(out, run, at, "all", "observations", static_cast<double>(g.observations));
    csv_row(out, run, at, "all", "defaults", static_cast<double>(g.defaults));
    csv_row(out, run, at, "all", "mean_pd", g.mean_pd);
    csv_row(out, run, at, "all", "default_rate", g.default_rate);
    csv_row(out, run, at, "all", "binomial_p", g.binomial_p);
  }
}

void write_csv(const ValidationRun& run, std::string& out) {
  const Discrimination& d = run.discrimination;
  const CalibrationTests& c = run.calibration;
  out += "pd_column,";
  if (!run.segments.empty()) out += "segment,";
  if (!run.as_of_first.empty()) out += "period,";
  out += "grade,statistic,value\n";
  csv_group(out, run, "all", c.overall);
  if (!run.as_of_first.empty()) {
    csv_text_row(out, run, "all", "as_of_first", run.as_of_first);
    csv_text_row(out, run, "all", "as_of_last", run.as_of_last);
  }
  const std::pair<std::string_view, double> all[] = {
      {"auc", d.auc},
      {"auc_se", d.auc_se},
      {"auc_lower", d.auc_lower},
      {"auc_upper", d.auc_upper},
      {"accuracy_ratio", d.accuracy_ratio},
      {"ks", d.ks},
      {"ks_pd", d.ks_threshold_pd},
      {"brier", c.brier},
      {"hosmer_lemeshow", c.hosmer_lemeshow},
      {"hosmer_lemeshow_df", static_cast<double>(c.hosmer_lemeshow_df)},
      {"hosmer_lemeshow_p", c.hosmer_lemeshow_p},
      {"spiegelhalter_z", c.spiegelhalter_z},
      {"spiegelhalter_p", c.spiegelhalter_p},
  };
  for (const auto& [name, v] : all) csv_row(out, run, "all", name, v);
  if (run.comparison) {
    csv_text_row(out, run, "all", "compare_column", run.compare_column);
    csv_row(out, run, "all", "compare_auc", run.comparison->auc_second);
    csv_row(out, run, "all", "auc_difference", run.comparison->difference);
    csv_row(out, run, "all", "auc_difference_se", run.comparison->difference_se);
    csv_row(out, run, "all", "auc_difference_z", run.comparison->z);
    csv_row(out, run, "all", "auc_difference_p", run.comparison->p_value);
  }
  if (run.stability) {
    csv_row(out, run, "all", "psi", run.stability->psi);
    csv_row(out, run, "all", "matched", static_cast<double>(run.stability->matched));
  }
  for (std::size_t i = 0; i < c.grades.size(); ++i) {
    if (c.grades[i].observations > 0) csv_group(out, run, run.grade_labels[i], c.grades[i]);
  }
  csv_segments_and_periods(run, out);
}

// ---------------------------------------------------------------- table

std::string pct(double v) {
  return std::isfinite(v) ? table_number(100.0 * v, 4) + "%" : std::string("-");
}

std::string pval(double v) {
  return table_number(v, 4);
}

void line(std::string& out, const char* fmt, auto... args) {
  char buf[256];
  std::snprintf(buf, sizeof buf, fmt, args...);
  out += buf;
}

void table_segments(const ValidationRun& run, std::string& out) {
  for (const SegmentResult& r : run.segments) {
    const GroupCalibration& g = r.figures.calibration;
    const Discrimination& d = r.figures.discrimination;
    line(out, "\nSegment '%s': %zu observations, %zu defaults (default rate %s, mean PD %s)\n",
         fit_text(r.label, 40).c_str(), g.observations, g.defaults, pct(g.default_rate).c_str(),
         pct(g.mean_pd).c_str());
    if (r.auc_note.empty()) {
      line(out, "  AUC                %s   95%% interval %s to %s (DeLong)\n", fixed_number(d.auc, 4).c_str(),
           fixed_number(d.auc_lower, 4).c_str(), fixed_number(d.auc_upper, 4).c_str());
      line(out, "  accuracy ratio     %s\n", fixed_number(d.accuracy_ratio, 4).c_str());
    } else {
      line(out, "  AUC                -   (%s)\n", r.auc_note.c_str());
    }
    line(out, "  binomial p         %s   Jeffreys p %s   traffic light %s\n", pval(g.binomial_p).c_str(),
         pval(g.jeffreys_p).c_str(), std::string(to_string(g.light)).c_str());
  }
}

void table_periods(const ValidationRun& run, std::string& out) {
  if (run.periods.empty()) return;
  out += "\nPer calendar year of as_of\n";
  line(out, "%-10s %10s %9s %12s %14s %11s\n", "period", "obligors", "defaults", "mean PD %",
       "default rate %", "binomial p");
  append_rule(out, 71);
  for (const PeriodResult& p : run.periods) {
    const GroupCalibration& g = p.calibration;
    line(out, "%-10d %10zu %9zu %12s %14s %11s\n", p.year, g.observations, g.defaults,
         table_number(100.0 * g.mean_pd, 4).c_str(), table_number(100.0 * g.default_rate, 4).c_str(),
         pval(g.binomial_p).c_str());
  }
  append_rule(out, 71);
}

void write_table(const ValidationRun& run, std::string& out) {
  const Discrimination& d = run.discrimination;
  const CalibrationTests& c = run.calibration;
  line(out,
       "Validation of PD column '%s' in %s: %zu observations, %zu defaults (default rate %s, mean PD %s)\n",
       run.pd_column.c_str(), run.origin.c_str(), d.observations, d.defaults,
       pct(c.overall.default_rate).c_str(), pct(c.overall.mean_pd).c_str());
  if (!run.as_of_first.empty()) {
    line(out, "Observations dated %s to %s (as_of)\n", run.as_of_first.c_str(), run.as_of_last.c_str());
  }
  out += "\nDiscrimination\n";
  line(out, "  AUC                %s   95%% interval %s to %s (DeLong)\n", fixed_number(d.auc, 4).c_str(),
       fixed_number(d.auc_lower, 4).c_str(), fixed_number(d.auc_upper, 4).c_str());
  line(out, "  accuracy ratio     %s\n", fixed_number(d.accuracy_ratio, 4).c_str());
  line(out, "  Kolmogorov-Smirnov %s   at PD %s\n", fixed_number(d.ks, 4).c_str(),
       pct(d.ks_threshold_pd).c_str());
  if (run.comparison) {
    const AucComparison& k = *run.comparison;
    line(out, "  AUC of '%s'  %s; difference %s (se %s), z %s, p %s (DeLong test)\n",
         run.compare_column.c_str(), fixed_number(k.auc_second, 4).c_str(),
         fixed_number(k.difference, 4, true).c_str(), fixed_number(k.difference_se, 4).c_str(),
         fixed_number(k.z, 2, true).c_str(), pval(k.p_value).c_str());
  }
  out += "\nCalibration\n";
  line(out, "  binomial p         %s   Jeffreys p %s   traffic light %s (all obligors)\n",
       pval(c.overall.binomial_p).c_str(), pval(c.overall.jeffreys_p).c_str(),
       std::string(to_string(c.overall.light)).c_str());
  line(out, "  Hosmer-Lemeshow    %s   df %zu   p %s\n", table_number(c.hosmer_lemeshow, 3).c_str(),
       c.hosmer_lemeshow_df, pval(c.hosmer_lemeshow_p).c_str());
  line(out, "  Spiegelhalter z    %s   p %s\n", fixed_number(c.spiegelhalter_z, 3, true).c_str(),
       pval(c.spiegelhalter_p).c_str());
  line(out, "  Brier score        %s\n", table_number(c.brier, 5).c_str());
  if (run.stability) {
    line(out, "\nStability against %s: PSI %s over %zu grades; %zu obligors in both samples\n",
         run.stability->origin.c_str(), table_number(run.stability->psi, 4).c_str(), run.grade_labels.size(),
         run.stability->matched);
  }
  out += "\n";
  line(out, "%-10s %10s %9s %12s %14s %11s %11s  %s\n", "grade", "obligors", "defaults", "mean PD %",
       "default rate %", "binomial p", "Jeffreys p", "light");
  append_rule(out, 90);
  for (std::size_t i = 0; i < c.grades.size(); ++i) {
    const GroupCalibration& g = c.grades[i];
    if (g.observations == 0) continue;
    line(out, "%-10s %10zu %9zu %12s %14s %11s %11s  %s\n", fit_text(run.grade_labels[i], 10).c_str(),
         g.observations, g.defaults, table_number(100.0 * g.mean_pd, 4).c_str(),
         table_number(100.0 * g.default_rate, 4).c_str(), pval(g.binomial_p).c_str(),
         pval(g.jeffreys_p).c_str(), std::string(to_string(g.light)).c_str());
  }
  append_rule(out, 90);
  line(out, "Traffic light on the binomial p: green p > %g%%, yellow %g%% < p <= %g%%, red p <= %g%%.\n",
       100.0 * kYellowPValue, 100.0 * kRedPValue, 100.0 * kYellowPValue, 100.0 * kRedPValue);
  table_segments(run, out);
  table_periods(run, out);
  if (run.stability && !run.stability->migration.empty()) {
    const StabilityResult& s = *run.stability;
    const std::size_t g = run.grade_labels.size();
    std::vector<std::size_t> used;  // grades with obligors in either sample
    for (std::size_t a = 0; a < g; ++a) {
      if (s.actual[a] > 0 || s.expected[a] > 0) used.push_back(a);
    }
    out += "\nGrade migration (rows: grade in " + s.origin + ", columns: grade now; obligors in both)\n";
    line(out, "%-10s", "");
    for (std::size_t b : used) line(out, " %7s", fit_text(run.grade_labels[b], 7).c_str());
    out += "\n";
    for (std::size_t a : used) {
      line(out, "%-10s", fit_text(run.grade_labels[a], 10).c_str());
      for (std::size_t b : used) line(out, " %7zu", s.migration[a * g + b]);
      out += "\n";
    }
  }
}

}  // namespace

ValidationRun run_validation(const OutcomeSample& sample, const OutcomeSample* earlier, bool curves) {
  ValidationRun run;
  run.origin = sample.origin;
  run.pd_column = sample.pd_column;
  run.compare_column = sample.compare_column;
  run.grade_labels = sample.grade_labels;
  ColumnComparison both;
  if (sample.compare_column.empty()) {
    run.discrimination = discrimination(sample.pd, sample.defaulted, curves);
  } else {
    // One ranking of each column serves its AUC and DeLong's test of the two.
    both = compare_columns(sample.pd, sample.compare_pd, sample.defaulted, curves);
    run.discrimination = std::move(both.first);
  }
  require_ok(run.discrimination.status, sample.origin, sample.pd_column);
  if (earlier != nullptr) run.stability = stability(sample, *earlier, run.grade_labels);
  run.calibration =
      calibration_tests(sample.pd, sample.defaulted, sample.grade, static_cast<int>(run.grade_labels.size()));
  require_ok(run.calibration.status, sample.origin, sample.pd_column);
  if (!sample.compare_column.empty()) {
    run.compare_discrimination = std::move(both.second);
    require_ok(run.compare_discrimination->status, sample.origin, sample.compare_column);
    run.comparison = both.comparison;
    require_ok(run.comparison->status, sample.origin, sample.compare_column);
  }
  run.segments = segments(sample);
  periods(sample, run);
  return run;
}

void write_validation(const ValidationRun& run, OutputFormat format, const TextSink& sink) {
  std::string out;
  switch (format) {
    case OutputFormat::json:
      write_json(run, out);
      break;
    case OutputFormat::csv:
      write_csv(run, out);
      break;
    case OutputFormat::table:
      write_table(run, out);
      break;
  }
  sink(out);
}

void write_validation_curves(const ValidationRun& run, const TextSink& sink) {
  std::string out =
      "pd_threshold,false_positive_rate,true_positive_rate,population_fraction,defaults_fraction\n";
  for (const CurvePoint& p : run.discrimination.curve) {
    append_number(out, p.threshold_pd);  // nothing for the first point's infinite threshold
    const double rest[] = {p.false_positive_rate, p.hit_rate, p.population_share, p.hit_rate};
    append_csv_numbers(out, rest);
    out += "\n";
  }
  sink(out);
}

}  // namespace firmcall
