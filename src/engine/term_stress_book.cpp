// PD term structures under stress. See include/firmcall/term_stress.hpp.
#include "firmcall/engine/term_stress_book.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <memory>

#include "engine/chunked_rows.hpp"
#include "engine/term_output.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"
#include "firmcall/model/shock.hpp"
#include "firmcall/util/parallel.hpp"

namespace firmcall {

namespace {

// Row status of one base / stressed point pair.
StressStatus row_status(const StressedTerm& s, const TermPoint& base, const TermPoint& stressed) {
  if (s.status == StressStatus::invalid_input || s.status == StressStatus::invalid_stress) return s.status;
  return base.ok() && stressed.ok() ? StressStatus::ok : StressStatus::not_converged;
}

// Values of the numeric columns, from "calibration_horizon" to "spread_bp_change" (NaN: empty).
constexpr std::size_t kFirstNumber = 7;
constexpr std::size_t kNumbers = 16;
std::vector<double> numbers(const TermPoint& b, const TermPoint& s, bool base_resolved, bool stressed_valid) {
  const double nan = std::nan("");
  std::vector<double> v(kNumbers, nan);
  if (base_resolved) v[0] = b.calibration_horizon_years;
  if (stressed_valid) v[1] = s.calibration_horizon_years;
  if (b.ok()) {
    v[2] = b.asset_value;
    v[4] = b.asset_vol_annual;
    v[6] = b.pd;
    v[9] = b.pd_forward;
    v[11] = b.pd_annualised;
    v[13] = b.spread_bp;
  }
  if (s.ok()) {
    v[3] = s.asset_value;
    v[5] = s.asset_vol_annual;
    v[7] = s.pd;
    v[10] = s.pd_forward;
    v[12] = s.pd_annualised;
    v[14] = s.spread_bp;
  }
  if (b.ok() && s.ok()) {
    v[8] = s.pd - b.pd;
    v[15] = s.spread_bp - b.spread_bp;
  }
  return v;
}

struct WriterInfo {
  std::string book_origin;
  std::string scenario_origin;
  ScoreSettings settings;
  TermBookOptions run;
  std::size_t obligors = 0;
  std::size_t scenarios = 0;
};

class StressTermWriter {
 public:
  virtual ~StressTermWriter() = default;
  virtual void begin(std::string& out) const = 0;
  virtual void scenario_begin(const Scenario& sc, std::size_t index, std::string& out) const = 0;
  virtual void obligor(const Scenario& sc, const ObligorRecord& rec, const TermScoredObligor& base,
                       const StressedTerm& s, bool first, std::string& out) const = 0;
  virtual void scenario_end(std::string& out) const = 0;
  virtual void end(const TermStressSummary& sum, std::string& out) const = 0;
};

class CsvStressTermWriter final : public StressTermWriter {
 public:
  explicit CsvStressTermWriter(const WriterInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    append_csv_names(out, stress_term_columns());
    out.push_back('\n');
  }
  void scenario_begin(const Scenario&, std::size_t, std::string&) const override {}
  void obligor(const Scenario& sc, const ObligorRecord& rec, const TermScoredObligor& base,
               const StressedTerm& s, bool, std::string& out) const override {
    const std::size_t nh = base.horizons.size();
    for (std::size_t m = 0; m < info_.run.models.size(); ++m) {
      for (std::size_t i = 0; i < nh; ++i) {
        const std::size_t k = m * nh + i;
        append_csv_texts(out, {sc.name, rec.get(TextField::id), rec.get(TextField::name)});
        out.append(to_string(info_.run.models[m]));
        out.push_back(',');
        append_number(out, base.horizons[i]);
        out.push_back(',');
        out.append(to_string(row_status(s, base.points[k], s.points[k])));
        out.append(s.shocked ? ",true" : ",false");
        append_csv_numbers(out, numbers(base.points[k], s.points[k], base.resolved.ok(),
                                        s.status != StressStatus::invalid_input &&
                                            s.status != StressStatus::invalid_stress));
        out.push_back(',');
        append_csv_text(out, s.messages[k]);
        out.push_back('\n');
      }
    }
  }
  void scenario_end(std::string&) const override {}
  void end(const TermStressSummary&, std::string&) const override {}

