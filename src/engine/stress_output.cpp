// Writers of the stress and reverse-stress outputs. See src/stress_output.hpp.
#include "engine/stress_output.hpp"

#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>

#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"

namespace firmcall {

const std::vector<std::string_view>& stress_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "scenario,id,name,currency,status,shocked,equity_value,equity_value_stressed,equity_vol,"
      "equity_vol_stressed,default_point,default_point_stressed,rate,rate_stressed,horizon,"
      "horizon_stressed,asset_value,asset_value_stressed,asset_vol,asset_vol_stressed,"
      "distance_to_default,distance_to_default_stressed,distance_to_default_change,pd,"
      "pd_stressed,pd_change,spread_bp,spread_bp_stressed,spread_bp_change,ead,lgd,"
      "expected_loss,expected_loss_stressed,message");
  return cols;
}

const std::vector<std::string_view>& stress_summary_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "scenario,description,obligors,compared,shocked,failed,mean_pd,mean_pd_stressed,"
      "obligors_with_ead,ead_total,ead_weighted_pd,ead_weighted_pd_stressed,pd_threshold,"
      "above_threshold,above_threshold_stressed,newly_above_threshold,expected_loss,"
      "expected_loss_stressed,expected_loss_change,currency");
  return cols;
}

const std::vector<std::string_view>& stress_pd_calibration_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "pd_calibrated,pd_calibrated_lower,pd_calibrated_upper,pd_calibrated_extrapolated,"
      "pd_calibrated_stressed,pd_calibrated_stressed_lower,pd_calibrated_stressed_upper,"
      "pd_calibrated_stressed_extrapolated,pd_calibrated_change");
  return cols;
}

const std::vector<std::string_view>& stress_summary_calibration_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "mean_pd_calibrated,mean_pd_calibrated_stressed,ead_weighted_pd_calibrated,"
      "ead_weighted_pd_calibrated_stressed,above_threshold_calibrated,above_threshold_calibrated_stressed,"
      "newly_above_threshold_calibrated,expected_loss_calibrated,expected_loss_calibrated_stressed,"
      "expected_loss_calibrated_change");
  return cols;
}

const std::vector<std::string_view>& reverse_stress_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "id,name,currency,status,pd,target_pd,equity_fall,equity_fall_status,equity_value_at_target,"
      "pd_at_equity_fall,equity_vol_multiplier,equity_vol_multiplier_status,"
      "equity_vol_at_target,pd_at_equity_vol_multiplier,message");
  return cols;
}

