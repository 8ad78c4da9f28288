// Writers of PD term structures. See src/term_output.hpp.
#include "engine/term_output.hpp"

#include <cmath>
#include <cstdio>
#include <thread>

#include "firmcall/engine/score_output.hpp"

namespace firmcall::detail {

namespace {

constexpr std::size_t kFirstNumber = 5;  // index of "calibration_horizon" in term_columns()
constexpr std::size_t kNumbers = 15;     // "calibration_horizon" .. "residual"
constexpr std::size_t kPerLine = 8;      // horizons per table line
constexpr int kLabelWidth = 35;
constexpr int kCellWidth = 10;

std::string horizon_label(double t) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g", t);
  return buf;
}

std::string fit(const std::string& s, std::size_t w) {
  if (s.size() <= w) return s;
  return s.substr(0, w - 1) + "~";
}

}  // namespace

void parallel_slices(std::size_t n, unsigned threads,
                     const std::function<void(unsigned, std::size_t, std::size_t)>& fn) {
  const unsigned t =
      std::max(1U, std::min<unsigned>(threads, static_cast<unsigned>(std::max<std::size_t>(n / 16, 1))));
  if (t == 1) {
    fn(0, 0, n);
    return;
  }
  std::vector<std::thread> pool;
  pool.reserve(t - 1);
  const auto bound = [&](unsigned w) { return n * w / t; };
  for (unsigned w = 1; w < t; ++w) pool.emplace_back(fn, w, bound(w), bound(w + 1));
  fn(0, 0, bound(1));
  for (auto& th : pool) th.join();
}

