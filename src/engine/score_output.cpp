#include "firmcall/engine/score_output.hpp"

#include <array>
#include <bit>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <iterator>

#include <fmt/format.h>

#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"
#include "firmcall/model/pd_horizon.hpp"

namespace firmcall {

const std::vector<std::string_view>& score_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "id,name,status,equity_value,default_point,asset_value,asset_vol,leverage,"
      "distance_to_default,pd,horizon,pd_one_year,pd_risk_neutral,debt_value,spread_bp,iterations,residual,"
      "message,currency");
  return cols;
}

const std::vector<std::string_view>& sensitivity_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "sensitivity_status,dd_per_equity_pct,pd_per_equity_pct,spread_bp_per_equity_pct,"
      "dd_per_equity_vol_pt,pd_per_equity_vol_pt,spread_bp_per_equity_vol_pt,"
      "dd_per_default_point_pct,pd_per_default_point_pct,spread_bp_per_default_point_pct,"
      "dd_per_rate_bp,pd_per_rate_bp,spread_bp_per_rate_bp");
  return cols;
}

MertonSensitivities sensitivities_of(const ResolvedObligor& resolved, const AssetSolution& solution) {
  return merton_sensitivities(resolved.inputs, solution.asset_value, solution.asset_vol_annual,
                              resolved.drift_follows_rate);
}

namespace {

// The twelve sensitivity values in sensitivity_columns() order (after the status).
std::array<double, 12> sensitivity_values(const MertonSensitivities& s) {
  std::array<double, 12> v{};
  const MeasureChange* groups[] = {&s.equity, &s.equity_vol, &s.default_point, &s.rate};
  for (std::size_t g = 0; g < 4; ++g) {
    v[3 * g] = groups[g]->distance_to_default;
    v[3 * g + 1] = groups[g]->pd;
    v[3 * g + 2] = groups[g]->spread_bp;
  }
  return v;
}

}  // namespace

void append_sensitivities_csv(std::string& out, const MertonSensitivities& s, bool usable) {
  out.push_back(',');
  if (!usable) {
    out.append(12, ',');
    return;
  }
  out.append(to_string(s.status));
  const auto v = sensitivity_values(s);
  for (double x : v) {
    out.push_back(',');
    if (s.ok()) append_number(out, x);
  }
}

void append_sensitivities_json(std::string& out, const MertonSensitivities& s, bool usable) {
  const auto& cols = sensitivity_columns();
  JsonFields fields(out, false);
  fields.text_or_null(cols[0], to_string(s.status), usable);
  const auto v = sensitivity_values(s);
  for (std::size_t i = 0; i < v.size(); ++i)
    fields.number(cols[i + 1], usable && s.ok() ? v[i] : std::nan(""));
}

void append_score_settings_json(std::string& out, const ScoreSettings& settings) {
  JsonFields(out, false)
      .number("default_point_weight", settings.weight_override.value_or(settings.default_point_weight))
      .number("rate_override", settings.rate_override.value_or(std::nan("")))
      .number("horizon_override", settings.horizon_override.value_or(std::nan("")));
}

JsonFields open_json_summary(std::string& out, std::size_t obligors, std::size_t scored, std::size_t invalid,
                             std::size_t not_converged) {
  out += "\n  ],\n  \"summary\": {";
  JsonFields fields(out);
  fields.count("obligors", obligors)
      .count("scored", scored)
      .count("invalid_input", invalid)
      .count("not_converged", not_converged);
  return fields;
}

void append_score_summary_json(std::string& out, const ScoreSummary& sum) {
  open_json_summary(out, sum.total, sum.scored, sum.invalid, sum.not_converged);
  out += "}";
  // Notes on the file and on obligors' inputs (docs/inputs.md, "Typo guards"), after the summary.
  if (!sum.notes.empty()) {
    out += ",\n  \"notes\": [";
    for (std::size_t i = 0; i < sum.notes.size(); ++i) {
      out += i > 0 ? ",\n    " : "\n    ";
      append_json_string(out, sum.notes[i]);
    }
    out += "\n  ]";
  }
  out += "\n}\n";
}

void append_score_tally(std::string& out, std::string_view what, const ScoreSummary& sum,
                        std::size_t wrap_width) {
  fmt::format_to(std::back_inserter(out), "{} {} of {} obligors", what, sum.scored, sum.total);
  if (sum.failed() > 0) {
    fmt::format_to(std::back_inserter(out), "; {} invalid input, {} not converged (reasons below)",
                   sum.invalid, sum.not_converged);
  }
  out += "\n";
  append_table_problems(out, sum.problems, sum.problems_not_listed, wrap_width);
  if (!sum.notes.empty()) {
    out += "notes:\n";
    append_table_problems(out, sum.notes, 0, wrap_width > 0 ? wrap_width : 118);  // the table's width
  }
}

