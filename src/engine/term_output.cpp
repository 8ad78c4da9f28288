// Writers of PD term structures. See src/term_output.hpp.
#include "engine/term_output.hpp"

#include <cmath>
#include <cstdio>

#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"

namespace firmcall::detail {

namespace {

constexpr std::size_t kFirstNumber = 5;  // index of "calibration_horizon" in term_columns()
constexpr std::size_t kNumbers = 15;     // "calibration_horizon" .. "residual"

}  // namespace

std::string_view row_status_of(TermStatus status) noexcept {
  // ok and invalid_input read the same in both vocabularies; every solver failure is not_converged.
  if (status == TermStatus::ok || status == TermStatus::invalid_input) return to_string(status);
  return "not_converged";
}

std::vector<double> term_numbers(const TermScoredObligor& s, const TermBookOptions& run, std::size_t model,
                                 std::size_t horizon) {
  const double nan = std::nan("");
  std::vector<double> v(kNumbers, nan);
  const TermPoint& p = s.points[model * s.horizons.size() + horizon];
  const bool resolved = s.resolved.ok();
  const bool first_passage = run.models[model] == TermModel::first_passage;
  const MertonInputs& in = s.resolved.inputs;
  if (resolved) {
    v[0] = run.calibration == Calibration::once ? in.horizon_years : p.horizon_years;
    v[1] = in.equity_value;
    v[2] = in.default_point;
    if (first_passage) {
      v[3] = run.barrier.default_point_ratio * in.default_point *
             std::exp(run.barrier.growth_rate_cc * p.horizon_years);
      v[12] = s.resolved.lgd;
    }
  }
  if (p.ok()) {
    v[4] = p.asset_value;
    v[5] = p.asset_vol_annual;
    v[6] = p.distance_to_default;
    v[7] = p.pd;
    v[8] = p.pd_annualised;
    v[9] = p.pd_forward;
    v[10] = p.pd_risk_neutral;
    v[11] = p.spread_bp;
  }
  if (p.iterations >= 0) {
    v[13] = p.iterations;
    v[14] = p.residual;
  }
  return v;
}

void append_horizon_block_head(std::string& out, const std::vector<double>& horizons, std::size_t c0,
                               std::size_t c1) {
  if (horizons.size() <= kTermPerLine) return;
  std::string h = left_cell("  horizon (years)", kTermLabelWidth);
  for (std::size_t i = c0; i < c1; ++i) h += right_cell(general_number(horizons[i]), kTermCellWidth);
  out += h + "\n";
}

std::string term_model_label(TermModel model) {
  return "  " + left_cell(to_string(model), 16);
}

TermRequest term_request(const TermBookOptions& run, std::size_t model, double lgd,
                         const ScoreSettings& settings) {
  TermRequest req;
  req.model = run.models[model];
  req.calibration = run.calibration;
  req.barrier = run.barrier;
  req.lgd = lgd;
  req.solver = settings.solver;
  return req;
}

bool has_first_passage(const TermBookOptions& run) {
  for (TermModel m : run.models) {
    if (m == TermModel::first_passage) return true;
  }
  return false;
}

void append_term_caution(std::string& out, const TermBookOptions& run) {
  if (has_first_passage(run)) {
    out +=
        "Model estimates under the Merton and Black-Cox assumptions; not a credit decision on their own.\n";
  } else {
    out += kTableCaution;
  }
}

std::string term_rule(const TermBookOptions& run) {
  const std::size_t cells = run.horizons.empty() ? 1 : std::min(run.horizons.size(), kTermPerLine);
  return std::string(kTermLabelWidth + cells * kTermCellWidth, '-');
}

void append_term_run_fields(std::string& out, const TermBookOptions& run) {
  out += ", \"models\": [";
  for (std::size_t m = 0; m < run.models.size(); ++m) {
    if (m > 0) out += ", ";
    append_json_string(out, to_string(run.models[m]));
  }
  out += "]";
  JsonFields fields(out, false);
  if (run.horizons.empty()) {
    fields.null("horizons");
  } else {
    fields.number_list("horizons", run.horizons);
  }
  fields.text("calibration", to_string(run.calibration))
      .number("barrier_ratio", run.barrier.default_point_ratio)
      .number("barrier_growth", run.barrier.growth_rate_cc);
}

namespace {

class CsvTermWriter final : public TermWriter {
 public:
  explicit CsvTermWriter(const TermRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    append_csv_names(out, term_columns());
    out.push_back('\n');
  }
  void obligor(const ObligorRecord& rec, const TermScoredObligor& s, bool, std::string& out) const override {
    const std::size_t nh = s.horizons.size();
    for (std::size_t m = 0; m < info_.run.models.size(); ++m) {
      for (std::size_t i = 0; i < nh; ++i) {
        const TermPoint& p = s.points[m * nh + i];
        append_csv_texts(out, {rec.get(TextField::id), rec.get(TextField::name)});
        out.append(to_string(info_.run.models[m]));
        out.push_back(',');
        append_number(out, s.horizons[i]);
        out.push_back(',');
        out.append(row_status_of(p.status));
        append_csv_numbers(out, term_numbers(s, info_.run, m, i));
        out.push_back(',');
        append_csv_text(out, s.messages[m * nh + i]);
        out.push_back('\n');
      }
    }
  }
  void end(const ScoreSummary&, std::string&) const override {}

