// Stress and reverse-stress runs over a book. See include/firmcall/stress.hpp.
#include "firmcall/engine/stress_book.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <functional>
#include <thread>

#include "engine/chunked_rows.hpp"
#include "engine/stress_output.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/util/parallel.hpp"

namespace firmcall {

std::string_view to_string(StressStatus s) noexcept {
  switch (s) {
    case StressStatus::ok:
      return "ok";
    case StressStatus::invalid_input:
      return "invalid_input";
    case StressStatus::not_converged:
      return "not_converged";
    case StressStatus::invalid_stress:
      return "invalid_stress";
  }
  return "";
}

namespace {

std::string shortest(double v) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

// The first problem of stressed inputs, as "stressed field 'x': reason, got v"; empty if none.
std::string check_stressed_impl(const MertonInputs& in) {
  const auto bad = [](std::string_view field, std::string_view reason, double v) {
    return "stressed field '" + std::string(field) + "': " + std::string(reason) + ", got " + shortest(v);
  };
  if (!(in.equity_value > 0.0) || !std::isfinite(in.equity_value)) {
    return bad("market_cap", "must be positive and finite", in.equity_value);
  }
  if (!(in.equity_vol_annual > 0.0) || !std::isfinite(in.equity_vol_annual)) {
    return bad("equity_vol", "must be positive (check equity_vol_add_points)", in.equity_vol_annual);
  }
  if (!(in.default_point > 0.0) || !std::isfinite(in.default_point)) {
    return bad("default_point", "must be positive and finite", in.default_point);
  }
  if (!(in.risk_free_rate_cc >= -1.0 && in.risk_free_rate_cc <= 1.0)) {
    return bad("rate", "must lie in [-1, 1] (check rate_shift_bp)", in.risk_free_rate_cc);
  }
  if (!(in.drift_annual >= -1.0 && in.drift_annual <= 1.0)) {
    return bad("drift", "must lie in [-1, 1] (check rate_shift_bp)", in.drift_annual);
  }
  const MertonInputCheck check = validate(in);
  if (!check.ok()) return "stressed field '" + std::string(to_string(check.field)) + "': " + check.message;
  return {};
}

bool all_finite(const MertonMeasures& m) {
  const double all[] = {m.asset_value, m.asset_vol_annual, m.leverage,   m.distance_to_default,
                        m.pd,          m.pd_risk_neutral,  m.debt_value, m.spread_bp};
  return std::all_of(std::begin(all), std::end(all), [](double x) { return std::isfinite(x); });
}

std::string problem_text(const Book& book, const ObligorRecord& rec, const std::string& message) {
  return obligor_problem(book.origin, rec, message);
}

// Scores every obligor as it stands (in parallel) and fills the base counts and problems.
std::vector<ScoredObligor> score_base(const Book& book, const ScoreSettings& settings, unsigned threads,
                                      std::size_t max_listed, std::size_t& ok, std::size_t& invalid,
                                      std::size_t& not_converged, std::vector<std::string>& problems,
                                      std::size_t& not_listed) {
  const std::size_t n = book.obligors.size();
  std::vector<ScoredObligor> base(n);
  parallel_slices(n, threads, [&](unsigned, std::size_t b, std::size_t e) {
    for (std::size_t i = b; i < e; ++i) score_obligor(book.obligors[i], book.defaults, settings, base[i]);
  });
  for (std::size_t i = 0; i < n; ++i) {
    switch (base[i].status) {
      case RowStatus::ok:
        ++ok;
        continue;
      case RowStatus::invalid_input:
        ++invalid;
        break;
      case RowStatus::not_converged:
        ++not_converged;
        break;
    }
    if (problems.size() < max_listed) {
      problems.push_back(problem_text(book, book.obligors[i], base[i].message));
    } else {
      ++not_listed;
    }
  }
  return base;
}

// score_base into a run summary: its obligor count, the book's notes, the base counts and problems.
template <class Summary>
std::vector<ScoredObligor> score_base_into(const Book& book, const ScoreSettings& settings, unsigned threads,
                                           std::size_t max_listed, Summary& sum) {
  sum.obligors = book.obligors.size();
  sum.notes = book.notes;
  return score_base(book, settings, threads, max_listed, sum.base_ok, sum.base_invalid,
                    sum.base_not_converged, sum.problems, sum.problems_not_listed);
}

}  // namespace

ScenarioPdFigures driving_figures(const ScenarioSummary& s, DrivingPd driving) {
  if (driving == DrivingPd::calibrated) return s.calibrated;
  return {s.mean_pd,
          s.mean_pd_stressed,
          s.ead_weighted_pd,
          s.ead_weighted_pd_stressed,
          s.above_threshold,
          s.above_threshold_stressed,
          s.newly_above_threshold,
          s.expected_loss,
          s.expected_loss_stressed};
}

std::string stressed_input_problem(const MertonInputs& in) {
  return check_stressed_impl(in);
}

namespace {

// The asset-vol hold (shock.hpp): sV' = sV x multiplier + points, V re-solved from the equity
// equation alone, and the stressed equity volatility set to what the model implies there. A
// shock that changes nothing keeps the base solution as it is.
void stress_held_asset_vol(const ScoredObligor& base, const ShockEffect& effect,
                           const ScoreSettings& settings, StressedObligor& out);

// First half of stress_obligor: everything up to the solve. Returns true when out.inputs must be
// solved (then finish_stressed completes out); otherwise out is complete.
bool start_stressed(const ScoredObligor& base, const ShockEffect& effect, const ScoreSettings& settings,
                    StressHold hold, StressedObligor& out) {
  out.effect = effect;
  out.message.clear();
  out.inputs = base.resolved.inputs;
  out.solution = AssetSolution{};
  out.measures = MertonMeasures{};
  out.sensitivities = MertonSensitivities{};
  if (base.status != RowStatus::ok) {
    out.status =
        base.status == RowStatus::invalid_input ? StressStatus::invalid_input : StressStatus::not_converged;
    out.message = base.message;
    if (base.resolved.ok())
      out.inputs = apply_shock(base.resolved.inputs, effect, base.resolved.drift_follows_rate);
    return false;
  }
  if (effect.shocks == 0) {
    out.solution = base.solution;
    out.measures = base.measures;
    out.status = StressStatus::ok;
    return false;
  }
  if (hold == StressHold::asset_vol) {
    stress_held_asset_vol(base, effect, settings, out);
    return false;
  }
  out.inputs = apply_shock(base.resolved.inputs, effect, base.resolved.drift_follows_rate);
  out.message = stressed_input_problem(out.inputs);
  if (!out.message.empty()) {
    out.status = StressStatus::invalid_stress;
    return false;
  }
  return true;
}

// Second half, once out.solution holds the solve of out.inputs.
void finish_stressed(StressedObligor& out) {
  if (!out.solution.usable()) {
    out.status = StressStatus::not_converged;
    char buf[160];
    std::snprintf(buf, sizeof buf,
                  "stressed inputs: solver did not converge (residual %.3g after %d iterations)",
                  out.solution.residual, out.solution.iterations);
    out.message = buf;
    return;
  }
  out.measures = merton_measures(out.inputs, out.solution.asset_value, out.solution.asset_vol_annual);
  if (!all_finite(out.measures)) {
    out.status = StressStatus::not_converged;
    out.message = "stressed inputs: a derived measure is not finite";
    return;
  }
  out.status = StressStatus::ok;
}

void stress_held_asset_vol(const ScoredObligor& base, const ShockEffect& effect,
                           const ScoreSettings& settings, StressedObligor& out) {
  const double nan = std::nan("");
  out.inputs = apply_shock(base.resolved.inputs, effect, base.resolved.drift_follows_rate);
  if (effect.identity()) {
    out.solution = base.solution;
    out.measures = base.measures;
    out.status = StressStatus::ok;
    return;
  }
  const double asset_vol = stressed_asset_vol(base.solution.asset_vol_annual, effect);
  if (!(asset_vol > 0.0) || !std::isfinite(asset_vol)) {
    out.inputs.equity_vol_annual = nan;
    out.status = StressStatus::invalid_stress;
    out.message =
        "stressed field 'asset_vol': must be positive (check equity_vol_add_points; with --hold "
        "asset-vol the volatility shocks act on the asset volatility " +
        shortest(base.solution.asset_vol_annual) + "), got " + shortest(asset_vol);
    return;
  }
  // The other stressed inputs are checked as for the equity-vol hold; sE' is not known yet.
  out.inputs.equity_vol_annual = asset_vol;
  out.message = stressed_input_problem(out.inputs);
  out.inputs.equity_vol_annual = nan;
  if (!out.message.empty()) {
    out.status = StressStatus::invalid_stress;
    return;
  }
  out.solution = solve_asset_value_at_vol(out.inputs, asset_vol, settings.solver);
  if (out.solution.usable()) {
    out.inputs.equity_vol_annual =
        implied_equity_vol(out.inputs, out.solution.asset_value, out.solution.asset_vol_annual);
  }
  finish_stressed(out);
  if (out.status == StressStatus::ok &&
      !(out.inputs.equity_vol_annual > 0.0 && std::isfinite(out.inputs.equity_vol_annual))) {
    out.status = StressStatus::not_converged;
    out.message = "stressed inputs: the implied equity volatility is not positive and finite";
  }
}

void add_sensitivities(const ScoredObligor& base, StressedObligor& out) {
  if (out.status != StressStatus::ok) return;
  out.sensitivities = merton_sensitivities(out.inputs, out.solution.asset_value,
                                           out.solution.asset_vol_annual, base.resolved.drift_follows_rate);
}

}  // namespace

void stress_obligor(const ScoredObligor& base, const ShockEffect& effect, const ScoreSettings& settings,
                    bool sensitivities, StressedObligor& out, StressHold hold) {
  if (start_stressed(base, effect, settings, hold, out)) {
    out.solution = solve_asset(out.inputs, settings.solver);
    finish_stressed(out);
  }
  if (sensitivities) add_sensitivities(base, out);
}

void stress_obligors(const ScoredObligor* base, const ShockEffect* effects, std::size_t n,
                     const ScoreSettings& settings, bool sensitivities, StressedObligor* out,
                     StressHold hold) {
  std::vector<std::size_t> solve;
  std::vector<MertonInputs> inputs;
  for (std::size_t i = 0; i < n; ++i) {
    if (start_stressed(base[i], effects[i], settings, hold, out[i])) {
      solve.push_back(i);
      inputs.push_back(out[i].inputs);
    }
  }
  std::vector<AssetSolution> solutions(inputs.size());
  solve_asset_batch(inputs.data(), solutions.data(), inputs.size(), settings.solver);
  for (std::size_t k = 0; k < solve.size(); ++k) {
    out[solve[k]].solution = solutions[k];
    finish_stressed(out[solve[k]]);
  }
  if (sensitivities) {
    for (std::size_t i = 0; i < n; ++i) add_sensitivities(base[i], out[i]);
  }
}

namespace {

// The table's PD grid: its shape from the scenarios' grid cells, and its row and column heads.
// Returns false (nothing kept) for other formats or when no scenario is a grid cell.
bool init_grid(const std::vector<Scenario>& scenarios, std::size_t n, OutputFormat format, PdGrid& grid,
               int& grid_rows, int& grid_columns) {
  grid_rows = 0;
  grid_columns = 0;
  for (const Scenario& sc : scenarios) {
    grid_rows = std::max(grid_rows, sc.grid_row + 1);
    grid_columns = std::max(grid_columns, sc.grid_column + 1);
  }
  if (format != OutputFormat::table || grid_rows <= 0 || grid_columns <= 0) return false;
  grid.equity_changes.assign(static_cast<std::size_t>(grid_rows), 0.0);
  grid.vol_multipliers.assign(static_cast<std::size_t>(grid_columns), 1.0);
  grid.pd.assign(n * static_cast<std::size_t>(grid_rows * grid_columns), std::nan(""));
  for (const Scenario& sc : scenarios) {
    if (sc.grid_row < 0 || sc.shocks.empty()) continue;
    grid.equity_changes[static_cast<std::size_t>(sc.grid_row)] = sc.shocks[0].shock.equity_change;
    grid.vol_multipliers[static_cast<std::size_t>(sc.grid_column)] = sc.shocks[0].shock.equity_vol_multiplier;
  }
  return true;
}

// InputError, before any row is written, when the total EAD or loss amount (LGD x EAD) of the
// scored obligors with ead is too large for a double (above about 1.8e308): the scenario summaries'
// totals would be infinite and the EAD-weighted PDs 0. Names the total and the largest exposures.
void check_finite_totals(const Book& book, const std::vector<ScoredObligor>& base) {
  double ead = 0.0, loss = 0.0;
  std::vector<std::size_t> with_ead;
  for (std::size_t i = 0; i < base.size(); ++i) {
    const ResolvedObligor& r = base[i].resolved;
    if (base[i].status != RowStatus::ok || !r.has_ead) continue;
    with_ead.push_back(i);
    ead += r.ead;
    loss += r.lgd * r.ead;
  }
  if (std::isfinite(ead) && std::isfinite(loss)) return;
  std::sort(with_ead.begin(), with_ead.end(),
            [&base](std::size_t a, std::size_t b) { return base[a].resolved.ead > base[b].resolved.ead; });
  std::string names;
  for (std::size_t k = 0; k < with_ead.size() && k < 5; ++k) {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.6g", base[with_ead[k]].resolved.ead);
    names += (k > 0 ? ", '" : "'") + book.obligors[with_ead[k]].get(TextField::id) + "' (ead " + buf + ")";
  }
  if (with_ead.size() > 5) names += " and " + std::to_string(with_ead.size() - 5) + " more";
  throw InputError(book.origin + ": the total " + (std::isfinite(ead) ? "loss amount (LGD x EAD)" : "EAD") +
                   " of the " + std::to_string(with_ead.size()) +
                   " scored obligors with ead is too large for a double (above 1.8e308), so the scenario "
                   "totals could not be computed; largest exposures: " +
                   names + " (check the EAD unit)");
}

// What the stressed rows of one scenario leave for its summary, by obligor.
struct ScenarioOutcome {
  std::vector<StressStatus> status;
  std::vector<std::uint8_t> shocked;
  std::vector<double> pd_stressed;
  std::vector<double> pd_calibrated_stressed;  // with a calibration: of the stressed DD
  std::vector<double> horizon_stressed;        // with a calibration
};

// Sums of one PD's scenario figures over the compared obligors, in book order.
struct PdTally {
  double threshold = 0.0;
  double sum_pd = 0.0, sum_pd_s = 0.0, sum_w = 0.0, sum_wpd = 0.0, sum_wpd_s = 0.0;
  ScenarioPdFigures f;
  // p0, p1: the PD of base and stressed DD; l0, l1: the PDs of the expected loss.
  void add(double p0, double p1, const ResolvedObligor& r, double l0, double l1) {
    sum_pd += p0;
    sum_pd_s += p1;
    if (p0 > threshold) ++f.above_threshold;
    if (p1 > threshold) ++f.above_threshold_stressed;
    if (p0 <= threshold && p1 > threshold) ++f.newly_above_threshold;
    if (r.has_ead) {
      sum_w += r.ead;
      sum_wpd += r.ead * p0;
      sum_wpd_s += r.ead * p1;
      f.expected_loss += l0 * r.lgd * r.ead;
      f.expected_loss_stressed += l1 * r.lgd * r.ead;
    }
  }
  ScenarioPdFigures figures(std::size_t compared) const {
    const double nan = std::nan("");
    ScenarioPdFigures out = f;
    out.mean_pd = compared > 0 ? sum_pd / static_cast<double>(compared) : nan;
    out.mean_pd_stressed = compared > 0 ? sum_pd_s / static_cast<double>(compared) : nan;
    out.ead_weighted_pd = sum_w > 0.0 ? sum_wpd / sum_w : nan;
    out.ead_weighted_pd_stressed = sum_w > 0.0 ? sum_wpd_s / sum_w : nan;
    return out;
  }
};

// The summary of one scenario, sequentially in book order (the same figures whatever the thread
// count); lists the failures the scenario caused in sum.problems.
ScenarioSummary summarise_scenario(const Book& book, const Scenario& sc,
                                   const std::vector<ScoredObligor>& base, const ScenarioOutcome& o,
                                   const std::vector<CalibratedPd>& base_calibrated,
                                   const ScoreSettings& settings, const StressSettings& stress,
                                   std::size_t max_listed, StressSummary& sum) {
  const std::size_t n = base.size();
  ScenarioSummary ss;
  ss.obligors = n;
  ss.pd_threshold = stress.pd_threshold;
  PdTally model;
  PdTally calibrated;
  model.threshold = calibrated.threshold = stress.pd_threshold;
  for (std::size_t i = 0; i < n; ++i) {
    if (o.status[i] != StressStatus::ok) {
      ++ss.failed;
      if (base[i].status == RowStatus::ok) {
        // A failure caused by the scenario: list it (base failures are listed once above). The
        // message is rebuilt here, only for the listed few.
        if (sum.problems.size() < max_listed) {
          StressedObligor again;
          stress_obligor(base[i], sc.effect_for(book.obligors[i]), settings, false, again, stress.hold);
          sum.problems.push_back(
              problem_text(book, book.obligors[i], "scenario '" + sc.name + "': " + again.message));
        } else {
          ++sum.problems_not_listed;
        }
      }
      continue;
    }
    ++ss.compared;
    if (o.shocked[i]) ++ss.shocked;
    const double p0 = base[i].measures.pd;
    const double p1 = o.pd_stressed[i];
    const ResolvedObligor& r = base[i].resolved;
    if (r.has_ead) ++ss.with_ead;
    model.add(p0, p1, r, p0, p1);
    if (sum.calibrated) {
      // Expected loss over the horizon as the model's: 1 - (1 - PD1)^T (driving_pd.hpp).
      const double c0 = base_calibrated[i].pd;
      const double c1 = o.pd_calibrated_stressed[i];
      calibrated.add(c0, c1, r, pd_over_horizon(c0, r.inputs.horizon_years),
                     pd_over_horizon(c1, o.horizon_stressed[i]));
    }
  }
  const ScenarioPdFigures m = model.figures(ss.compared);
  ss.mean_pd = m.mean_pd;
  ss.mean_pd_stressed = m.mean_pd_stressed;
  ss.ead_total = model.sum_w;
  ss.ead_weighted_pd = m.ead_weighted_pd;
  ss.ead_weighted_pd_stressed = m.ead_weighted_pd_stressed;
  ss.above_threshold = m.above_threshold;
  ss.above_threshold_stressed = m.above_threshold_stressed;
  ss.newly_above_threshold = m.newly_above_threshold;
  ss.expected_loss = m.expected_loss;
  ss.expected_loss_stressed = m.expected_loss_stressed;
  if (sum.calibrated) ss.calibrated = calibrated.figures(ss.compared);
  return ss;
}

// The calibrated one-year PD of a DD, NaN without a calibration or when `ok` is false.
CalibratedPd calibrated_at(const PdCalibration* cal, bool ok, double dd) noexcept {
  if (!cal || !ok) return {std::nan(""), std::nan(""), std::nan(""), false};
  return cal->evaluate(dd);
}

// Per-thread state of the stressed rows.
struct StressWorker {
  std::string out;
  std::vector<ShockEffect> effects;
  std::vector<StressedObligor> stressed;
};

}  // namespace

StressSummary run_stress(const Book& book, const std::vector<Scenario>& scenarios,
                         const std::string& scenario_origin, const ScoreSettings& settings,
                         const StressSettings& stress, const StressBookOptions& run, const TextSink& sink) {
  const std::size_t n = book.obligors.size();
  const unsigned threads = std::max(1U, run.threads);
  StressSummary sum;
  const PdCalibration* cal = run.pd_calibration;
  sum.calibrated = cal != nullptr;
  sum.driving_pd = cal ? run.driving_pd : DrivingPd::model;
  const bool calibrated_drives = sum.driving_pd == DrivingPd::calibrated;
  const std::vector<ScoredObligor> base =
      score_base_into(book, settings, threads, run.max_listed_problems, sum);
  std::vector<CalibratedPd> base_calibrated;
  if (cal) {
    base_calibrated.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
      base_calibrated[i] =
          calibrated_at(cal, base[i].status == RowStatus::ok, base[i].measures.distance_to_default);
    }
  }