 private:
  WriterInfo info_;
};

class JsonStressTermWriter final : public StressTermWriter {
 public:
  explicit JsonStressTermWriter(const WriterInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    const TermBookOptions& run = info_.run;
    out += "{\n  \"run\": {";
    JsonFields(out)
        .text("input", info_.book_origin)
        .text("scenarios", info_.scenario_origin)
        .text("measure", to_string(info_.settings.measure));
    detail::append_term_run_fields(out, run);
    out += "},\n  \"scenarios\": [";
  }
  void scenario_begin(const Scenario& sc, std::size_t index, std::string& out) const override {
    out += index == 0 ? "\n    {" : ",\n    {";
    JsonFields(out).text("name", sc.name).text("description", sc.description);
    out += ", \"rows\": [\n";
  }
  void obligor(const Scenario&, const ObligorRecord& rec, const TermScoredObligor& base,
               const StressedTerm& s, bool first, std::string& out) const override {
    const auto& cols = stress_term_columns();
    const std::size_t nh = base.horizons.size();
    const bool stressed_valid =
        s.status != StressStatus::invalid_input && s.status != StressStatus::invalid_stress;
    for (std::size_t m = 0; m < info_.run.models.size(); ++m) {
      for (std::size_t i = 0; i < nh; ++i) {
        const std::size_t k = m * nh + i;
        if (!(first && k == 0)) out += ",\n";
        out += "      {";
        JsonFields(out)
            .text("id", rec.get(TextField::id))
            .text("name", rec.get(TextField::name))
            .text("model", to_string(info_.run.models[m]))
            .number("horizon", base.horizons[i])
            .text("status", to_string(row_status(s, base.points[k], s.points[k])))
            .boolean("shocked", s.shocked)
            .numbers(std::span(cols).subspan(kFirstNumber, kNumbers),
                     numbers(base.points[k], s.points[k], base.resolved.ok(), stressed_valid))
            .text("message", s.messages[k]);
        out += "}";
      }
    }
  }
  void scenario_end(std::string& out) const override { out += "\n    ]}"; }
  void end(const TermStressSummary& sum, std::string& out) const override {
    out += "\n  ],\n  \"summary\": {";
    JsonFields(out)
        .count("obligors", sum.obligors)
        .count("scenarios", sum.scenarios)
        .count("rows", sum.rows)
        .count("failed_rows", sum.failed_rows);
    out += "}\n}\n";
  }

 private:
  WriterInfo info_;
};

// Per scenario and obligor, the cumulative PD curve as it stands and stressed.
class TableStressTermWriter final : public StressTermWriter {
 public:
  explicit TableStressTermWriter(const WriterInfo& info) : info_(info) {}
  void begin(std::string& out) const override {
    out += "PD term structures under stress: book " + info_.book_origin + " (" +
           std::to_string(info_.obligors) + " obligors), " + std::to_string(info_.scenarios) +
           " scenarios from " + info_.scenario_origin + "\n";
    out += std::string(to_string(info_.settings.measure)) + " measure; asset value and volatility " +
           (info_.run.calibration == Calibration::once ? "solved once at each obligor's horizon"
                                                       : "solved again at every horizon") +
           ", again for the stressed inputs\n";
  }
  void scenario_begin(const Scenario& sc, std::size_t index, std::string& out) const override {
    out +=
        "\nScenario " + std::to_string(index + 1) + " of " + std::to_string(info_.scenarios) + ": " + sc.name;
    if (!sc.description.empty()) out += " - " + sc.description;
    out += "\n";
    std::string head = left_cell("horizon (years)", detail::kTermLabelWidth);
    if (info_.run.horizons.empty()) {
      head += right_cell("own T", detail::kTermCellWidth);
    } else {
      for (std::size_t i = 0; i < std::min(info_.run.horizons.size(), detail::kTermPerLine); ++i) {
        head += right_cell(general_number(info_.run.horizons[i]), detail::kTermCellWidth);
      }
    }
    out += head + "\n" + rule() + "\n";
  }
  void obligor(const Scenario&, const ObligorRecord& rec, const TermScoredObligor& base,
               const StressedTerm& s, bool, std::string& out) const override {
    const std::size_t nh = base.horizons.size();
    std::string title = rec.get(TextField::id);
    if (!rec.get(TextField::name).empty()) title += "  " + rec.get(TextField::name);
    if (!s.shocked) title += "  (no shock)";
    out += title + "\n";
    for (std::size_t c0 = 0; c0 < nh; c0 += detail::kTermPerLine) {
      const std::size_t c1 = std::min(nh, c0 + detail::kTermPerLine);
      detail::append_horizon_block_head(out, base.horizons, c0, c1);
      for (std::size_t m = 0; m < info_.run.models.size(); ++m) {
        const std::string model = detail::term_model_label(info_.run.models[m]);
        const TermPoint* b = base.points.data() + m * nh;
        const TermPoint* st = s.points.data() + m * nh;
        bool any = false;
        for (std::size_t i = 0; i < nh; ++i) any = any || (b[i].ok() && st[i].ok());
        if (!any) {
          if (c0 == 0)
            out += model +
                   std::string(
                       to_string(s.status == StressStatus::ok ? StressStatus::not_converged : s.status)) +
                   " (reason below)\n";
          continue;
        }
        std::string l1 = model + left_cell("PD % as it stands", detail::kTermLabelWidth - 18);
        std::string l2 = std::string(18, ' ') + left_cell("PD % stressed", detail::kTermLabelWidth - 18);
        for (std::size_t i = c0; i < c1; ++i) {
          l1 +=
              right_cell(table_number(b[i].ok() ? 100.0 * b[i].pd : std::nan(""), 4), detail::kTermCellWidth);
          l2 += right_cell(table_number(st[i].ok() ? 100.0 * st[i].pd : std::nan(""), 4),
                           detail::kTermCellWidth);
        }
        out += l1 + "\n" + l2 + "\n";
      }
    }
  }
  void scenario_end(std::string& out) const override { out += rule() + "\n"; }
  void end(const TermStressSummary& sum, std::string& out) const override {
    out += "\nrows " + std::to_string(sum.rows) + " (" + std::to_string(sum.obligors) + " obligors x " +
           std::to_string(sum.scenarios) + " scenarios x models x horizons), " +
           std::to_string(sum.failed_rows) + " failed\n";
    append_table_problems(out, sum.problems, sum.problems_not_listed, 116);
    detail::append_term_caution(out, info_.run);
  }

