// Validation runs and their writers (validate_book.hpp).
#include "firmcall/engine/validate_book.hpp"

#include <cmath>
#include <cstdio>
#include <functional>
#include <unordered_map>

#include "firmcall/book/errors.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"

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
  out += "}\n";
}

// ---------------------------------------------------------------- CSV (long format)

void csv_row(std::string& out, const ValidationRun& run, std::string_view grade, std::string_view statistic,
             double v) {
  append_csv_texts(out, {run.pd_column, grade, statistic});
  append_number(out, v);
  out += "\n";
}

void csv_text_row(std::string& out, const ValidationRun& run, std::string_view grade,
                  std::string_view statistic, std::string_view v) {
  append_csv_texts(out, {run.pd_column, grade, statistic});
  append_csv_text(out, v);
  out += "\n";
}

void csv_group(std::string& out, const ValidationRun& run, std::string_view grade,
               const GroupCalibration& g) {
  csv_row(out, run, grade, "observations", static_cast<double>(g.observations));
  csv_row(out, run, grade, "defaults", static_cast<double>(g.defaults));
  csv_row(out, run, grade, "mean_pd", g.mean_pd);
  csv_row(out, run, grade, "default_rate", g.default_rate);
  csv_row(out, run, grade, "binomial_p", g.binomial_p);
  csv_row(out, run, grade, "jeffreys_p", g.jeffreys_p);
  csv_text_row(out, run, grade, "traffic_light", to_string(g.light));
}

void write_csv(const ValidationRun& run, std::string& out) {
  const Discrimination& d = run.discrimination;
  const CalibrationTests& c = run.calibration;
  out += "pd_column,grade,statistic,value\n";
  csv_group(out, run, "all", c.overall);
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

void write_table(const ValidationRun& run, std::string& out) {
  const Discrimination& d = run.discrimination;
  const CalibrationTests& c = run.calibration;
  line(out,
       "Validation of PD column '%s' in %s: %zu observations, %zu defaults (default rate %s, mean PD %s)\n",
       run.pd_column.c_str(), run.origin.c_str(), d.observations, d.defaults,
       pct(c.overall.default_rate).c_str(), pct(c.overall.mean_pd).c_str());
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