  check_finite_totals(book, base);
  detail::StressRunInfo info{
      book.origin, scenario_origin,           settings,      stress, run.sensitivities, n, scenarios.size(),
      cal,         run.pd_calibration_origin, sum.driving_pd};
  const auto writer = detail::make_stress_writer(run.format, info);
  detail::sink_text(sink, [&](std::string& s) { writer->begin(s); });

  int grid_rows = 0;
  int grid_columns = 0;
  const bool keep_grid = init_grid(scenarios, n, run.format, sum.grid, grid_rows, grid_columns);

  std::vector<StressWorker> workers(threads);
  ScenarioOutcome outcome{std::vector<StressStatus>(n), std::vector<std::uint8_t>(n), std::vector<double>(n),
                          std::vector<double>(cal ? n : 0), std::vector<double>(cal ? n : 0)};
  const CalibratedPd no_calibration = calibrated_at(nullptr, false, 0.0);

  for (std::size_t si = 0; si < scenarios.size(); ++si) {
    const Scenario& sc = scenarios[si];
    const bool rows = writer->wants_rows(sc);
    detail::sink_text(sink, [&](std::string& s) { writer->scenario_begin(sc, si, s); });
    detail::write_in_chunks(n, run.chunk_obligors, workers, 64, sink,
                            [&](StressWorker& wk, std::size_t b, std::size_t e) {
                              // The slice's stressed obligors are solved together (solve_asset_batch).
                              wk.effects.resize(e - b);
                              if (wk.stressed.size() < e - b) wk.stressed.resize(e - b);
                              for (std::size_t i = b; i < e; ++i)
                                wk.effects[i - b] = sc.effect_for(book.obligors[i]);
                              stress_obligors(base.data() + b, wk.effects.data(), e - b, settings,
                                              run.sensitivities, wk.stressed.data(), stress.hold);
                              for (std::size_t i = b; i < e; ++i) {
                                const StressedObligor& st = wk.stressed[i - b];
                                outcome.status[i] = st.status;
                                outcome.shocked[i] = st.shocked() ? 1 : 0;
                                const bool ok = st.status == StressStatus::ok;
                                outcome.pd_stressed[i] = ok ? st.measures.pd : std::nan("");
                                detail::RowCalibratedPd pc{no_calibration, no_calibration};
                                if (cal) {
                                  pc.base = base_calibrated[i];
                                  pc.stressed = calibrated_at(cal, ok, st.measures.distance_to_default);
                                  outcome.pd_calibrated_stressed[i] = pc.stressed.pd;
                                  outcome.horizon_stressed[i] = st.inputs.horizon_years;
                                }
                                if (rows) writer->row(sc, book.obligors[i], base[i], st, pc, i == 0, wk.out);
                              }
                            });
    const ScenarioSummary ss = summarise_scenario(book, sc, base, outcome, base_calibrated, settings, stress,
                                                  run.max_listed_problems, sum);
    sum.rows += n;
    sum.failed_rows += ss.failed;
    if (keep_grid && sc.grid_row >= 0) {
      const std::size_t cells = static_cast<std::size_t>(grid_rows * grid_columns);
      const std::size_t cell = static_cast<std::size_t>(sc.grid_row * grid_columns + sc.grid_column);
      const std::vector<double>& pd =
          calibrated_drives ? outcome.pd_calibrated_stressed : outcome.pd_stressed;
      for (std::size_t i = 0; i < n; ++i) sum.grid.pd[i * cells + cell] = pd[i];
    }
    detail::sink_text(sink, [&](std::string& s) { writer->scenario_end(sc, ss, s); });
    sum.scenarios.push_back(ss);
  }
  if (keep_grid) {
    sum.grid.base_pd.assign(n, std::nan(""));
    for (std::size_t i = 0; i < n; ++i) {
      if (base[i].status == RowStatus::ok)
        sum.grid.base_pd[i] = calibrated_drives ? base_calibrated[i].pd : base[i].measures.pd;
    }
  }
  detail::sink_text(sink, [&](std::string& s) { writer->end(sum, scenarios, book, s); });
  return sum;
}