 private:
  WriterInfo info_;
  std::string rule() const { return detail::term_rule(info_.run); }
};

std::unique_ptr<StressTermWriter> make_writer(OutputFormat format, const WriterInfo& info) {
  return make_format_writer<StressTermWriter, CsvStressTermWriter, JsonStressTermWriter,
                            TableStressTermWriter>(format, info);
}

}  // namespace

const std::vector<std::string_view>& stress_term_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "scenario,id,name,model,horizon,status,shocked,calibration_horizon,"
      "calibration_horizon_stressed,asset_value,asset_value_stressed,asset_vol,"
      "asset_vol_stressed,pd,pd_stressed,pd_change,pd_forward,pd_forward_stressed,"
      "pd_annualised,pd_annualised_stressed,spread_bp,spread_bp_stressed,spread_bp_change,"
      "message");
  return cols;
}

void stress_term_obligor(const ObligorRecord& rec, const TermScoredObligor& base, const ShockEffect& effect,
                         const ScoreSettings& settings, const TermBookOptions& run, StressedTerm& out) {
  out.shocked = effect.shocks > 0;
  out.points = base.points;
  out.messages = base.messages;
  out.inputs = base.resolved.inputs;
  if (!base.resolved.ok()) {
    out.status = StressStatus::invalid_input;
    return;
  }
  if (!out.shocked) {
    out.status = base.status == RowStatus::ok ? StressStatus::ok : StressStatus::not_converged;
    return;
  }
  out.inputs = apply_shock(base.resolved.inputs, effect, base.resolved.drift_follows_rate);
  const std::string problem = stressed_input_problem(out.inputs);
  const std::string line = "line " + std::to_string(rec.line) + ": ";
  if (!problem.empty()) {
    out.status = StressStatus::invalid_stress;
    for (TermPoint& p : out.points) p = TermPoint{};
    for (std::string& m : out.messages) m = line + problem;
    return;
  }
  const std::size_t nh = base.horizons.size();
  bool all_ok = true;
  for (std::size_t m = 0; m < run.models.size(); ++m) {
    const TermRequest req = detail::term_request(run, m, base.resolved.lgd, settings);
    TermPoint* pts = out.points.data() + m * nh;
    term_structure(out.inputs, req, base.horizons.data(), nh, pts);
    for (std::size_t i = 0; i < nh; ++i) {
      const std::size_t k = m * nh + i;
      all_ok = all_ok && pts[i].ok() && base.points[k].ok();
      if (!base.messages[k].empty()) continue;  // the base problem is reported first
      const std::string why = term_point_problem(rec.line, out.inputs, run.models[m], run.barrier, pts[i]);
      out.messages[k] = why.empty() ? std::string() : line + "stressed inputs: " + message_without_line(why);
    }
  }
  out.status = all_ok ? StressStatus::ok : StressStatus::not_converged;
}