void append_sensitivities_table_header(std::string& out, std::size_t indent) {
  char buf[256];
  std::snprintf(buf, sizeof buf, "%*s%-28s  %-28s  %-28s  %-28s\n", static_cast<int>(indent), "",
                "per +1% equity value", "per +1 pt equity vol", "per +1% default point", "per +1 bp rate");
  out += buf;
  std::string line(indent, ' ');
  for (int g = 0; g < 4; ++g) {
    std::snprintf(buf, sizeof buf, "%s%8s %9s %9s", g > 0 ? "  " : "", "DD", "PD pp", "spread bp");
    line += buf;
  }
  out += line + "\n";
}

void append_sensitivities_table(std::string& out, const MertonSensitivities& s, std::size_t indent) {
  std::string line(indent, ' ');
  if (!s.ok()) {
    line += "sensitivities not available (";
    line += to_string(s.status);
    out += line + ")\n";
    return;
  }
  char buf[64];
  const auto v = sensitivity_values(s);
  for (std::size_t g = 0; g < 4; ++g) {
    // DD changes with 4 decimals, or in scientific notation when smaller than 0.01.
    const double dd = v[3 * g];
    const char* fmt =
        std::fabs(dd) >= 0.01 || dd == 0.0 ? "%s%+8.4f %+9.2e %+9.2e" : "%s%+8.1e %+9.2e %+9.2e";
    std::snprintf(buf, sizeof buf, fmt, g > 0 ? "  " : "", dd, 100.0 * v[3 * g + 1], v[3 * g + 2]);
    line += buf;
  }
  out += line + "\n";
}

const std::vector<std::string_view>& pd_calibration_columns() {
  static const std::vector<std::string_view> cols =
      split_names("pd_calibrated,pd_calibrated_lower,pd_calibrated_upper,pd_calibrated_extrapolated");
  return cols;
}

void append_calibrated_pd_csv(std::string& out, const CalibratedPd& p) {
  char buf[3 * (kMaxNumberChars + 1) + 8];
  char* e = buf;
  for (double v : {p.pd, p.lower, p.upper}) {
    *e++ = ',';
    e = write_number(e, v);
  }
  out.append(buf, e);
  out += !std::isfinite(p.pd) ? std::string_view(",") : p.extrapolated ? std::string_view(",true") : ",false";
}

void append_calibrated_pd_json(std::string& out, const CalibratedPd& p,
                               std::span<const std::string_view> names) {
  JsonFields f(out, false);
  f.number(names[0], p.pd).number(names[1], p.lower).number(names[2], p.upper);
  if (std::isfinite(p.pd)) {
    f.boolean(names[3], p.extrapolated);
  } else {
    f.null(names[3]);
  }
}

namespace {

// The calibrated PD of a scored obligor (NaN when it was not scored).
CalibratedPd calibrated_pd_of(const PdCalibration& cal, const ScoredObligor& s) noexcept {
  if (s.status != RowStatus::ok) return {std::nan(""), std::nan(""), std::nan(""), false};
  return cal.evaluate(s.measures.distance_to_default);
}

// Appends ",pd,lower,upper,extrapolated" (empty cells when not scored).
void append_calibrated_csv(std::string& out, const PdCalibration& cal, const ScoredObligor& s) {
  append_calibrated_pd_csv(out, calibrated_pd_of(cal, s));
}

void append_calibrated_json(std::string& out, const PdCalibration& cal, const ScoredObligor& s) {
  append_calibrated_pd_json(out, calibrated_pd_of(cal, s), pd_calibration_columns());
}

void append_calibrated_table(std::string& out, const PdCalibration& cal, const ScoredObligor& s) {
  const CalibratedPd p = calibrated_pd_of(cal, s);
  if (!std::isfinite(p.pd)) return;
  fmt::format_to(std::back_inserter(out), "  calibrated one-year PD {:.4f}%  [{:.4f}%, {:.4f}%]{}\n",
                 100.0 * p.pd, 100.0 * p.lower, 100.0 * p.upper,
                 p.extrapolated ? "  DD outside the calibration sample" : "");
}

void append_calibrated_table_header(std::string& out, const PdCalibration& cal) {
  fmt::format_to(
      std::back_inserter(out),
      "  under each obligor: one-year calibrated PD ({}, {} obligor-years) with its {:g}% interval\n",
      to_string(cal.method), cal.observations, 100.0 * cal.confidence_level);
}

}  // namespace