void reverse_stress_obligor(const ScoredObligor& base, double target_pd, const ReverseStressOptions& options,
                            ReverseStressRow& out) {
  out.status = base.status;
  out.message = base.message;
  out.equity_fall = ReverseResult{};
  out.vol_multiplier = ReverseResult{};
  out.pd = base.status == RowStatus::ok ? base.measures.pd : std::nan("");
  if (base.status != RowStatus::ok) return;
  out.equity_fall = reverse_equity_fall(base.resolved.inputs, target_pd, options);
  out.vol_multiplier = reverse_vol_multiplier(base.resolved.inputs, target_pd, options);
  const bool fall_failed = out.equity_fall.status == ReverseStatus::not_converged;
  const bool vol_failed = out.vol_multiplier.status == ReverseStatus::not_converged;
  if (fall_failed || vol_failed) {
    out.message = std::string("reverse stress: a solve on the ") +
                  (fall_failed ? "equity-fall" : "volatility-multiplier") + " path did not converge";
  }
}

ReverseStressSummary run_reverse_stress(const Book& book, double target_pd, const ScoreSettings& settings,
                                        const StressBookOptions& run, const TextSink& sink,
                                        const ReverseStressOptions& options) {
  const std::size_t n = book.obligors.size();
  const unsigned threads = std::max(1U, run.threads);
  ReverseStressSummary sum;
  const std::vector<ScoredObligor> base =
      score_base_into(book, settings, threads, run.max_listed_problems, sum);
  detail::StressRunInfo info{book.origin, "",      settings, StressSettings{}, false, n,
                             0,           nullptr, "",       DrivingPd::model};
  const auto writer = detail::make_reverse_stress_writer(run.format, info, target_pd, options);
  detail::sink_text(sink, [&](std::string& s) { writer->begin(s); });
  struct Worker {
    std::string out;
    ReverseStressRow row;
  };
  std::vector<Worker> workers(threads);
  std::vector<std::uint8_t> failed(n);
  detail::write_in_chunks(n, run.chunk_obligors, workers, 64, sink,
                          [&](Worker& wk, std::size_t b, std::size_t e) {
                            for (std::size_t i = b; i < e; ++i) {
                              reverse_stress_obligor(base[i], target_pd, options, wk.row);
                              failed[i] = base[i].status == RowStatus::ok && !wk.row.message.empty() ? 1 : 0;
                              writer->row(book.obligors[i], base[i], wk.row, i == 0, wk.out);
                            }
                          });
  for (std::size_t i = 0; i < n; ++i) {
    if (!failed[i]) continue;
    ++sum.search_failed;
    if (sum.problems.size() < run.max_listed_problems) {
      sum.problems.push_back(
          problem_text(book, book.obligors[i], "reverse stress: a solve on the path did not converge"));
    } else {
      ++sum.problems_not_listed;
    }
  }
  detail::sink_text(sink, [&](std::string& s) { writer->end(sum, s); });
  return sum;
}

OptionCheck StressBookOptions::validate() const {
  if (threads < 1) return OptionProblem{"threads", std::to_string(threads), "must be at least 1"};
  if (driving_pd == DrivingPd::calibrated && !pd_calibration) {
    return OptionProblem{"driving_pd", "calibrated", "needs a PD calibration"};
  }
  return std::nullopt;
}

}  // namespace firmcall
