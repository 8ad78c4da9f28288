// Stress and reverse-stress runs over a book. See include/firmcall/stress.hpp.
#include "firmcall/engine/stress_book.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <functional>
#include <thread>
#include <unordered_set>

#include "engine/chunked_rows.hpp"
#include "engine/stress_output.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/cells.hpp"
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

// Scores a piece of a book as it stands, in parallel, into base[0, piece.size()).
void score_piece(const std::vector<ObligorRecord>& piece, const BookDefaults& defaults,
                 const ScoreSettings& settings, unsigned threads, std::vector<ScoredObligor>& base) {
  if (base.size() < piece.size()) base.resize(piece.size());
  parallel_slices(piece.size(), threads, [&](unsigned, std::size_t b, std::size_t e) {
    for (std::size_t i = b; i < e; ++i) score_obligor(piece[i], defaults, settings, base[i]);
  });
}

// Counts a scored obligor among the base figures and lists its problem, in book order.
template <class Summary>
void count_base(const std::string& origin, const ObligorRecord& rec, const ScoredObligor& base,
                std::size_t max_listed, Summary& sum) {
  switch (base.status) {
    case RowStatus::ok:
      ++sum.base_ok;
      return;
    case RowStatus::invalid_input:
      ++sum.base_invalid;
      break;
    case RowStatus::not_converged:
      ++sum.base_not_converged;
      break;
  }
  if (sum.problems.size() < max_listed) {
    sum.problems.push_back(obligor_problem(origin, rec, base.message));
  } else {
    ++sum.problems_not_listed;
  }
}