namespace {

// Grade label of a scored obligor, on its one-year model PD, or with `cal` on the calibrated
// one-year PD of its DD; empty when it was not scored.
std::string grade_label(const GradeScale* grades, const ScoredObligor& s, const PdCalibration* cal) {
  if (!grades || s.status != RowStatus::ok) return {};
  if (cal) return std::string(grades->label_of(cal->evaluate(s.measures.distance_to_default).pd));
  return std::string(grades->label_of_pd_at(s.measures.pd, s.resolved.inputs.horizon_years));
}

const PdCalibration* graded_on(const PdCalibration* cal, DrivingPd driving) {
  return driving == DrivingPd::calibrated ? cal : nullptr;
}

// Values of the numeric columns equity_value .. spread_bp of score_columns(), in order.
constexpr std::size_t kNumericColumns = 12;
constexpr std::size_t kFirstNumericColumn = 3;
struct NumericRow {
  double v[kNumericColumns];
};

NumericRow numeric_row(const ScoredObligor& s) {
  NumericRow r{};
  const bool resolved = s.resolved.ok();
  const bool scored = s.status == RowStatus::ok;
  const double nan = std::nan("");
  const MertonInputs& in = s.resolved.inputs;
  const MertonMeasures& m = s.measures;
  r.v[0] = resolved ? in.equity_value : nan;
  r.v[1] = resolved ? in.default_point : nan;
  // The horizon is an input (shown once resolved); the one-year PD sits beside the model PD.
  const double vals[] = {m.asset_value, m.asset_vol_annual, m.leverage, m.distance_to_default, m.pd};
  for (int i = 0; i < 5; ++i) r.v[2 + i] = scored ? vals[i] : nan;
  r.v[7] = resolved ? in.horizon_years : nan;
  r.v[8] = scored ? pd_one_year(m.pd, in.horizon_years) : nan;
  const double rest[] = {m.pd_risk_neutral, m.debt_value, m.spread_bp};
  for (int i = 0; i < 3; ++i) r.v[9 + i] = scored ? rest[i] : nan;
  return r;
}

class CsvWriter final : public ScoreWriter {
 public:
  CsvWriter(const std::string&, const ScoreSettings& settings, bool sensitivities, const GradeScale* grades,
            const PdCalibration* cal, DrivingPd driving, std::string_view)
      : default_currency_(settings.currency.view()),
        sensitivities_(sensitivities),
        grades_(grades),
        cal_(cal),
        grade_cal_(graded_on(cal, driving)),
        driving_cell_(driving == DrivingPd::calibrated ? ",calibrated\n" : ",model\n") {}
  void begin(std::string& out) const override {
    append_csv_names(out, score_columns());
    if (sensitivities_) {
      out.push_back(',');
      append_csv_names(out, sensitivity_columns());
    }
    if (grades_) out += ",grade";
    if (cal_) {
      out.push_back(',');
      append_csv_names(out, pd_calibration_columns());
      out += ",driving_pd";  // which PD the grades are on: model or calibrated
    }
    out.push_back('\n');
  }
  void row(const ObligorRecord& rec, const ScoredObligor& s, std::string& out) const override {
    append_csv_text(out, rec.get(TextField::id));
    out.push_back(',');
    append_csv_text(out, rec.get(TextField::name));
    out.push_back(',');
    out.append(to_string(s.status));
    // The numbers are formatted into one buffer and appended at once.
    const NumericRow r = numeric_row(s);
    char buf[(kNumericColumns + 2) * (kMaxNumberChars + 1) + 1];
    char* p = buf;
    for (double v : r.v) {
      *p++ = ',';
      p = write_number(p, v);
    }
    *p++ = ',';
    if (s.solution.residual >= 0.0) p = std::to_chars(p, p + 16, s.solution.iterations).ptr;
    *p++ = ',';
    if (s.solution.residual >= 0.0) p = write_number(p, s.solution.residual);
    *p++ = ',';
    out.append(buf, p);
    append_csv_text(out, s.message);
    out.push_back(',');
    append_csv_text(out, currency_of(rec));
    if (sensitivities_) {
      const bool usable = s.status == RowStatus::ok;
      append_sensitivities_csv(out, usable ? sensitivities_of(s.resolved, s.solution) : MertonSensitivities{},
                               usable);
    }
    if (grades_) {
      out.push_back(',');
      append_csv_text(out, grade_label(grades_, s, grade_cal_));
    }
    if (cal_) {
      append_calibrated_csv(out, *cal_, s);
      out += driving_cell_;
    } else {
      out.push_back('\n');
    }
  }
  void end(const ScoreSummary&, std::string&) const override {}