namespace {

constexpr std::size_t kStressNumbers = 27;  // stress_columns() from equity_value to expected_loss_stressed
constexpr std::size_t kFirstNumber = 6;

// The numeric cells of one stress row in stress_columns() order; NaN where not available.
std::array<double, kStressNumbers> stress_numbers(const ScoredObligor& base, const StressedObligor& s) {
  std::array<double, kStressNumbers> v;
  v.fill(std::nan(""));
  const ResolvedObligor& r = base.resolved;
  if (!r.ok()) return v;
  const MertonInputs& b = r.inputs;
  const MertonInputs& x = s.inputs;
  const double inputs[] = {b.equity_value,  x.equity_value,  b.equity_vol_annual, x.equity_vol_annual,
                           b.default_point, x.default_point, b.risk_free_rate_cc, x.risk_free_rate_cc,
                           b.horizon_years, x.horizon_years};
  for (std::size_t i = 0; i < 10; ++i) v[i] = inputs[i];
  if (r.has_ead) v[23] = r.ead;
  v[24] = r.lgd;
  if (base.status != RowStatus::ok) return v;
  const MertonMeasures& m0 = base.measures;
  v[10] = m0.asset_value;
  v[12] = m0.asset_vol_annual;
  v[14] = m0.distance_to_default;
  v[17] = m0.pd;
  v[20] = m0.spread_bp;
  if (r.has_ead) v[25] = m0.pd * r.lgd * r.ead;
  if (s.status != StressStatus::ok) return v;
  const MertonMeasures& m1 = s.measures;
  v[11] = m1.asset_value;
  v[13] = m1.asset_vol_annual;
  v[15] = m1.distance_to_default;
  v[16] = m1.distance_to_default - m0.distance_to_default;
  v[18] = m1.pd;
  v[19] = m1.pd - m0.pd;
  v[21] = m1.spread_bp;
  v[22] = m1.spread_bp - m0.spread_bp;
  if (r.has_ead) v[26] = m1.pd * r.lgd * r.ead;
  return v;
}

// Table cells of this file: "-" for NaN.
std::string small(double v, int decimals, bool sign = false) {
  return table_number(v, decimals, sign);
}
std::string fixed(double v, int decimals, bool sign = false) {
  return fixed_number(v, decimals, sign);
}
std::string fit(const std::string& s, std::size_t w) {
  return fit_text(s, w);
}
std::string percent(double fraction) {
  return percent_text(fraction);
}

void append_count(std::string& out, std::size_t n) {
  out += std::to_string(n);
}

// The change of the calibrated PD of a row (NaN unless both exist).
double calibrated_change(const detail::RowCalibratedPd& c) {
  return c.stressed.pd - c.base.pd;
}

// Appends the calibrated PD fields of a row as JSON (stress_pd_calibration_columns()).
void append_row_calibrated_json(std::string& out, const detail::RowCalibratedPd& c) {
  const std::span<const std::string_view> cols(stress_pd_calibration_columns());
  append_calibrated_pd_json(out, c.base, cols.subspan(0, 4));
  append_calibrated_pd_json(out, c.stressed, cols.subspan(4, 4));
  JsonFields(out, false).number(cols[8], calibrated_change(c));
}

// Appends ",v,..." of the calibrated figures (stress_summary_calibration_columns()).
void append_summary_calibrated_csv(std::string& out, const ScenarioPdFigures& f) {
  append_csv_numbers(out, std::initializer_list<double>{f.mean_pd, f.mean_pd_stressed, f.ead_weighted_pd,
                                                        f.ead_weighted_pd_stressed});
  for (std::size_t n : {f.above_threshold, f.above_threshold_stressed, f.newly_above_threshold}) {
    out.push_back(',');
    append_count(out, n);
  }
  append_csv_numbers(out, std::initializer_list<double>{f.expected_loss, f.expected_loss_stressed,
                                                        f.expected_loss_stressed - f.expected_loss});
}

// Appends the calibrated figures of a scenario summary as JSON (stress_summary_calibration_columns()).
void append_summary_calibrated_json(std::string& out, const ScenarioPdFigures& f) {
  const auto& cols = stress_summary_calibration_columns();
  JsonFields(out, false)
      .number(cols[0], f.mean_pd)
      .number(cols[1], f.mean_pd_stressed)
      .number(cols[2], f.ead_weighted_pd)
      .number(cols[3], f.ead_weighted_pd_stressed)
      .count(cols[4], f.above_threshold)
      .count(cols[5], f.above_threshold_stressed)
      .count(cols[6], f.newly_above_threshold)
      .number(cols[7], f.expected_loss)
      .number(cols[8], f.expected_loss_stressed)
      .number(cols[9], f.expected_loss_stressed - f.expected_loss);
}

// ---------------------------------------------------------------- stress: CSV

class StressCsvWriter final : public detail::StressWriter {
 public:
  explicit StressCsvWriter(const detail::StressRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    append_csv_names(out, stress_columns());
    if (info_.sensitivities) {
      out.push_back(',');
      append_csv_names(out, sensitivity_columns());
    }
    if (info_.pd_calibration) {
      out.push_back(',');
      append_csv_names(out, stress_pd_calibration_columns());
    }
    out.push_back('\n');
  }
  void scenario_begin(const Scenario&, std::size_t, std::string&) const override {}
  void row(const Scenario& sc, const ObligorRecord& rec, const ScoredObligor& base, const StressedObligor& s,
           const detail::RowCalibratedPd& cal, bool, std::string& out) const override {
    append_csv_texts(out, {sc.name, rec.get(TextField::id), rec.get(TextField::name),
                           obligor_currency(rec, info_.settings)});
    out.append(to_string(s.status));
    out.push_back(',');
    out.append(s.shocked() ? "true" : "false");
    append_csv_numbers(out, stress_numbers(base, s));
    out.push_back(',');
    append_csv_text(out, s.message);
    if (info_.sensitivities) append_sensitivities_csv(out, s.sensitivities, s.status == StressStatus::ok);
    if (info_.pd_calibration) {
      append_calibrated_pd_csv(out, cal.base);
      append_calibrated_pd_csv(out, cal.stressed);
      append_csv_numbers(out, std::initializer_list<double>{calibrated_change(cal)});
    }
    out.push_back('\n');
  }
  void scenario_end(const Scenario&, const ScenarioSummary&, std::string&) const override {}
  void end(const StressSummary&, const std::vector<Scenario>&, std::string&) const override {}