std::string_view row_status_of(TermStatus status) noexcept {
  switch (status) {
    case TermStatus::ok:
      return "ok";
    case TermStatus::invalid_input:
      return "invalid_input";
    case TermStatus::max_iterations:
    case TermStatus::not_bracketed:
    case TermStatus::not_finite:
      return "not_converged";
  }
  return "";
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

std::string table_number(double v, int decimals) {
  char buf[64];
  if (!std::isfinite(v)) return "-";
  if (v == 0.0) {
    std::snprintf(buf, sizeof buf, "0");
  } else if (std::fabs(v) >= std::pow(10.0, -decimals + 1) && std::fabs(v) < 1e7) {
    std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  } else {
    std::snprintf(buf, sizeof buf, "%.2e", v);
  }
  return buf;
}

void append_term_run_fields(std::string& out, const TermBookOptions& run) {
  out += ", \"models\": [";
  for (std::size_t m = 0; m < run.models.size(); ++m) {
    if (m > 0) out += ", ";
    append_json_string(out, to_string(run.models[m]));
  }
  out += "], \"horizons\": ";
  if (run.horizons.empty()) {
    out += "null";
  } else {
    out += "[";
    for (std::size_t i = 0; i < run.horizons.size(); ++i) {
      if (i > 0) out += ", ";
      append_json_number(out, run.horizons[i]);
    }
    out += "]";
  }
  out += ", \"calibration\": ";
  append_json_string(out, to_string(run.calibration));
  out += ", \"barrier_ratio\": ";
  append_json_number(out, run.barrier.default_point_ratio);
  out += ", \"barrier_growth\": ";
  append_json_number(out, run.barrier.growth_rate_cc);
}

namespace {

class CsvTermWriter final : public TermWriter {
 public:
  explicit CsvTermWriter(const TermRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    bool first = true;
    for (auto c : term_columns()) {
      if (!first) out.push_back(',');
      out.append(c);
      first = false;
    }
    out.push_back('\n');
  }
  void obligor(const ObligorRecord& rec, const TermScoredObligor& s, bool, std::string& out) const override {
    const std::size_t nh = s.horizons.size();
    for (std::size_t m = 0; m < info_.run.models.size(); ++m) {
      for (std::size_t i = 0; i < nh; ++i) {
        const TermPoint& p = s.points[m * nh + i];
        append_csv_text(out, rec.get(TextField::id));
        out.push_back(',');
        append_csv_text(out, rec.get(TextField::name));
        out.push_back(',');
        out.append(to_string(info_.run.models[m]));
        out.push_back(',');
        append_number(out, s.horizons[i]);
        out.push_back(',');
        out.append(row_status_of(p.status));
        for (double v : term_numbers(s, info_.run, m, i)) {
          out.push_back(',');
          append_number(out, v);
        }
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
    out += "{\n  \"run\": {\"input\": ";
    append_json_string(out, info_.origin);
    out += ", \"measure\": ";
    append_json_string(out, to_string(st.measure));
    append_term_run_fields(out, run);
    out += ", \"default_point_weight\": ";
    append_json_number(out, st.weight_override.value_or(st.default_point_weight));
    out += ", \"rate_override\": ";
    append_json_number(out, st.rate_override.value_or(std::nan("")));
    out += ", \"horizon_override\": ";
    append_json_number(out, st.horizon_override.value_or(std::nan("")));
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
        out += "    {\"id\": ";
        append_json_string(out, rec.get(TextField::id));
        out += ", \"name\": ";
        append_json_string(out, rec.get(TextField::name));
        out += ", \"model\": ";
        append_json_string(out, to_string(info_.run.models[m]));
        out += ", \"horizon\": ";
        append_json_number(out, s.horizons[i]);
        out += ", \"status\": ";
        append_json_string(out, row_status_of(p.status));
        const std::vector<double> v = term_numbers(s, info_.run, m, i);
        for (std::size_t k = 0; k < v.size(); ++k) {
          out += ", \"";
          out += cols[kFirstNumber + k];
          out += "\": ";
          append_json_number(out, v[k]);
        }
        out += ", \"message\": ";
        append_json_string(out, s.messages[m * nh + i]);
        out += "}";
      }
    }
  }
  void end(const ScoreSummary& sum, std::string& out) const override {
    out += "\n  ],\n  \"summary\": {\"obligors\": " + std::to_string(sum.total) +
           ", \"scored\": " + std::to_string(sum.scored) +
           ", \"invalid_input\": " + std::to_string(sum.invalid) +
           ", \"not_converged\": " + std::to_string(sum.not_converged) + "}\n}\n";
  }

 private:
  TermRunInfo info_;
};

// A compact curve per obligor: cumulative PD, forward PD (both in percent) and spread by horizon.
class TableTermWriter final : public TermWriter {
 public:
  explicit TableTermWriter(const TermRunInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    const TermBookOptions& run = info_.run;
    bool fp = false;
    for (TermModel m : run.models) fp = fp || m == TermModel::first_passage;
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
      head = pad_right("obligor / model", kLabelWidth) + pad_left("own T", kCellWidth);
    } else if (run.horizons.size() <= kPerLine) {
      head = pad_right("horizon (years)", kLabelWidth);
      for (double t : run.horizons) head += pad_left(horizon_label(t), kCellWidth);
    } else {
      head = pad_right("obligor / model", kLabelWidth) + "  (horizons in years on each block)";
    }
    out += head + "\n" + rule() + "\n";
  }
  void obligor(const ObligorRecord& rec, const TermScoredObligor& s, bool, std::string& out) const override {
    const TermBookOptions& run = info_.run;
    const std::size_t nh = s.horizons.size();
    std::string title = rec.get(TextField::id);
    if (!rec.get(TextField::name).empty()) title += "  " + fit(rec.get(TextField::name), 40);
    if (run.horizons.empty() && s.resolved.ok())
      title += "  (T = " + horizon_label(s.horizons[0]) + " years)";
    out += title + "\n";
    for (std::size_t c0 = 0; c0 < nh; c0 += kPerLine) {
      const std::size_t c1 = std::min(nh, c0 + kPerLine);
      if (nh > kPerLine) {
        std::string h = pad_right("  horizon (years)", kLabelWidth);
        for (std::size_t i = c0; i < c1; ++i) h += pad_left(horizon_label(s.horizons[i]), kCellWidth);
        out += h + "\n";
      }
      for (std::size_t m = 0; m < run.models.size(); ++m) {
        const TermPoint* pts = s.points.data() + m * nh;
        const std::string model = "  " + pad_right(std::string(to_string(run.models[m])), 16);
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
              (l == 0 ? model : std::string(18, ' ')) + pad_right(lines[l].label, kLabelWidth - 18);
          for (std::size_t i = c0; i < c1; ++i) {
            const double v = pts[i].ok() ? lines[l].scale * (pts[i].*lines[l].field) : std::nan("");
            line += pad_left(table_number(v, lines[l].decimals), kCellWidth);
          }
          out += line + "\n";
        }
      }
    }
  }
  void end(const ScoreSummary& sum, std::string& out) const override {
    out += rule() + "\n";
    out +=
        "term structures of " + std::to_string(sum.scored) + " of " + std::to_string(sum.total) + " obligors";
    if (sum.failed() > 0) {
      out += "; " + std::to_string(sum.invalid) + " invalid input, " + std::to_string(sum.not_converged) +
             " not converged (reasons below)";
    }
    out += "\n";
    append_table_problems(out, sum.problems, sum.problems_not_listed, 116);
    bool fp = false;
    for (TermModel m : info_.run.models) fp = fp || m == TermModel::first_passage;
    if (fp) {
      out +=
          "Model estimates under the Merton and Black-Cox assumptions; not a credit decision on their own.\n";
    } else {
      out += kTableCaution;
    }
  }

 private:
  TermRunInfo info_;
  static std::string pad_right(const std::string& s, int w) {
    return s.size() >= static_cast<std::size_t>(w)
               ? s + " "
               : s + std::string(static_cast<std::size_t>(w) - s.size(), ' ');
  }
  static std::string pad_left(const std::string& s, int w) {
    return s.size() >= static_cast<std::size_t>(w)
               ? " " + s
               : std::string(static_cast<std::size_t>(w) - s.size(), ' ') + s;
  }
  std::string rule() const {
    const std::size_t cells = info_.run.horizons.empty() ? 1 : std::min(info_.run.horizons.size(), kPerLine);
    return std::string(static_cast<std::size_t>(kLabelWidth) + cells * static_cast<std::size_t>(kCellWidth),
                       '-');
  }
};

}  // namespace

std::unique_ptr<TermWriter> make_term_writer(OutputFormat format, const TermRunInfo& info) {
  switch (format) {
    case OutputFormat::csv:
      return std::make_unique<CsvTermWriter>(info);
    case OutputFormat::json:
      return std::make_unique<JsonTermWriter>(info);
    case OutputFormat::table:
      return std::make_unique<TableTermWriter>(info);
  }
  return std::make_unique<CsvTermWriter>(info);
}

}  // namespace firmcall::detail