namespace {

// Per-thread state of the stressed curves of one scenario.
struct TermStressWorker {
  std::string out;
  StressedTerm stressed;
  std::vector<std::pair<std::size_t, std::string>> problems;  // scenario-caused, (obligor, text)
  std::size_t failed = 0, rows = 0, not_listed = 0;
};

// The first non-empty message of a stressed curve.
std::string first_message(const StressedTerm& s) {
  for (const std::string& m : s.messages) {
    if (!m.empty()) return m;
  }
  return {};
}

// Stresses obligor i's curves under one scenario, writes them and counts its rows and failures.
void stress_term_row(const Scenario& sc, const Book& book, std::size_t i, const TermScoredObligor& base,
                     const ScoreSettings& settings, const TermBookOptions& run,
                     const StressTermWriter& writer, TermStressWorker& wk) {
  const ObligorRecord& rec = book.obligors[i];
  stress_term_obligor(rec, base, sc.effect_for(rec), settings, run, wk.stressed);
  writer.obligor(sc, rec, base, wk.stressed, i == 0, wk.out);
  for (std::size_t k = 0; k < wk.stressed.points.size(); ++k) {
    ++wk.rows;
    if (row_status(wk.stressed, base.points[k], wk.stressed.points[k]) != StressStatus::ok) ++wk.failed;
  }
  // A failure caused by the scenario (base failures are listed once before).
  if (base.status != RowStatus::ok || wk.stressed.status == StressStatus::ok) return;
  if (wk.problems.size() < run.max_listed_problems) {
    wk.problems.emplace_back(
        i, "scenario '" + sc.name + "': " + message_without_line(first_message(wk.stressed)));
  } else {
    ++wk.not_listed;
  }
}

}  // namespace

TermStressSummary run_stress_term(const Book& book, const std::vector<Scenario>& scenarios,
                                  const std::string& scenario_origin, const ScoreSettings& settings,
                                  const TermBookOptions& run, const TextSink& sink) {
  const std::size_t n = book.obligors.size();
  const unsigned threads = std::max(1U, run.threads);
  TermStressSummary sum;
  sum.obligors = n;
  sum.scenarios = scenarios.size();
  sum.notes = book.notes;
  const WriterInfo info{book.origin, scenario_origin, settings, run, n, scenarios.size()};
  const auto writer = make_writer(run.format, info);
  detail::sink_text(sink, [&](std::string& s) { writer->begin(s); });
  // Curves as the book stands, once for every scenario.
  std::vector<TermScoredObligor> base(n);
  parallel_slices(
      n, threads,
      [&](unsigned, std::size_t b, std::size_t e) {
        for (std::size_t i = b; i < e; ++i)
          score_term_obligor(book.obligors[i], book.defaults, settings, run, base[i]);
      },
      16);
  const auto list = [&](std::size_t i, const std::string& message) {
    if (sum.problems.size() >= run.max_listed_problems) {
      ++sum.problems_not_listed;
      return;
    }
    sum.problems.push_back(obligor_problem(book.origin, book.obligors[i], message));
  };
  for (std::size_t i = 0; i < n; ++i) {
    if (base[i].status == RowStatus::ok) {
      ++sum.base_ok;
    } else {
      list(i, base[i].first_problem());
    }
  }
  std::vector<TermStressWorker> workers(threads);
  for (std::size_t si = 0; si < scenarios.size(); ++si) {
    const Scenario& sc = scenarios[si];
    detail::sink_text(sink, [&](std::string& s) { writer->scenario_begin(sc, si, s); });
    constexpr std::size_t kChunk = 2048;
    detail::write_in_chunks(n, kChunk, workers, 16, sink,
                            [&](TermStressWorker& wk, std::size_t b, std::size_t e) {
                              for (std::size_t i = b; i < e; ++i)
                                stress_term_row(sc, book, i, base[i], settings, run, *writer, wk);
                            });
    std::vector<std::pair<std::size_t, std::string>> found;
    for (TermStressWorker& wk : workers) {
      sum.rows += wk.rows;
      sum.failed_rows += wk.failed;
      sum.problems_not_listed += wk.not_listed;
      wk.rows = wk.failed = wk.not_listed = 0;
      for (auto& p : wk.problems) found.push_back(std::move(p));
      wk.problems.clear();
    }
    std::sort(found.begin(), found.end());
    for (const auto& [i, text] : found) list(i, text);
    detail::sink_text(sink, [&](std::string& s) { writer->scenario_end(s); });
  }
  detail::sink_text(sink, [&](std::string& s) { writer->end(sum, s); });
  return sum;
}

}  // namespace firmcall