 private:
  detail::StressRunInfo info_;
};

// ---------------------------------------------------------------- stress: JSON

// With `calibrated`, the figures on the calibrated PD follow the model's.
void append_summary_json(std::string& out, const ScenarioSummary& s, bool calibrated) {
  out += "{";
  JsonFields(out)
      .count("obligors", s.obligors)
      .count("compared", s.compared)
      .count("shocked", s.shocked)
      .count("failed", s.failed)
      .number("mean_pd", s.mean_pd)
      .number("mean_pd_stressed", s.mean_pd_stressed)
      .count("obligors_with_ead", s.with_ead)
      .number("ead_total", s.ead_total)
      .number("ead_weighted_pd", s.ead_weighted_pd)
      .number("ead_weighted_pd_stressed", s.ead_weighted_pd_stressed)
      .number("pd_threshold", s.pd_threshold)
      .count("above_threshold", s.above_threshold)
      .count("above_threshold_stressed", s.above_threshold_stressed)
      .count("newly_above_threshold", s.newly_above_threshold)
      .number("expected_loss", s.expected_loss)
      .number("expected_loss_stressed", s.expected_loss_stressed)
      .number("expected_loss_change", s.expected_loss_stressed - s.expected_loss);
  if (calibrated) append_summary_calibrated_json(out, s.calibrated);
  out += "}";
}

class StressJsonWriter final : public detail::StressWriter {
 public:
  explicit StressJsonWriter(const detail::StressRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    out += "{\n  \"run\": {";
    JsonFields(out)
        .text("book", info_.book_origin)
        .text("scenarios", info_.scenario_origin)
        .text("measure", to_string(info_.settings.measure))
        .number("default_point_weight",
                info_.settings.weight_override.value_or(info_.settings.default_point_weight))
        .number("default_lgd", info_.settings.default_lgd)
        .number("pd_threshold", info_.stress.pd_threshold)
        .text("hold", to_string(info_.stress.hold));
    if (info_.pd_calibration) {
      JsonFields(out, false)
          .text("pd_calibration", info_.pd_calibration_origin)
          .text("pd_calibration_method", to_string(info_.pd_calibration->method))
          .text("driving_pd", to_string(info_.driving_pd));
    }
    out += "},\n  \"scenarios\": [";
  }
  void scenario_begin(const Scenario& sc, std::size_t index, std::string& out) const override {
    out += index > 0 ? ",\n    {" : "\n    {";
    JsonFields(out).text("name", sc.name).text("description", sc.description);
    out += ",\n     \"obligors\": [\n";
  }
  void row(const Scenario&, const ObligorRecord& rec, const ScoredObligor& base, const StressedObligor& s,
           const detail::RowCalibratedPd& cal, bool first, std::string& out) const override {
    const auto& cols = stress_columns();
    if (!first) out += ",\n";
    out += "      {";
    JsonFields(out)
        .text("id", rec.get(TextField::id))
        .text("name", rec.get(TextField::name))
        .text("currency", obligor_currency(rec, info_.settings))
        .text("status", to_string(s.status))
        .boolean("shocked", s.shocked())
        .numbers(std::span(cols).subspan(kFirstNumber, kStressNumbers), stress_numbers(base, s))
        .text("message", s.message);
    if (info_.sensitivities) append_sensitivities_json(out, s.sensitivities, s.status == StressStatus::ok);
    if (info_.pd_calibration) append_row_calibrated_json(out, cal);
    out += "}";
  }
  void scenario_end(const Scenario&, const ScenarioSummary& sum, std::string& out) const override {
    out += "\n     ],\n     \"summary\": ";
    append_summary_json(out, sum, info_.pd_calibration != nullptr);
    out += "}";
  }
  void end(const StressSummary& sum, const std::vector<Scenario>&, std::string& out) const override {
    open_json_summary(out, sum.obligors, sum.base_ok, sum.base_invalid, sum.base_not_converged)
        .count("rows", sum.rows)
        .count("failed_rows", sum.failed_rows)
        .text("currency", sum.currency);
    out += "}\n}\n";
  }