 private:
  std::string_view currency_of(const ObligorRecord& rec) const {
    const std::string& own = rec.get(TextField::currency);
    return own.empty() ? std::string_view(default_currency_) : std::string_view(own);
  }
  std::string default_currency_;
  bool sensitivities_;
  const GradeScale* grades_;
  const PdCalibration* cal_;
  const PdCalibration* grade_cal_;  // grades on the calibrated PD when set
  std::string_view driving_cell_;   // the driving_pd cell and the row's end
};

class JsonWriter final : public ScoreWriter {
 public:
  JsonWriter(std::string origin, const ScoreSettings& settings, bool sensitivities, const GradeScale* grades,
             const PdCalibration* cal, DrivingPd driving, std::string_view cal_origin)
      : origin_(std::move(origin)),
        settings_(settings),
        sensitivities_(sensitivities),
        grades_(grades),
        cal_(cal),
        grade_cal_(graded_on(cal, driving)),
        driving_(driving),
        cal_origin_(cal_origin) {}
  void begin(std::string& out) const override {
    out += "{\n  \"run\": {";
    JsonFields(out).text("input", origin_).text("measure", to_string(settings_.measure));
    append_score_settings_json(out, settings_);
    if (cal_) {
      JsonFields(out, false)
          .text("pd_calibration", cal_origin_)
          .text("pd_calibration_method", to_string(cal_->method))
          .text("driving_pd", to_string(driving_));
    }
    out += "},\n  \"obligors\": [\n";
  }
  std::string_view separator() const override { return ",\n"; }
  void row(const ObligorRecord& rec, const ScoredObligor& s, std::string& out) const override {
    const auto& cols = score_columns();
    out += "    {";
    JsonFields fields(out);
    fields.text("id", rec.get(TextField::id))
        .text("name", rec.get(TextField::name))
        .text("status", to_string(s.status))
        .numbers(std::span(cols).subspan(kFirstNumericColumn, kNumericColumns), numeric_row(s).v);
    if (s.solution.residual >= 0.0) {
      fields.raw("iterations", std::to_string(s.solution.iterations)).number("residual", s.solution.residual);
    } else {
      fields.null("iterations").null("residual");
    }
    fields.text("message", s.message).text("currency", obligor_currency(rec, settings_));
    if (sensitivities_) {
      const bool usable = s.status == RowStatus::ok;
      append_sensitivities_json(
          out, usable ? sensitivities_of(s.resolved, s.solution) : MertonSensitivities{}, usable);
    }
    if (grades_)
      JsonFields(out, false)
          .text_or_null("grade", grade_label(grades_, s, grade_cal_), s.status == RowStatus::ok);
    if (cal_) append_calibrated_json(out, *cal_, s);
    out += "}";
  }
  void end(const ScoreSummary& sum, std::string& out) const override { append_score_summary_json(out, sum); }