 private:
  TermRunInfo info_;
};

class JsonTermWriter final : public TermWriter {
 public:
  explicit JsonTermWriter(const TermRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    const ScoreSettings& st = info_.settings;
    const TermBookOptions& run = info_.run;
    out += "{\n  \"run\": {";
    JsonFields(out).text("input", info_.origin).text("measure", to_string(st.measure));
    append_term_run_fields(out, run);
    append_score_settings_json(out, st);
    out += "},\n  \"rows\": [\n";
  }
  void obligor(const ObligorRecord& rec, const TermScoredObligor& s, bool first,
               std::string& out) const override {
    const auto& cols = term_columns();
    const std::size_t nh = s.horizons.size();
    for (std::size_t m = 0; m < info_.run.models.size(); ++m) {
      for (std::size_t i = 0; i < nh; ++i) {
        if (!(first && m == 0 && i == 0)) out += ",\n";
        const TermPoint& p = s.points[m * nh + i];
        out += "    {";
        JsonFields(out)
            .text("id", rec.get(TextField::id))
            .text("name", rec.get(TextField::name))
            .text("model", to_string(info_.run.models[m]))
            .number("horizon", s.horizons[i])
            .text("status", row_status_of(p.status))
            .numbers(std::span(cols).subspan(kFirstNumber, kNumbers), term_numbers(s, info_.run, m, i))
            .text("message", s.messages[m * nh + i]);
        out += "}";
      }
    }
  }
  void end(const ScoreSummary& sum, std::string& out) const override { append_score_summary_json(out, sum); }

 private:
  TermRunInfo info_;
};

// A compact curve per obligor: cumulative PD, forward PD (both in percent) and spread by horizon.
class TableTermWriter final : public TermWriter {
 public:
  explicit TableTermWriter(const TermRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    const TermBookOptions& run = info_.run;
    const bool fp = has_first_passage(run);
    char buf[320];
    out += "PD term structure: " + info_.origin + ", " + std::string(to_string(info_.settings.measure)) +
           " measure\n";
    out +=
        run.calibration == Calibration::once
            ? "Asset value and volatility solved once at each obligor's horizon, other horizons projected\n"
            : "Asset value and volatility solved again at every horizon\n";
    if (fp) {
      std::snprintf(buf, sizeof buf,
                    "First passage: barrier %g x default point, growing %g%% a year; spread with the "
                    "obligor's LGD\n",
                    run.barrier.default_point_ratio, 100.0 * run.barrier.growth_rate_cc);
      out += buf;
    }
    out += "\n";
    std::string head;
    if (run.horizons.empty()) {
      head = left_cell("obligor / model", kTermLabelWidth) + right_cell("own T", kTermCellWidth);
    } else if (run.horizons.size() <= kTermPerLine) {
      head = left_cell("horizon (years)", kTermLabelWidth);
      for (double t : run.horizons) head += right_cell(general_number(t), kTermCellWidth);
    } else {
      head = left_cell("obligor / model", kTermLabelWidth) + "  (horizons in years on each block)";
    }
    out += head + "\n" + rule() + "\n";
  }
  void obligor(const ObligorRecord& rec, const TermScoredObligor& s, bool, std::string& out) const override {
    const TermBookOptions& run = info_.run;
    const std::size_t nh = s.horizons.size();
    std::string title = rec.get(TextField::id);
    if (!rec.get(TextField::name).empty()) title += "  " + fit_text(rec.get(TextField::name), 40);
    if (run.horizons.empty() && s.resolved.ok())
      title += "  (T = " + general_number(s.horizons[0]) + " years)";
    out += title + "\n";
    for (std::size_t c0 = 0; c0 < nh; c0 += kTermPerLine) {
      const std::size_t c1 = std::min(nh, c0 + kTermPerLine);
      append_horizon_block_head(out, s.horizons, c0, c1);
      for (std::size_t m = 0; m < run.models.size(); ++m) {
        const TermPoint* pts = s.points.data() + m * nh;
        const std::string model = term_model_label(run.models[m]);
        bool any_ok = false;
        for (std::size_t i = 0; i < nh; ++i) any_ok = any_ok || pts[i].ok();
        if (!any_ok) {
          if (c0 == 0) out += model + std::string(row_status_of(pts[0].status)) + " (reason below)\n";
          continue;
        }
        const struct {
          const char* label;
          double TermPoint::*field;
          double scale;
          int decimals;
        } lines[] = {{"cumulative PD %", &TermPoint::pd, 100.0, 4},
                     {"forward PD %", &TermPoint::pd_forward, 100.0, 4},
                     {"spread bp", &TermPoint::spread_bp, 1.0, 2}};
        for (std::size_t l = 0; l < 3; ++l) {
          std::string line =
              (l == 0 ? model : std::string(18, ' ')) + left_cell(lines[l].label, kTermLabelWidth - 18);
          for (std::size_t i = c0; i < c1; ++i) {
            const double v = pts[i].ok() ? lines[l].scale * (pts[i].*lines[l].field) : std::nan("");
            line += right_cell(table_number(v, lines[l].decimals), kTermCellWidth);
          }
          out += line + "\n";
        }
      }
    }
  }
  void end(const ScoreSummary& sum, std::string& out) const override {
    out += term_rule(info_.run) + "\n";
    append_score_tally(out, "term structures of", sum, 116);
    append_term_caution(out, info_.run);
  }

 private:
  TermRunInfo info_;
  std::string rule() const { return term_rule(info_.run); }
};

}  // namespace

std::unique_ptr<TermWriter> make_term_writer(OutputFormat format, const TermRunInfo& info) {
  return make_format_writer<TermWriter, CsvTermWriter, JsonTermWriter, TableTermWriter>(format, info);
}

}  // namespace firmcall::detail