 private:
  detail::StressRunInfo info_;
};

// ---------------------------------------------------------------- stress: table

// Obligor rows: 120 columns at most.
constexpr const char* kRowFormat = "%-10s %-12s %6s %6s %6s %9s %9s %9s %9s %9s %9s  %s\n";

class StressTableWriter final : public detail::StressWriter {
 public:
  explicit StressTableWriter(const detail::StressRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    out += "Stress run: book " + info_.book_origin + " (" + std::to_string(info_.obligors) + " obligors), " +
           std::to_string(info_.scenarios) + " scenarios from " + info_.scenario_origin + "\n";
    out += "Measure " + std::string(to_string(info_.settings.measure)) + "; PD threshold " +
           percent(info_.stress.pd_threshold) +
           "; expected loss = PD x LGD x EAD over obligors with ead (LGD " +
           percent(info_.settings.default_lgd) + " where none is given)\n";
    out +=
        info_.stress.hold == StressHold::asset_vol
            ? "Hold: asset-vol (asset volatility held, times any volatility multiplier; V re-solved; equity "
              "volatility implied)\n"
            : "Hold: equity-vol (shocked equity value and volatility re-solved for V and asset volatility)\n";
    if (const PdCalibration* cal = info_.pd_calibration) {
      const std::string file = info_.pd_calibration_origin + ", " + std::string(to_string(cal->method));
      out += info_.driving_pd == DrivingPd::calibrated
                 ? "PD: calibrated one-year (" + file +
                       ") drives the summaries and the PD grid; PD columns: model\n"
                 : "PD: model drives the summaries and the PD grid; calibrated one-year PDs (" + file + ")\n";
      out += "Under each obligor: calibrated one-year PD of base -> stressed DD (" +
             std::to_string(cal->observations) + " obligor-years), [" + fmt_level(cal->confidence_level) +
             " interval] of stressed DD\n";
    }
  }
  bool wants_rows(const Scenario& sc) const override { return sc.grid_row < 0; }
  void scenario_begin(const Scenario& sc, std::size_t index, std::string& out) const override {
    if (!wants_rows(sc)) return;
    out +=
        "\nScenario " + std::to_string(index + 1) + " of " + std::to_string(info_.scenarios) + ": " + sc.name;
    if (!sc.description.empty()) out += " - " + sc.description;
    out += "\n";
    char buf[256];
    std::snprintf(buf, sizeof buf, kRowFormat, "obligor", "name", "DD", "DD", "DD", "PD %", "PD %", "PD",
                  "spread", "spread", "spread", "status");
    out += buf;
    std::snprintf(buf, sizeof buf, kRowFormat, "", "", "base", "stress", "change", "base", "stressed",
                  "change pp", "base bp", "stress bp", "change bp", "");
    out += buf;
    if (info_.sensitivities) append_sensitivities_table_header(out, 2);
    out += std::string(118, '-') + "\n";
  }
  void row(const Scenario&, const ObligorRecord& rec, const ScoredObligor& base, const StressedObligor& s,
           const detail::RowCalibratedPd& cal, bool, std::string& out) const override {
    char buf[320];
    const std::string id = fit(rec.get(TextField::id), 10);
    const std::string name = fit(rec.get(TextField::name), 12);
    const bool b = base.status == RowStatus::ok;
    const bool x = s.status == StressStatus::ok;
    const MertonMeasures& m0 = base.measures;
    const MertonMeasures& m1 = s.measures;
    const double nan = std::nan("");
    const std::string status = x && !s.shocked() ? "no shock" : std::string(to_string(s.status));
    std::snprintf(buf, sizeof buf, kRowFormat, id.c_str(), name.c_str(),
                  fixed(b ? m0.distance_to_default : nan, 2).c_str(),
                  fixed(x ? m1.distance_to_default : nan, 2).c_str(),
                  fixed(x ? m1.distance_to_default - m0.distance_to_default : nan, 2, true).c_str(),
                  small(b ? 100.0 * m0.pd : nan, 4).c_str(), small(x ? 100.0 * m1.pd : nan, 4).c_str(),
                  small(x ? 100.0 * (m1.pd - m0.pd) : nan, 4, true).c_str(),
                  small(b ? m0.spread_bp : nan, 2).c_str(), small(x ? m1.spread_bp : nan, 2).c_str(),
                  small(x ? m1.spread_bp - m0.spread_bp : nan, 2, true).c_str(), status.c_str());
    out += buf;
    if (info_.sensitivities && x) append_sensitivities_table(out, s.sensitivities, 2);
    if (info_.pd_calibration && b) calibrated_line(cal, out);
  }
  void scenario_end(const Scenario& sc, const ScenarioSummary& summary, std::string& out) const override {
    if (!wants_rows(sc)) return;
    out += std::string(118, '-') + "\n";
    char buf[512];
    std::snprintf(buf, sizeof buf, "  obligors %zu: %zu compared, %zu hit by a shock, %zu failed\n",
                  summary.obligors, summary.compared, summary.shocked, summary.failed);
    out += buf;
    if (info_.pd_calibration) {
      out += info_.driving_pd == DrivingPd::calibrated
                 ? "  on the calibrated one-year PD (expected loss: 1 - (1 - PD1)^T over each horizon)\n"
                 : "  on the model PD\n";
    }
    const ScenarioPdFigures s = driving_figures(summary, info_.driving_pd);
    const std::size_t with_ead = summary.with_ead;
    const double pd_threshold = summary.pd_threshold;
    std::snprintf(buf, sizeof buf, "  mean PD          %s%% -> %s%%\n", small(100.0 * s.mean_pd, 4).c_str(),
                  small(100.0 * s.mean_pd_stressed, 4).c_str());
    out += buf;
    if (with_ead > 0) {
      std::snprintf(buf, sizeof buf, "  EAD-weighted PD  %s%% -> %s%%   (%zu obligors with ead, total %s)\n",
                    small(100.0 * s.ead_weighted_pd, 4).c_str(),
                    small(100.0 * s.ead_weighted_pd_stressed, 4).c_str(), with_ead,
                    small(summary.ead_total, 2).c_str());
    } else {
      std::snprintf(buf, sizeof buf, "  EAD-weighted PD  - (no obligor gives ead)\n");
    }
    out += buf;
    std::snprintf(buf, sizeof buf, "  PD above %s      %zu -> %zu   (%zu newly above)\n",
                  percent(pd_threshold).c_str(), s.above_threshold, s.above_threshold_stressed,
                  s.newly_above_threshold);
    out += buf;
    if (with_ead > 0) {
      std::snprintf(buf, sizeof buf, "  expected loss    %s -> %s   (change %s)\n",
                    small(s.expected_loss, 4).c_str(), small(s.expected_loss_stressed, 4).c_str(),
                    small(s.expected_loss_stressed - s.expected_loss, 4, true).c_str());
      out += buf;
    }
  }
  void end(const StressSummary& sum, const std::vector<Scenario>& scenarios,
           std::string& out) const override {
    if (!sum.grid.empty()) grid(sum, out);
    overview(sum, scenarios, out);
    out += "rows " + std::to_string(sum.rows) + " (" + std::to_string(sum.obligors) + " obligors x " +
           std::to_string(sum.scenarios.size()) + " scenarios)";
    if (sum.failed_rows > 0) out += "; " + std::to_string(sum.failed_rows) + " rows failed (reasons below)";
    out += "\n";
    append_table_problems(out, sum.problems, sum.problems_not_listed);
    out += kTableCaution;
  }