 private:
  std::string origin_;
  ScoreSettings settings_;
  bool sensitivities_;
  const GradeScale* grades_;
  const PdCalibration* cal_;
  const PdCalibration* grade_cal_;  // grades on the calibrated PD when set
  DrivingPd driving_;
  std::string cal_origin_;
};

// Fixed-width text for people: 118 columns (with grades: a grade column, and the name 5 narrower).
class TableWriter final : public ScoreWriter {
 public:
  TableWriter(const std::string&, const ScoreSettings& settings, bool sensitivities, const GradeScale* grades,
              const PdCalibration* cal, DrivingPd driving, std::string_view)
      : settings_(settings),
        sensitivities_(sensitivities),
        grades_(grades),
        cal_(cal),
        grade_cal_(graded_on(cal, driving)) {}
  void begin(std::string& out) const override {
    char buf[256];
    std::snprintf(buf, sizeof buf, kHeader, "obligor", name_width(), "name", "cur", "asset", "asset",
                  "default", "DP/V", "DD", "PD", "horizon", "PD", "spread", grade_cell("grade").c_str(),
                  "status");
    out += buf;
    std::snprintf(buf, sizeof buf, kHeader, "", name_width(), "", "", "value", "vol %", "point", "", "", "%",
                  "years", "1 year %", "bp", grade_cell("").c_str(), "");
    out += buf;
    if (sensitivities_) append_sensitivities_table_header(out, 2);
    if (cal_) append_calibrated_table_header(out, *cal_);
    if (cal_) {
      if (grades_) {
        out += grade_cal_ ? "  grade on the calibrated one-year PD (driving PD: calibrated)\n"
                          : "  grade on the one-year model PD (driving PD: model)\n";
      } else {
        out += grade_cal_ ? "  driving PD: calibrated one-year\n" : "  driving PD: model\n";
      }
    }
    append_rule(out, kRuleWidth);
  }
  void row(const ObligorRecord& rec, const ScoredObligor& s, std::string& out) const override {
    char buf[320];
    const std::string id = fit(rec.get(TextField::id), 10);
    const std::string name = fit(rec.get(TextField::name), static_cast<std::size_t>(name_width()));
    const std::string currency = fit(std::string(obligor_currency(rec, settings_)), 3);
    if (s.status != RowStatus::ok) {
      std::snprintf(buf, sizeof buf, kHeader, id.c_str(), name_width(), name.c_str(), currency.c_str(), "-",
                    "-", "-", "-", "-", "-", "-", "-", "-", grade_cell("-").c_str(),
                    std::string(to_string(s.status)).c_str());
      out += buf;
      return;
    }
    const MertonMeasures& m = s.measures;
    const double horizon = s.resolved.inputs.horizon_years;
    std::snprintf(buf, sizeof buf, "%-10s %-*s %-3s %10s %6.2f %10s %6.3f %6.3f %10s %7s %10s %10s %s %s\n",
                  id.c_str(), name_width(), name.c_str(), currency.c_str(), amount(m.asset_value).c_str(),
                  100.0 * m.asset_vol_annual, amount(m.default_point).c_str(), m.leverage,
                  m.distance_to_default, small(100.0 * m.pd, 4).c_str(), fmt::format("{:g}", horizon).c_str(),
                  small(100.0 * pd_one_year(m.pd, horizon), 4).c_str(), small(m.spread_bp, 2).c_str(),
                  grade_cell(grade_label(grades_, s, grade_cal_)).c_str(), "ok");
    out += buf;
    if (sensitivities_) append_sensitivities_table(out, sensitivities_of(s.resolved, s.solution), 2);
    if (cal_) append_calibrated_table(out, *cal_, s);
  }
  void end(const ScoreSummary& sum, std::string& out) const override {
    append_rule(out, kRuleWidth);
    append_score_tally(out, "scored", sum);
    out += kTableCaution;
  }

 private:
  static constexpr const char* kHeader = "%-10s %-*s %-3s %10s %6s %10s %6s %6s %10s %7s %10s %10s %s %s\n";
  static constexpr std::size_t kRuleWidth = 118;
  ScoreSettings settings_;
  bool sensitivities_;
  int name_width() const { return grades_ ? 7 : 12; }
  // The grade column: empty without grades (one space then separates spread and status, as before).
  std::string grade_cell(std::string_view text) const {
    if (!grades_) return {};
    std::string cell(1, ' ');
    const std::string label = fit(std::string(text), 5);
    cell += label;
    cell.append(5 - label.size(), ' ');
    return cell;
  }
  const GradeScale* grades_;
  const PdCalibration* cal_;
  const PdCalibration* grade_cal_;  // grades on the calibrated PD when set
  static std::string fit(const std::string& s, std::size_t w) { return fit_text(s, w); }
  static std::string amount(double v) {
    char buf[64];
    if (std::fabs(v) < 1e7) {  // at most 10 characters either way
      std::snprintf(buf, sizeof buf, "%.2f", v);
    } else {
      std::snprintf(buf, sizeof buf, "%.4e", v);
    }
    return buf;
  }
  // Fixed decimals while readable, scientific for tiny values (e.g. far-tail PDs).
  static std::string small(double v, int decimals) {
    char buf[64];
    if (v == 0.0) {
      std::snprintf(buf, sizeof buf, "0");
    } else if (std::fabs(v) >= std::pow(10.0, -decimals + 1) && std::fabs(v) < 1e7) {
      std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
    } else {
      std::snprintf(buf, sizeof buf, "%.2e", v);
    }
    return buf;
  }
};

}  // namespace

std::unique_ptr<ScoreWriter> make_score_writer(OutputFormat format, const std::string& origin,
                                               const ScoreSettings& settings, bool sensitivities,
                                               const GradeScale* grades, const PdCalibration* pd_calibration,
                                               DrivingPd driving_pd, std::string_view pd_calibration_origin) {
  return make_format_writer<ScoreWriter, CsvWriter, JsonWriter, TableWriter>(
      format, origin, settings, sensitivities, grades, pd_calibration, driving_pd, pd_calibration_origin);
}

}  // namespace firmcall