// InputError when a later pass over a book does not find the obligors of the first.
void check_same_book(const std::string& origin, std::size_t first, std::size_t now) {
  if (first == now) return;
  throw InputError(origin + ": the book changed while it was read (" + std::to_string(first) +
                   " obligors on the first pass, " + std::to_string(now) + " on a later one)");
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
void check_finite_totals(const StressBookScan& scan) {
  if (std::isfinite(scan.ead_total) && std::isfinite(scan.loss_total)) return;
  std::string names;
  for (std::size_t k = 0; k < scan.largest_ead.size(); ++k) {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.6g", scan.largest_ead[k].first);
    names += (k > 0 ? ", '" : "'") + scan.largest_ead[k].second + "' (ead " + buf + ")";
  }
  if (scan.with_ead > 5) names += " and " + std::to_string(scan.with_ead - 5) + " more";
  throw InputError(scan.book.origin + ": the total " +
                   (std::isfinite(scan.ead_total) ? "loss amount (LGD x EAD)" : "EAD") + " of the " +
                   std::to_string(scan.with_ead) +
                   " scored obligors with ead is too large for a double (above 1.8e308), so the scenario "
                   "totals could not be computed; largest exposures: " +
                   names + " (check the EAD unit)");
}

// Adds a scored obligor with ead to the scan's totals and its five largest exposures (the
// earlier obligor first among equal ones).
void add_exposure(const ObligorRecord& rec, const ResolvedObligor& r, StressBookScan& scan) {
  ++scan.with_ead;
  scan.ead_total += r.ead;
  scan.loss_total += r.lgd * r.ead;
  auto& top = scan.largest_ead;
  if (top.size() == 5 && !(r.ead > top.back().first)) return;
  auto at = std::upper_bound(top.begin(), top.end(), r.ead,
                             [](double v, const std::pair<double, std::string>& e) { return v > e.first; });
  top.insert(at, {r.ead, rec.get(TextField::id)});
  if (top.size() > 5) top.pop_back();
}

// The rate that converts an obligor's EAD to the summaries' currency `to`: 1 without FX rates
// (or for `to` itself); the FX table's rate otherwise (summary_currency checked that it has one).
double summary_rate(const ObligorRecord& rec, const ScoreSettings& settings, const FxTable* fx,
                    std::string_view to) noexcept {
  if (!fx) return 1.0;
  const std::string_view c = obligor_currency(rec, settings);
  if (c == to) return 1.0;
  const FxRate* rate = fx->find(c);
  return rate ? rate->rate : std::nan("");
}

// The currency of the summaries (StressSummary::currency). With FX rates: the reporting currency,
// after checking that every currency of the book has a rate and every obligor a currency.
std::string summary_currency(const BookScan& scan, const ScoreSettings& settings,
                             const StressBookOptions& run) {
  std::vector<std::string> all = scan.currencies;
  if (scan.currency_missing && !settings.currency.empty()) {
    all.emplace_back(settings.currency.view());
    std::sort(all.begin(), all.end());
    all.erase(std::unique(all.begin(), all.end()), all.end());
  }
  const bool missing = scan.currency_missing && settings.currency.empty();
  if (!run.fx) return all.size() == 1 && !missing ? all.front() : std::string();
  if (const OptionCheck p = run.validate()) throw OptionError(p->field, p->constraint);
  const FxTable& fx = *run.fx;
  const std::string& to = run.reporting_currency;
  if (const FxRate* own = fx.find(to); own && own->rate != 1.0) {
    std::string got;
    append_number(got, own->rate);
    throw InputError(located(fx.origin, own->line,
                             "field 'rate': the reporting currency " + to + " converts at 1, got " + got));
  }
  if (missing) {
    throw InputError(scan.origin +
                     ": some obligors state no currency, so their amounts cannot be converted to " + to +
                     "; give their currency (or the setting scoring.currency)");
  }
  std::string lacking;
  for (const std::string& c : all) {
    if (c != to && is_currency_code(c) && !fx.find(c)) lacking.append(lacking.empty() ? "" : ", ").append(c);
  }
  if (!lacking.empty()) {
    throw InputError(fx.origin + ": no rate to " + to + " for " + lacking + " (currencies of " + scan.origin +
                     ")");
  }
  return to;
}

// What the stressed rows of one piece under one scenario leave for its summary, by obligor.
struct ScenarioOutcome {
  std::vector<StressStatus> status;
  std::vector<std::uint8_t> shocked;
  std::vector<double> pd_stressed;
  std::vector<double> pd_calibrated_stressed;  // with a calibration: of the stressed DD
  std::vector<double> horizon_stressed;        // with a calibration
  void resize(std::size_t n, bool calibrated) {
    status.resize(n);
    shocked.resize(n);
    pd_stressed.resize(n);
    pd_calibrated_stressed.resize(calibrated ? n : 0);
    horizon_stressed.resize(calibrated ? n : 0);
  }
};

// Sums of one PD's scenario figures over the compared obligors, in book order.
struct PdTally {
  double threshold = 0.0;
  double sum_pd = 0.0, sum_pd_s = 0.0, sum_w = 0.0, sum_wpd = 0.0, sum_wpd_s = 0.0;
  ScenarioPdFigures f;
  // p0, p1: the PD of base and stressed DD; l0, l1: the PDs of the expected loss.
  // `rate` converts the obligor's EAD to the summaries' currency.
  void add(double p0, double p1, const ResolvedObligor& r, double l0, double l1, double rate) {
    sum_pd += p0;
    sum_pd_s += p1;
    if (p0 > threshold) ++f.above_threshold;
    if (p1 > threshold) ++f.above_threshold_stressed;
    if (p0 <= threshold && p1 > threshold) ++f.newly_above_threshold;
    if (r.has_ead) {
      const double ead = r.ead * rate;
      sum_w += ead;
      sum_wpd += ead * p0;
      sum_wpd_s += ead * p1;
      f.expected_loss += l0 * r.lgd * ead;
      f.expected_loss_stressed += l1 * r.lgd * ead;
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

// The summary of one scenario, built piece by piece in book order (the same figures whatever
// the thread count and piece size).
class ScenarioTally {
 public:
  ScenarioTally(std::size_t obligors, double threshold) {
    ss_.obligors = obligors;
    ss_.pd_threshold = threshold;
    model_.threshold = calibrated_.threshold = threshold;
  }
  // Adds a piece; lists the failures the scenario caused in sum.problems.
  void add(const std::string& origin, const Scenario& sc, const std::vector<ObligorRecord>& piece,
           const std::vector<ScoredObligor>& base, const ScenarioOutcome& o,
           const std::vector<CalibratedPd>& base_calibrated, const ScoreSettings& settings,
           const StressSettings& stress, std::size_t max_listed, const FxTable* fx, StressSummary& sum) {
    for (std::size_t i = 0; i < piece.size(); ++i) {
      if (o.status[i] != StressStatus::ok) {
        ++ss_.failed;
        if (base[i].status == RowStatus::ok) {
          // A failure caused by the scenario: list it (base failures are listed once above). The
          // message is rebuilt here, only for the listed few.
          if (sum.problems.size() < max_listed) {
            StressedObligor again;
            stress_obligor(base[i], sc.effect_for(piece[i]), settings, false, again, stress.hold);
            sum.problems.push_back(
                obligor_problem(origin, piece[i], "scenario '" + sc.name + "': " + again.message));
          } else {
            ++sum.problems_not_listed;
          }
        }
        continue;
      }
      ++ss_.compared;
      if (o.shocked[i]) ++ss_.shocked;
      const double p0 = base[i].measures.pd;
      const double p1 = o.pd_stressed[i];
      const ResolvedObligor& r = base[i].resolved;
      if (r.has_ead) ++ss_.with_ead;
      const double rate = summary_rate(piece[i], settings, fx, sum.currency);
      model_.add(p0, p1, r, p0, p1, rate);
      if (sum.calibrated) {
        // Expected loss over the horizon as the model's: 1 - (1 - PD1)^T (driving_pd.hpp).
        const double c0 = base_calibrated[i].pd;
        const double c1 = o.pd_calibrated_stressed[i];
        calibrated_.add(c0, c1, r, pd_over_horizon(c0, r.inputs.horizon_years),
                        pd_over_horizon(c1, o.horizon_stressed[i]), rate);
      }
    }
  }
  ScenarioSummary finish(bool calibrated) const {
    ScenarioSummary ss = ss_;
    const ScenarioPdFigures m = model_.figures(ss.compared);
    ss.mean_pd = m.mean_pd;
    ss.mean_pd_stressed = m.mean_pd_stressed;
    ss.ead_total = model_.sum_w;
    ss.ead_weighted_pd = m.ead_weighted_pd;
    ss.ead_weighted_pd_stressed = m.ead_weighted_pd_stressed;
    ss.above_threshold = m.above_threshold;
    ss.above_threshold_stressed = m.above_threshold_stressed;
    ss.newly_above_threshold = m.newly_above_threshold;
    ss.expected_loss = m.expected_loss;
    ss.expected_loss_stressed = m.expected_loss_stressed;
    if (calibrated) ss.calibrated = calibrated_.figures(ss.compared);
    return ss;
  }

 private:
  ScenarioSummary ss_;
  PdTally model_;
  PdTally calibrated_;
};

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

// One piece of the book, scored as it stands, reused from piece to piece.
struct BasePiece {
  std::vector<ObligorRecord> obligors;
  std::vector<ScoredObligor> base;
  std::vector<CalibratedPd> calibrated;  // with a calibration
};

}  // namespace

BookPasses book_file_passes(const std::string& path) {
  return [path] { return BookStream::open(path); };
}

BookPasses book_passes(const Book& book) {
  return [&book]() -> std::unique_ptr<BookStream> { return BookStream::over(book); };
}

namespace {

// A note when the book's obligors name more than one currency: the summaries' EAD totals, EAD
// weights and expected losses then add amounts in different currencies.
void add_currency_note(const BookScan& scan, std::vector<std::string>& notes) {
  const std::vector<std::string>& currencies = scan.currencies;
  if (currencies.size() < 2) return;
  std::string names;
  for (const std::string& c : currencies) names.append(names.empty() ? "" : ", ").append(c);
  notes.push_back(
      scan.origin + ": note: the obligors' amounts are in " + std::to_string(currencies.size()) +
      " currencies (" + names +
      "); the summaries' ead_total, EAD-weighted PDs and expected losses add them up as they are, "
      "without conversion (the rows are each in their obligor's currency)");
}

}  // namespace

BookScan scan_book(const BookPasses& passes, std::size_t piece_obligors, bool keep_ids,
                   const std::function<void(const std::vector<ObligorRecord>& piece,
                                            const BookDefaults& defaults, std::size_t first)>& each) {
  const std::unique_ptr<BookStream> stream = passes();
  BookScan scan;
  scan.origin = stream->origin();
  scan.filter_book.origin = stream->origin();
  // Every distinct sector, country and currency (and id), each given to the first record of
  // filter_book that does not have one of that field yet.
  constexpr TextField kFields[] = {TextField::sector, TextField::country, TextField::currency, TextField::id};
  std::array<std::unordered_set<std::string>, 4> seen;
  std::array<std::size_t, 4> used{};
  std::vector<ObligorRecord> piece;
  while (stream->next(piece, piece_obligors)) {
    for (const ObligorRecord& rec : piece) {
      if (rec.get(TextField::currency).empty()) scan.currency_missing = true;
      for (std::size_t f = 0; f < (keep_ids ? 4U : 3U); ++f) {
        const std::string& v = rec.get(kFields[f]);
        if (v.empty() || !seen[f].insert(v).second) continue;
        if (used[f] == scan.filter_book.obligors.size()) scan.filter_book.obligors.emplace_back();
        scan.filter_book.obligors[used[f]++].get(kFields[f]) = v;
      }
    }
    each(piece, stream->defaults(), scan.obligors);
    scan.obligors += piece.size();
  }
  scan.notes = stream->notes();
  scan.currencies.assign(seen[2].begin(), seen[2].end());
  std::sort(scan.currencies.begin(), scan.currencies.end());
  return scan;
}

StressBookScan scan_stress_book(const BookPasses& passes, const ScoreSettings& settings,
                                const StressBookOptions& run, bool keep_ids) {
  StressBookScan scan;
  // The stream of the first pass, opened once: its origin names the problems.
  std::unique_ptr<BookStream> opened = passes();
  const std::string origin = opened->origin();
  auto shared = std::make_shared<std::unique_ptr<BookStream>>(std::move(opened));
  const BookPasses first = [shared]() { return std::move(*shared); };
  const unsigned threads = std::max(1U, run.threads);
  std::vector<ScoredObligor> base;
  scan.book =
      scan_book(passes, run.piece_obligors, keep_ids,
                [&](const std::vector<ObligorRecord>& piece, const BookDefaults& defaults, std::size_t) {
                  score_piece(piece, defaults, settings, threads, base);
                  for (std::size_t i = 0; i < piece.size(); ++i) {
                    count_base(origin, piece[i], base[i], run.max_listed_problems, scan);
                    if (base[i].status == RowStatus::ok && base[i].resolved.has_ead)
                      add_exposure(piece[i], base[i].resolved, scan);
                  }
                });
  return scan;
}

StressSummary run_stress(const BookPasses& passes, const StressBookScan& scan,
                         const std::vector<Scenario>& scenarios, const std::string& scenario_origin,
                         const ScoreSettings& settings, const StressSettings& stress,
                         const StressBookOptions& run, const TextSink& sink) {
  const std::string& origin = scan.book.origin;
  const std::size_t n = scan.book.obligors;
  const unsigned threads = std::max(1U, run.threads);
  StressSummary sum;
  sum.obligors = n;
  sum.notes = scan.book.notes;
  sum.currency = summary_currency(scan.book, settings, run);
  if (!run.fx) add_currency_note(scan.book, sum.notes);
  sum.base_ok = scan.base_ok;
  sum.base_invalid = scan.base_invalid;
  sum.base_not_converged = scan.base_not_converged;
  sum.problems = scan.problems;
  sum.problems_not_listed = scan.problems_not_listed;
  const PdCalibration* cal = run.pd_calibration;
  sum.calibrated = cal != nullptr;
  sum.driving_pd = cal ? run.driving_pd : DrivingPd::model;
  const bool calibrated_drives = sum.driving_pd == DrivingPd::calibrated;

  check_finite_totals(scan);
  detail::StressRunInfo info{
      origin, scenario_origin,           settings,      stress, run.sensitivities, n, scenarios.size(),
      cal,    run.pd_calibration_origin, sum.driving_pd};
  const auto writer = detail::make_stress_writer(run.format, info);
  detail::sink_text(sink, [&](std::string& s) { writer->begin(s); });

  int grid_rows = 0;
  int grid_columns = 0;
  const bool keep_grid = init_grid(scenarios, n, run.format, sum.grid, grid_rows, grid_columns);
  if (keep_grid) {
    sum.grid.base_pd.assign(n, std::nan(""));
    sum.grid.ids.reserve(n);
    sum.grid.names.reserve(n);
  }

  std::vector<StressWorker> workers(threads);
  ScenarioOutcome outcome;
  BasePiece piece;
  const CalibratedPd no_calibration = calibrated_at(nullptr, false, 0.0);

  for (std::size_t si = 0; si < scenarios.size(); ++si) {
    const Scenario& sc = scenarios[si];
    const bool rows = writer->wants_rows(sc);
    detail::sink_text(sink, [&](std::string& s) { writer->scenario_begin(sc, si, s); });
    ScenarioTally tally(n, stress.pd_threshold);
    const std::unique_ptr<BookStream> book = passes();
    std::size_t first = 0;  // book index of the piece's first obligor
    while (book->next(piece.obligors, run.piece_obligors)) {
      const std::vector<ObligorRecord>& recs = piece.obligors;
      const std::size_t m = recs.size();
      score_piece(recs, book->defaults(), settings, threads, piece.base);
      const std::vector<ScoredObligor>& base = piece.base;
      if (cal) {
        piece.calibrated.resize(m);
        for (std::size_t i = 0; i < m; ++i)
          piece.calibrated[i] =
              calibrated_at(cal, base[i].status == RowStatus::ok, base[i].measures.distance_to_default);
      }
      outcome.resize(m, cal != nullptr);
      detail::write_in_chunks(m, run.chunk_obligors, workers, 64, sink,
                              [&](StressWorker& wk, std::size_t b, std::size_t e) {
                                // The slice's stressed obligors are solved together (solve_asset_batch).
                                wk.effects.resize(e - b);
                                if (wk.stressed.size() < e - b) wk.stressed.resize(e - b);
                                for (std::size_t i = b; i < e; ++i)
                                  wk.effects[i - b] = sc.effect_for(recs[i]);
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
                                    pc.base = piece.calibrated[i];
                                    pc.stressed = calibrated_at(cal, ok, st.measures.distance_to_default);
                                    outcome.pd_calibrated_stressed[i] = pc.stressed.pd;
                                    outcome.horizon_stressed[i] = st.inputs.horizon_years;
                                  }
                                  if (rows) writer->row(sc, recs[i], base[i], st, pc, first + i == 0, wk.out);
                                }
                              });
      tally.add(origin, sc, recs, base, outcome, piece.calibrated, settings, stress, run.max_listed_problems,
                run.fx, sum);
      if (keep_grid && si == 0) {
        for (std::size_t i = 0; i < m && first + i < n; ++i) {
          sum.grid.ids.push_back(recs[i].get(TextField::id));
          sum.grid.names.push_back(recs[i].get(TextField::name));
          if (base[i].status == RowStatus::ok)
            sum.grid.base_pd[first + i] = calibrated_drives ? piece.calibrated[i].pd : base[i].measures.pd;
        }
      }
      if (keep_grid && sc.grid_row >= 0) {
        const std::size_t cells = static_cast<std::size_t>(grid_rows * grid_columns);
        const std::size_t cell = static_cast<std::size_t>(sc.grid_row * grid_columns + sc.grid_column);
        const std::vector<double>& pd =
            calibrated_drives ? outcome.pd_calibrated_stressed : outcome.pd_stressed;
        for (std::size_t i = 0; i < m && first + i < n; ++i) sum.grid.pd[(first + i) * cells + cell] = pd[i];
      }
      first += m;
    }
    check_same_book(origin, n, first);
    const ScenarioSummary ss = tally.finish(sum.calibrated);
    sum.rows += n;
    sum.failed_rows += ss.failed;
    detail::sink_text(sink, [&](std::string& s) { writer->scenario_end(sc, ss, s); });
    sum.scenarios.push_back(ss);
  }
  detail::sink_text(sink, [&](std::string& s) { writer->end(sum, scenarios, s); });
  return sum;
}

StressSummary run_stress(const Book& book, const std::vector<Scenario>& scenarios,
                         const std::string& scenario_origin, const ScoreSettings& settings,
                         const StressSettings& stress, const StressBookOptions& run, const TextSink& sink) {
  const BookPasses passes = book_passes(book);
  const StressBookScan scan = scan_stress_book(passes, settings, run);
  return run_stress(passes, scan, scenarios, scenario_origin, settings, stress, run, sink);
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

ReverseStressSummary run_reverse_stress(const BookPasses& passes, double target_pd,
                                        const ScoreSettings& settings, const StressBookOptions& run,
                                        const TextSink& sink, const ReverseStressOptions& options) {
  const unsigned threads = std::max(1U, run.threads);
  ReverseStressSummary sum;
  const std::unique_ptr<BookStream> book = passes();
  const std::string& origin = book->origin();
  detail::StressRunInfo info{origin, "",      settings, StressSettings{}, false, 0,
                             0,      nullptr, "",       DrivingPd::model};
  const auto writer = detail::make_reverse_stress_writer(run.format, info, target_pd, options);
  detail::sink_text(sink, [&](std::string& s) { writer->begin(s); });
  struct Worker {
    std::string out;
    ReverseStressRow row;
  };
  std::vector<Worker> workers(threads);
  std::vector<ObligorRecord> piece;
  std::vector<ScoredObligor> base;
  std::vector<std::uint8_t> failed;
  // The searches that failed, listed after every problem of the base.
  std::vector<std::string> search_problems;
  std::size_t first = 0;
  while (book->next(piece, run.piece_obligors)) {
    const std::size_t m = piece.size();
    score_piece(piece, book->defaults(), settings, threads, base);
    failed.assign(m, 0);
    detail::write_in_chunks(
        m, run.chunk_obligors, workers, 64, sink, [&](Worker& wk, std::size_t b, std::size_t e) {
          for (std::size_t i = b; i < e; ++i) {
            reverse_stress_obligor(base[i], target_pd, options, wk.row);
            failed[i] = base[i].status == RowStatus::ok && !wk.row.message.empty() ? 1 : 0;
            writer->row(piece[i], base[i], wk.row, first + i == 0, wk.out);
          }
        });
    for (std::size_t i = 0; i < m; ++i) {
      count_base(origin, piece[i], base[i], run.max_listed_problems, sum);
      if (!failed[i]) continue;
      ++sum.search_failed;
      if (search_problems.size() < run.max_listed_problems)
        search_problems.push_back(
            obligor_problem(origin, piece[i], "reverse stress: a solve on the path did not converge"));
    }
    first += m;
  }
  sum.obligors = first;
  sum.notes = book->notes();
  for (std::string& p : search_problems) {
    if (sum.problems.size() < run.max_listed_problems) {
      sum.problems.push_back(std::move(p));
    } else {
      ++sum.problems_not_listed;
    }
  }
  sum.problems_not_listed += sum.search_failed - search_problems.size();
  detail::sink_text(sink, [&](std::string& s) { writer->end(sum, s); });
  return sum;
}

ReverseStressSummary run_reverse_stress(const Book& book, double target_pd, const ScoreSettings& settings,
                                        const StressBookOptions& run, const TextSink& sink,
                                        const ReverseStressOptions& options) {
  return run_reverse_stress(book_passes(book), target_pd, settings, run, sink, options);
}

OptionCheck StressBookOptions::validate() const {
  if (threads < 1) return OptionProblem{"threads", std::to_string(threads), "must be at least 1"};
  if (piece_obligors < 1) return OptionProblem{"piece_obligors", "0", "must be at least 1"};
  if (driving_pd == DrivingPd::calibrated && !pd_calibration) {
    return OptionProblem{"driving_pd", "calibrated", "needs a PD calibration"};
  }
  if (fx && !is_currency_code(reporting_currency)) {
    return OptionProblem{"reporting_currency", "'" + reporting_currency + "'",
                         "must be three upper-case letters (ISO 4217 style, e.g. EUR) with FX rates"};
  }
  if (!fx && !reporting_currency.empty()) {
    return OptionProblem{"reporting_currency", "'" + reporting_currency + "'", "needs FX rates (fx)"};
  }
  return std::nullopt;
}

}  // namespace firmcall