 private:
  void grid(const StressSummary& sum, std::string& out) const {
    const PdGrid& g = sum.grid;
    const std::size_t rows = g.equity_changes.size();
    const std::size_t cols = g.vol_multipliers.size();
    const bool calibrated = info_.driving_pd == DrivingPd::calibrated;
    out += std::string("\nPD grid: ") +
           (calibrated ? "calibrated one-year PD % of the stressed DD" : "PD %") +
           " after an equity change (rows) and an equity-volatility multiplier (columns)\n";
    char buf[128];
    for (std::size_t i = 0; i < g.ids.size(); ++i) {
      out += '\n';
      out += fit(g.ids[i], 12);
      out += "  ";
      out += fit(g.names[i], 30);
      if (!std::isfinite(g.base_pd[i])) {
        out += "  (not scored; see below)\n";
        continue;
      }
      out += std::string(calibrated ? "  calibrated PD as it stands " : "  PD as it stands ") +
             small(100.0 * g.base_pd[i], 4) + "%\n";
      std::snprintf(buf, sizeof buf, "  %8s", "equity");
      out += buf;
      for (std::size_t c = 0; c < cols; ++c) {
        char head[32];
        std::snprintf(head, sizeof head, "x%g", g.vol_multipliers[c]);
        std::snprintf(buf, sizeof buf, " %10s", head);
        out += buf;
      }
      out += "\n";
      for (std::size_t r = 0; r < rows; ++r) {
        char head[32];
        std::snprintf(head, sizeof head, "%+g%%", 100.0 * g.equity_changes[r]);
        std::snprintf(buf, sizeof buf, "  %8s", head);
        out += buf;
        for (std::size_t c = 0; c < cols; ++c) {
          std::snprintf(buf, sizeof buf, " %10s", small(100.0 * g.pd[(i * rows + r) * cols + c], 4).c_str());
          out += buf;
        }
        out += "\n";
      }
    }
  }

  void overview(const StressSummary& sum, const std::vector<Scenario>& scenarios, std::string& out) const {
    const std::string thr = percent(info_.stress.pd_threshold);
    out += "\nScenario summary (PD threshold " + thr +
           "; expected loss over obligors with ead, each over its horizon" +
           (sum.currency.empty() ? std::string() : "; EAD and expected loss in " + sum.currency) +
           (info_.pd_calibration
                ? info_.driving_pd == DrivingPd::calibrated ? "; PD: calibrated one-year" : "; PD: model"
                : "") +
           ")\n";
    char buf[320];
    const char* fmt = "%-24s %8s  %9s %9s  %9s %9s  %5s %5s  %11s %11s\n";
    std::snprintf(buf, sizeof buf, "%-24s %8s  %19s  %19s  %11s  %23s\n", "scenario", "compared", "mean PD %",
                  "EAD-weighted PD %", ("PD > " + thr).c_str(), "expected loss");
    out += buf;
    std::snprintf(buf, sizeof buf, fmt, "", "", "base", "stressed", "base", "stressed", "base", "str.",
                  "base", "stressed");
    out += buf;
    out += std::string(110, '-') + "\n";
    for (std::size_t i = 0; i < sum.scenarios.size(); ++i) {
      const ScenarioSummary& summary = sum.scenarios[i];
      const ScenarioPdFigures s = driving_figures(summary, info_.driving_pd);
      const bool ead = summary.with_ead > 0;
      std::snprintf(
          buf, sizeof buf, fmt, fit(scenarios[i].name, 24).c_str(), std::to_string(summary.compared).c_str(),
          small(100.0 * s.mean_pd, 4).c_str(), small(100.0 * s.mean_pd_stressed, 4).c_str(),
          ead ? small(100.0 * s.ead_weighted_pd, 4).c_str() : "-",
          ead ? small(100.0 * s.ead_weighted_pd_stressed, 4).c_str() : "-",
          std::to_string(s.above_threshold).c_str(), std::to_string(s.above_threshold_stressed).c_str(),
          ead ? small(s.expected_loss, 4).c_str() : "-",
          ead ? small(s.expected_loss_stressed, 4).c_str() : "-");
      out += buf;
    }
    out += std::string(110, '-') + "\n";
  }

  // "  calibrated one-year PD a% -> b% (+c pp), stressed [l%, u%]", flagged when extrapolated.
  static void calibrated_line(const detail::RowCalibratedPd& c, std::string& out) {
    out += "  calibrated one-year PD " + small(100.0 * c.base.pd, 4) + "% -> ";
    if (!std::isfinite(c.stressed.pd)) {
      out += "-\n";
      return;
    }
    out += small(100.0 * c.stressed.pd, 4) + "% (" + small(100.0 * calibrated_change(c), 4, true) +
           " pp), stressed [" + small(100.0 * c.stressed.lower, 4) + "%, " +
           small(100.0 * c.stressed.upper, 4) + "%]";
    if (c.stressed.extrapolated) out += ", DD outside the sample";
    out += "\n";
  }
  static std::string fmt_level(double level) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%g%%", 100.0 * level);
    return buf;
  }

  detail::StressRunInfo info_;
};

// ---------------------------------------------------------------- reverse stress

// Numeric cells after `status`: pd, target_pd, then per search (shock, value at target, PD at shock).
struct ReverseCells {
  double pd, target, fall, equity_at, pd_fall, mult, vol_at, pd_mult;
};

ReverseCells reverse_cells(const ScoredObligor& base, const ReverseStressRow& r, double target) {
  const double nan = std::nan("");
  ReverseCells c{nan, target, nan, nan, nan, nan, nan, nan};
  if (base.status != RowStatus::ok) return c;
  c.pd = r.pd;
  const MertonInputs& in = base.resolved.inputs;
  const auto usable = [](ReverseStatus s) {
    return s == ReverseStatus::found || s == ReverseStatus::already_reached;
  };
  if (usable(r.equity_fall.status)) {
    c.fall = r.equity_fall.shock;
    c.equity_at = in.equity_value * (1.0 + -r.equity_fall.shock);
    c.pd_fall = r.equity_fall.pd_at_shock;
  }
  if (usable(r.vol_multiplier.status)) {
    c.mult = r.vol_multiplier.shock;
    c.vol_at = r.vol_multiplier.equity_vol_at_shock;
    c.pd_mult = r.vol_multiplier.pd_at_shock;
  }
  return c;
}

std::string_view search_status(const ScoredObligor& base, const ReverseResult& r) {
  return base.status == RowStatus::ok ? to_string(r.status) : std::string_view();
}

class ReverseCsvWriter final : public detail::ReverseStressWriter {
 public:
  ReverseCsvWriter(const detail::StressRunInfo& info, double target, const ReverseStressOptions&)
      : default_currency_(info.settings.currency.view()), target_(target) {}
  void begin(std::string& out) const override {
    append_csv_names(out, reverse_stress_columns());
    out.push_back('\n');
  }
  void row(const ObligorRecord& rec, const ScoredObligor& base, const ReverseStressRow& r, bool,
           std::string& out) const override {
    const ReverseCells c = reverse_cells(base, r, target_);
    const std::string& own = rec.get(TextField::currency);
    append_csv_texts(out, {rec.get(TextField::id), rec.get(TextField::name),
                           own.empty() ? std::string_view(default_currency_) : std::string_view(own)});
    out.append(to_string(r.status));
    append_csv_numbers(out, std::initializer_list<double>{c.pd, c.target, c.fall});
    out.push_back(',');
    out.append(search_status(base, r.equity_fall));
    append_csv_numbers(out, std::initializer_list<double>{c.equity_at, c.pd_fall, c.mult});
    out.push_back(',');
    out.append(search_status(base, r.vol_multiplier));
    append_csv_numbers(out, std::initializer_list<double>{c.vol_at, c.pd_mult});
    out.push_back(',');
    append_csv_text(out, r.message);
    out.push_back('\n');
  }
  void end(const ReverseStressSummary&, std::string&) const override {}

 private:
  std::string default_currency_;
  double target_;
};

class ReverseJsonWriter final : public detail::ReverseStressWriter {
 public:
  ReverseJsonWriter(const detail::StressRunInfo& info, double target, const ReverseStressOptions& options)
      : info_(info), target_(target), options_(options) {}
  void begin(std::string& out) const override {
    out += "{\n  \"run\": {";
    JsonFields(out)
        .text("book", info_.book_origin)
        .text("measure", to_string(info_.settings.measure))
        .text("hold", to_string(options_.hold))
        .number("target_pd", target_)
        .number("max_equity_fall", options_.max_equity_fall)
        .number("max_equity_vol_multiplier", options_.max_vol_multiplier);
    out += "},\n  \"obligors\": [\n";
  }
  void row(const ObligorRecord& rec, const ScoredObligor& base, const ReverseStressRow& r, bool first,
           std::string& out) const override {
    const ReverseCells c = reverse_cells(base, r, target_);
    const bool ok = base.status == RowStatus::ok;
    if (!first) out += ",\n";
    out += "    {";
    // A search status exists only when the obligor is ok as it stands.
    JsonFields(out)
        .text("id", rec.get(TextField::id))
        .text("name", rec.get(TextField::name))
        .text("currency", obligor_currency(rec, info_.settings))
        .text("status", to_string(r.status))
        .number("pd", c.pd)
        .number("target_pd", c.target)
        .number("equity_fall", c.fall)
        .text_or_null("equity_fall_status", to_string(r.equity_fall.status), ok)
        .number("equity_value_at_target", c.equity_at)
        .number("pd_at_equity_fall", c.pd_fall)
        .number("equity_vol_multiplier", c.mult)
        .text_or_null("equity_vol_multiplier_status", to_string(r.vol_multiplier.status), ok)
        .number("equity_vol_at_target", c.vol_at)
        .number("pd_at_equity_vol_multiplier", c.pd_mult)
        .text("message", r.message);
    out += "}";
  }
  void end(const ReverseStressSummary& sum, std::string& out) const override {
    open_json_summary(out, sum.obligors, sum.base_ok, sum.base_invalid, sum.base_not_converged)
        .count("search_failed", sum.search_failed);
    out += "}\n}\n";
  }

 private:
  detail::StressRunInfo info_;
  double target_;
  ReverseStressOptions options_;
};

constexpr const char* kReverseFormat = "%-10s %-14s %9s  %8s %12s %-15s  %8s %11s %-15s\n";

class ReverseTableWriter final : public detail::ReverseStressWriter {
 public:
  ReverseTableWriter(const detail::StressRunInfo& info, double target, const ReverseStressOptions& options)
      : info_(info), target_(target), options_(options) {}
  void begin(std::string& out) const override {
    char buf[320];
    const bool asset = options_.hold == StressHold::asset_vol;
    std::snprintf(buf, sizeof buf,
                  "Reverse stress: the shock that moves each obligor's PD to %s, other inputs held\n"
                  "(equity falls searched up to %s, %s-volatility multipliers up to x%g; book %s)\n",
                  percent(target_).c_str(), percent(options_.max_equity_fall).c_str(),
                  asset ? "asset" : "equity", options_.max_vol_multiplier, info_.book_origin.c_str());
    out += buf;
    out +=
        asset
            ? "Hold: asset-vol (asset volatility held, V re-solved, equity volatility as the model implies)\n"
            : "Hold: equity-vol (equity volatility held, V and asset volatility re-solved)\n";
    std::snprintf(buf, sizeof buf, kReverseFormat, "obligor", "name", "PD as it", "equity", "equity at", "",
                  asset ? "asset" : "equity", "equity vol", "");
    out += buf;
    std::snprintf(buf, sizeof buf, kReverseFormat, "", "", "stands %", "fall %", "target", "search", "vol x",
                  "at target %", "search");
    out += buf;
    out += std::string(111, '-') + "\n";
  }
  void row(const ObligorRecord& rec, const ScoredObligor& base, const ReverseStressRow& r, bool,
           std::string& out) const override {
    const ReverseCells c = reverse_cells(base, r, target_);
    char buf[320];
    const std::string id = fit(rec.get(TextField::id), 10);
    const std::string name = fit(rec.get(TextField::name), 14);
    if (base.status != RowStatus::ok) {
      std::snprintf(buf, sizeof buf, kReverseFormat, id.c_str(), name.c_str(), "-", "-", "-",
                    std::string(to_string(r.status)).c_str(), "-", "-", "");
      out += buf;
      return;
    }
    std::snprintf(buf, sizeof buf, kReverseFormat, id.c_str(), name.c_str(), small(100.0 * c.pd, 4).c_str(),
                  fixed(100.0 * c.fall, 2).c_str(), small(c.equity_at, 2).c_str(),
                  std::string(to_string(r.equity_fall.status)).c_str(), fixed(c.mult, 3).c_str(),
                  fixed(100.0 * c.vol_at, 2).c_str(),
                  std::string(to_string(r.vol_multiplier.status)).c_str());
    out += buf;
  }
  void end(const ReverseStressSummary& sum, std::string& out) const override {
    out += std::string(111, '-') + "\n";
    out += "scored " + std::to_string(sum.base_ok) + " of " + std::to_string(sum.obligors) + " obligors";
    if (sum.failed() > 0) {
      out += "; " + std::to_string(sum.base_invalid) + " invalid input, " +
             std::to_string(sum.base_not_converged) + " not converged, " + std::to_string(sum.search_failed) +
             " searches failed (reasons below)";
    }
    out += "\n";
    append_table_problems(out, sum.problems, sum.problems_not_listed);
    out += kTableCaution;
  }

 private:
  detail::StressRunInfo info_;
  double target_;
  ReverseStressOptions options_;
};

}  // namespace

std::string scenario_summary_csv(const StressSummary& summary, const std::vector<Scenario>& scenarios) {
  std::string out;
  append_csv_names(out, stress_summary_columns());
  if (summary.calibrated) {
    out.push_back(',');
    append_csv_names(out, stress_summary_calibration_columns());
  }
  out.push_back('\n');
  for (std::size_t i = 0; i < summary.scenarios.size() && i < scenarios.size(); ++i) {
    const ScenarioSummary& s = summary.scenarios[i];
    append_csv_text(out, scenarios[i].name);
    out.push_back(',');
    append_csv_text(out, scenarios[i].description);
    for (std::size_t n : {s.obligors, s.compared, s.shocked, s.failed}) {
      out.push_back(',');
      append_count(out, n);
    }
    append_csv_numbers(out, std::initializer_list<double>{s.mean_pd, s.mean_pd_stressed});
    out.push_back(',');
    append_count(out, s.with_ead);
    append_csv_numbers(out, std::initializer_list<double>{s.ead_total, s.ead_weighted_pd,
                                                          s.ead_weighted_pd_stressed, s.pd_threshold});
    for (std::size_t n : {s.above_threshold, s.above_threshold_stressed, s.newly_above_threshold}) {
      out.push_back(',');
      append_count(out, n);
    }
    append_csv_numbers(out, std::initializer_list<double>{s.expected_loss, s.expected_loss_stressed,
                                                          s.expected_loss_stressed - s.expected_loss});
    out.push_back(',');
    append_csv_text(out, summary.currency);
    if (summary.calibrated) append_summary_calibrated_csv(out, s.calibrated);
    out.push_back('\n');
  }
  return out;
}

namespace detail {

std::unique_ptr<StressWriter> make_stress_writer(OutputFormat format, const StressRunInfo& info) {
  return make_format_writer<StressWriter, StressCsvWriter, StressJsonWriter, StressTableWriter>(format, info);
}

std::unique_ptr<ReverseStressWriter> make_reverse_stress_writer(OutputFormat format,
                                                                const StressRunInfo& info, double target_pd,
                                                                const ReverseStressOptions& options) {
  return make_format_writer<ReverseStressWriter, ReverseCsvWriter, ReverseJsonWriter, ReverseTableWriter>(
      format, info, target_pd, options);
}

}  // namespace detail
}  // namespace firmcall
