// Portfolio runs: obligors to exposures, then every model, as the book stands and under stress
// scenarios. See include/firmcall/portfolio.hpp.
#include "firmcall/engine/portfolio_book.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <set>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/model/pd_horizon.hpp"
#include "firmcall/util/parallel.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

std::string_view to_string(CorrelationSource s) noexcept {
  switch (s) {
    case CorrelationSource::command_line:
      return "command_line";
    case CorrelationSource::obligor:
      return "obligor";
    case CorrelationSource::sector:
      return "sector";
    case CorrelationSource::setting:
      return "setting";
    case CorrelationSource::basel:
      return "basel";
  }
  return "";
}

std::string_view to_string(PortfolioStatus s) noexcept {
  switch (s) {
    case PortfolioStatus::ok:
      return "ok";
    case PortfolioStatus::invalid_input:
      return "invalid_input";
    case PortfolioStatus::not_converged:
      return "not_converged";
    case PortfolioStatus::invalid_stress:
      return "invalid_stress";
  }
  return "";
}

std::string_view PortfolioObligor::irb_pd_basis() const noexcept {
  if (!ok()) return "";
  if (irb_on_calibrated) return "calibrated";
  return horizon_years == 1.0 ? "model" : "model_converted";
}

std::string level_label(double confidence_level) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.10g", 100.0 * confidence_level);
  std::string s = buf;
  std::replace(s.begin(), s.end(), '.', 'p');
  return s;
}

namespace {

std::string line_prefix(const ObligorRecord& rec) {
  return "line " + std::to_string(rec.line) + ": ";
}

// Everything the portfolio needs about one obligor that does not depend on the scenario.
struct Static {
  std::string error;  // a portfolio field is unusable (with "line N: ")
  std::uint32_t factor = 0;
  std::string currency;  // the obligor's (obligor_currency)
  double fx_rate = 1.0;  // to the reporting currency
};

Static static_of(const ObligorRecord& rec, const ScoredObligor& base, const CorrelationFile* corr) {
  Static s;
  if (!base.resolved.ok()) return s;  // the scoring message says why
  if (!base.resolved.has_ead) {
    s.error = line_prefix(rec) + "field 'ead': missing (the portfolio needs an exposure at default)";
    return s;
  }
  if (corr) {
    const std::string& sector = rec.get(TextField::sector);
    if (sector.empty()) {
      s.error = line_prefix(rec) + "field 'sector': missing (the correlation file " + corr->origin +
                " assigns factors by sector)";
      return s;
    }
    const auto f = corr->find(sector);
    if (!f) {
      std::vector<std::string> names;
      for (const SectorFactor& x : corr->factors) names.push_back(x.sector);
      s.error = line_prefix(rec) + "field 'sector': '" + sector + "' is not a factor of " + corr->origin;
      const std::string hint = detail::closest_name(sector, names);
      if (!hint.empty()) s.error += " (did you mean '" + hint + "'?)";
      return s;
    }
    s.factor = static_cast<std::uint32_t>(*f);
  }
  return s;
}

void fill_obligor(const ObligorRecord& rec, const ScoredObligor& base, const StressedObligor* stressed,
                  const Static& st, const CorrelationFile* corr, const Config& config,
                  const PortfolioBookOptions& options, PortfolioObligor& out) {
  out = PortfolioObligor{};
  const ResolvedObligor& r = base.resolved;
  out.currency = st.currency;
  out.fx_rate = st.fx_rate;
  if (r.ok()) {
    out.lgd = r.lgd;
    out.ead = r.has_ead ? r.ead * st.fx_rate : std::nan("");
    out.horizon_years = r.inputs.horizon_years;
  } else {
    out.lgd = out.ead = out.horizon_years = std::nan("");
  }
  out.pd = base.status == RowStatus::ok ? base.measures.pd : std::nan("");
  out.pd_one_year = out.pd_calibrated = out.pd_driving = std::nan("");
  if (base.status != RowStatus::ok) {
    out.status = base.status == RowStatus::invalid_input ? PortfolioStatus::invalid_input
                                                         : PortfolioStatus::not_converged;
    out.message = base.message;
    return;
  }
  if (stressed) {
    out.horizon_years = stressed->inputs.horizon_years;
    if (stressed->status != StressStatus::ok) {
      out.pd = std::nan("");
      out.status = stressed->status == StressStatus::invalid_stress ? PortfolioStatus::invalid_stress
                                                                    : PortfolioStatus::not_converged;
      out.message = line_prefix(rec) + stressed->message;
      return;
    }
    out.pd = stressed->measures.pd;
  }
  if (!st.error.empty()) {
    out.status = PortfolioStatus::invalid_input;
    out.message = st.error;
    return;
  }
  out.factor = st.factor;
  // The Basel functions take one-year PDs; the model PD stays as it is for EL and the loss models.
  out.pd_one_year = pd_one_year(out.pd, out.horizon_years);
  out.pd_driving = out.pd;
  double irb_pd = out.pd_one_year;
  if (options.pd_calibration) {
    const double dd = stressed ? stressed->measures.distance_to_default : base.measures.distance_to_default;
    out.pd_calibrated = options.pd_calibration->evaluate(dd).pd;
    // The driving PD sets IRB capital as well as EL and the loss models: one switch for all.
    if (options.driving_pd == DrivingPd::calibrated) {
      out.irb_on_calibrated = true;
      irb_pd = out.pd_calibrated;
      out.pd_driving = pd_over_horizon(out.pd_calibrated, out.horizon_years);
    }
  }
  // The Basel correlation function of the loss models follows the driving PD (one-year, floored).
  const bool calibrated_drives = options.pd_calibration && options.driving_pd == DrivingPd::calibrated;
  const double floored_pd =
      std::max(calibrated_drives ? out.pd_calibrated : out.pd_one_year, config.irb.pd_floor);
  if (options.basel_correlation) {
    out.asset_correlation = irb_corporate_correlation(floored_pd);
    out.correlation_source = CorrelationSource::basel;
  } else if (options.asset_correlation) {
    out.asset_correlation = *options.asset_correlation;
    out.correlation_source = CorrelationSource::command_line;
  } else if (r.has_asset_correlation) {
    out.asset_correlation = r.asset_correlation;
    out.correlation_source = CorrelationSource::obligor;
  } else if (corr && corr->factors[st.factor].asset_correlation) {
    out.asset_correlation = *corr->factors[st.factor].asset_correlation;
    out.correlation_source = CorrelationSource::sector;
  } else if (config.portfolio.asset_correlation) {
    out.asset_correlation = *config.portfolio.asset_correlation;
    out.correlation_source = CorrelationSource::setting;
  } else {
    out.asset_correlation = irb_corporate_correlation(floored_pd);
    out.correlation_source = CorrelationSource::basel;
  }
  out.maturity_years = r.has_maturity ? r.maturity_years : config.irb.maturity_years;
  IrbOptions irb_options;
  irb_options.pd_floor = config.irb.pd_floor;
  out.irb = irb_corporate(
      {.pd = irb_pd, .lgd = out.lgd, .ead = out.ead, .maturity_years = out.maturity_years}, irb_options);
  out.expected_loss = out.pd_driving * out.lgd * out.ead;
  out.status = PortfolioStatus::ok;
}

// Adds an included obligor's figures to a group.
void add_to_group(GroupTotals& g, const PortfolioScenarioResult& res, std::size_t i, std::size_t n,
                  std::size_t levels) {
  const PortfolioObligor& o = res.obligors[i];
  g.obligors += 1;
  g.ead += o.ead;
  g.expected_loss += o.expected_loss;
  g.irb_capital += o.irb.capital;
  g.rwa += o.irb.rwa;
  for (std::size_t l = 0; l < levels; ++l) {
    if (!res.exact.es_contributions.empty()) g.es_exact[l] += res.exact.es_contributions[l * n + i];
    if (!res.limit.es_contributions.empty()) g.es_limit[l] += res.limit.es_contributions[l * n + i];
    if (res.simulated && !res.mc.es_contributions.empty()) g.es_mc[l] += res.mc.es_contributions[l * n + i];
  }
}

GroupTotals empty_group(std::string name, std::size_t levels, bool simulated) {
  GroupTotals g;
  g.name = std::move(name);
  g.es_exact.assign(levels, 0.0);
  g.es_limit.assign(levels, 0.0);
  if (simulated) g.es_mc.assign(levels, 0.0);
  return g;
}

std::vector<GroupTotals*> groups_of(PortfolioScenarioResult& res) {
  std::vector<GroupTotals*> all = {&res.total};
  for (GroupTotals& g : res.sectors) all.push_back(&g);
  for (GroupTotals& g : res.countries) all.push_back(&g);
  return all;
}

// The total, sector and country groups of the included obligors (sorted by name).
void fill_groups(const Book& book, const std::vector<std::size_t>& included, std::size_t L,
                 PortfolioScenarioResult& res) {
  const std::size_t n = res.obligors.size();
  res.total = empty_group("total", L, res.simulated);
  std::map<std::string, GroupTotals> sectors, countries;
  for (std::size_t i : included) {
    add_to_group(res.total, res, i, n, L);
    std::string s = book.obligors[i].get(TextField::sector);
    std::string c = book.obligors[i].get(TextField::country);
    if (s.empty()) s = "(none)";
    if (c.empty()) c = "(none)";
    auto si = sectors.try_emplace(s, empty_group(s, L, res.simulated)).first;
    add_to_group(si->second, res, i, n, L);
    auto ci = countries.try_emplace(c, empty_group(c, L, res.simulated)).first;
    add_to_group(ci->second, res, i, n, L);
  }
  for (auto& [k, g] : sectors) res.sectors.push_back(std::move(g));
  for (auto& [k, g] : countries) res.countries.push_back(std::move(g));
  // Sums of contributions that were not computed are unknown, not zero.
  const double nan = std::nan("");
  for (GroupTotals* g : groups_of(res)) {
    if (res.exact.es_contributions.empty()) std::fill(g->es_exact.begin(), g->es_exact.end(), nan);
    if (res.limit.es_contributions.empty()) std::fill(g->es_limit.begin(), g->es_limit.end(), nan);
    if (res.simulated && res.mc.es_contributions.empty()) std::fill(g->es_mc.begin(), g->es_mc.end(), nan);
  }
}

// InputError when the total EAD, or the total loss amount LGD x EAD, of the included obligors is too
// large for a double (above about 1.8e308): every sum and risk measure of the run would be infinite.
// Names the total and the largest exposures, which are the ones to check.
void check_finite_totals(const Book& book, const PortfolioScenarioResult& res,
                         const std::vector<std::size_t>& included) {
  double ead = 0.0, loss = 0.0;
  for (std::size_t i : included) {
    ead += res.obligors[i].ead;
    loss += res.obligors[i].lgd * res.obligors[i].ead;
  }
  if (std::isfinite(ead) && std::isfinite(loss)) return;
  std::vector<std::size_t> largest = included;
  std::sort(largest.begin(), largest.end(),
            [&res](std::size_t a, std::size_t b) { return res.obligors[a].ead > res.obligors[b].ead; });
  std::string names;
  for (std::size_t k = 0; k < largest.size() && k < 5; ++k) {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.6g", res.obligors[largest[k]].ead);
    names += (k > 0 ? ", '" : "'") + book.obligors[largest[k]].get(TextField::id) + "' (ead " + buf + ")";
  }
  if (largest.size() > 5) names += " and " + std::to_string(largest.size() - 5) + " more";
  throw InputError(
      book.origin + ": the total " + (std::isfinite(ead) ? "loss amount (LGD x EAD)" : "EAD") + " of the " +
      std::to_string(included.size()) +
      " obligors in the portfolio is too large for a double (above 1.8e308), so no total or risk "
      "measure could be computed; largest exposures: " +
      names + " (check the EAD unit)");
}

// Runs every model over the included obligors of `res` and fills its results.
void compute(const Book& book, const CorrelationFile* corr, const Config& config,
             const PortfolioBookOptions& options, PortfolioScenarioResult& res,
             std::vector<std::string>& notes) {
  const std::size_t n = res.obligors.size();
  const auto& levels = config.portfolio.confidence_levels;
  const std::size_t L = levels.size();
  std::vector<std::size_t> included;
  std::vector<FactorExposure> one;
  std::vector<SectorExposure> multi;
  for (std::size_t i = 0; i < n; ++i) {
    const PortfolioObligor& o = res.obligors[i];
    if (!o.ok()) continue;
    included.push_back(i);
    one.push_back({o.pd_driving, o.lgd * o.ead, o.asset_correlation});
    multi.push_back({o.pd_driving, o.lgd * o.ead, o.asset_correlation, o.factor});
  }
  res.included = included.size();
  check_finite_totals(book, res, included);
  const std::size_t m = included.size();
  // Results over the included obligors, spread back to book order.
  const auto spread = [&](const std::vector<double>& v) {
    std::vector<double> out;
    if (v.empty()) return out;
    out.assign(L * n, 0.0);
    for (std::size_t l = 0; l < L; ++l) {
      for (std::size_t j = 0; j < m; ++j) out[l * n + included[j]] = v[l * m + j];
    }
    return out;
  };

  OneFactorOptions exact_options;
  exact_options.confidence_levels = levels;
  exact_options.grid_points = static_cast<std::size_t>(config.portfolio.loss_grid_points);
  exact_options.tolerance = config.portfolio.quadrature_tolerance;
  exact_options.contributions = options.contributions;
  exact_options.threads = options.threads;
  res.exact = one_factor_loss_distribution(one, exact_options);
  res.exact.es_contributions = spread(res.exact.es_contributions);
  if (res.exact.status == LossStatus::tolerance_not_met) {
    char buf[200];
    std::snprintf(buf, sizeof buf,
                  "%s: the exact distribution stopped at its budget of factor values with an estimated error "
                  "of %.2g (tolerance %.2g)",
                  res.name.c_str(), res.exact.error_estimate, config.portfolio.quadrature_tolerance);
    notes.push_back(buf);
  } else if (res.exact.status != LossStatus::ok) {
    notes.push_back(res.name + ": exact distribution: " + res.exact.message);
  }
  res.limit = large_portfolio_measures(one, levels);
  res.limit.var_contributions = spread(res.limit.var_contributions);
  res.limit.es_contributions = spread(res.limit.es_contributions);
  std::vector<double> grid_losses;
  if (options.distribution && !res.exact.probability.empty()) {
    grid_losses.resize(res.exact.probability.size());
    for (std::size_t k = 0; k < grid_losses.size(); ++k)
      grid_losses[k] = static_cast<double>(k) * res.exact.loss_unit;
    res.limit_exceedance.assign(grid_losses.size(), 0.0);
    large_portfolio_exceedance(one, grid_losses, res.limit_exceedance);
  }
  if (options.monte_carlo_scenarios > 0) {
    SimulationOptions sim;
    sim.scenarios = options.monte_carlo_scenarios;
    sim.seed = config.portfolio.seed;
    sim.confidence_levels = levels;
    sim.importance_sampling = options.importance_sampling;
    sim.contributions = options.contributions;
    sim.threads = options.threads;
    sim.exceedance_points = grid_losses;
    sim.exchange = options.exchange;
    if (options.progress) {
      sim.progress = [&](std::uint64_t done, std::uint64_t all) { options.progress(res.name, done, all); };
    }
    const FactorCholesky one_factor = single_factor();
    const FactorCholesky& factors = corr ? corr->cholesky : one_factor;
    if (corr && !corr->multi_factor()) {
      // Without a matrix every sector loads on the one factor.
      for (SectorExposure& e : multi) e.factor = 0;
    }
    res.mc = simulate_losses(multi, factors, sim);
    // Another process stopped the shared run: this one has nothing to report either.
    if (res.mc.status == SimulationStatus::peer_failed) throw InputError(res.name + ": " + res.mc.message);
    res.simulated = res.mc.status == SimulationStatus::ok;
    if (!res.simulated) notes.push_back(res.name + ": simulation: " + res.mc.message);
    res.mc.es_contributions = spread(res.mc.es_contributions);
    res.mc.es_contribution_se = spread(res.mc.es_contribution_se);
  }
  fill_groups(book, included, L, res);
}

std::string number_text(double v) {
  std::string s;
  append_number(s, v);
  return s;
}

// "'A', 'B', 'C' and 4 more": the ids of some obligors, at most five.
std::string id_list(const Book& book, const std::vector<std::size_t>& which) {
  std::string s;
  for (std::size_t k = 0; k < which.size() && k < 5; ++k) {
    if (k > 0) s.append(", ");
    s.append("'").append(book.obligors[which[k]].get(TextField::id)).append("'");
  }
  if (which.size() > 5) s.append(" and ").append(std::to_string(which.size() - 5)).append(" more");
  return s;
}

std::string obligors_phrase(const Book& book, const std::vector<std::size_t>& which) {
  std::string s = which.size() == 1 ? "obligor " : "obligors ";
  return s.append(id_list(book, which));
}

// The reporting currency of the run and each obligor's rate to it (see run_portfolio for the
// rules); fills the run's currency fields. Throws InputError naming the currencies and obligors.
void resolve_currencies(const Book& book, const ScoreSettings& settings, const PortfolioBookOptions& options,
                        PortfolioResult& run, std::vector<Static>& statics) {
  if (options.fx || !options.reporting_currency.empty()) {
    if (const OptionCheck p = options.validate()) throw OptionError(p->field, p->constraint);
  }
  std::map<std::string, std::vector<std::size_t>, std::less<>> by_currency;
  std::vector<std::size_t> without;
  for (std::size_t i = 0; i < book.obligors.size(); ++i) {
    const std::string_view c = obligor_currency(book.obligors[i], settings);
    statics[i].currency = std::string(c);
    if (c.empty()) {
      without.push_back(i);
    } else if (is_currency_code(c)) {
      by_currency[std::string(c)].push_back(i);
    }
  }
  std::string names;
  for (const auto& [c, which] : by_currency) names.append(names.empty() ? "" : ", ").append(c);
  if (!options.fx) {
    if (by_currency.size() > 1) {
      throw InputError(book.origin + ": the obligors' amounts are in " + std::to_string(by_currency.size()) +
                       " currencies (" + names +
                       "): a portfolio adds exposures and losses up in one currency; give FX rates and a "
                       "reporting currency");
    }
    if (by_currency.size() == 1 && !without.empty()) {
      throw InputError(book.origin + ": " + obligors_phrase(book, without) +
                       " state no currency while the others are in " + names +
                       "; give their currency (or the setting scoring.currency)");
    }
    if (!by_currency.empty()) {
      run.reporting_currency = by_currency.begin()->first;
      run.fx_used.push_back({run.reporting_currency, 1.0, 0});
    }
    return;
  }
  const FxTable& fx = *options.fx;
  const std::string& to = options.reporting_currency;
  run.reporting_currency = to;
  run.fx_origin = fx.origin;
  run.fx_as_of = fx.as_of;
  if (const FxRate* own = fx.find(to); own && own->rate != 1.0) {
    throw InputError(located(
        fx.origin, own->line,
        "field 'rate': the reporting currency " + to + " converts at 1, got " + number_text(own->rate)));
  }
  if (!without.empty()) {
    throw InputError(book.origin + ": " + obligors_phrase(book, without) +
                     " state no currency, so their amounts cannot be converted to " + to +
                     "; give their currency (or the setting scoring.currency)");
  }
  std::string missing;
  for (const auto& [c, which] : by_currency) {
    const FxRate* rate = c == to ? nullptr : fx.find(c);
    if (c != to && !rate) {
      missing.append(missing.empty() ? "" : "; ").append(c).append(" (").append(obligors_phrase(book, which));
      missing.append(")");
      continue;
    }
    const double r = rate ? rate->rate : 1.0;
    for (std::size_t i : which) statics[i].fx_rate = r;
    run.fx_used.push_back({c, r, rate ? rate->line : 0});
  }
  if (!missing.empty()) {
    throw InputError(fx.origin + ": no rate to " + to + " for " + missing + " of " + book.origin);
  }
}

// "3 at 1 year, 2 at 5 years": how many obligors have each horizon (the first eight horizons).
std::string horizon_counts(const std::map<double, std::size_t>& horizons) {
  std::string s;
  std::size_t listed = 0;
  for (const auto& [t, count] : horizons) {
    if (listed == 8) {
      s += ", and " + std::to_string(horizons.size() - listed) + " other horizons";
      break;
    }
    char buf[80];
    std::snprintf(buf, sizeof buf, "%s%zu at %g year%s", listed == 0 ? "" : ", ", count, t,
                  t == 1.0 ? "" : "s");
    s += buf;
    ++listed;
  }
  return s;
}

// Notes on the book as a whole: PDs over horizons other than one year or over different horizons,
// and sectors of the correlation file that no obligor names.
void add_book_notes(const Book& book, const std::vector<ScoredObligor>& base, const CorrelationFile* corr,
                    std::vector<std::string>& notes) {
  std::map<double, std::size_t> horizons;
  for (const ScoredObligor& b : base) {
    if (b.resolved.ok()) ++horizons[b.resolved.inputs.horizon_years];
  }
  if (horizons.size() > 1) {
    notes.push_back("obligors have different horizons (" + horizon_counts(horizons) +
                    "): expected loss and the loss distribution combine their PDs as they are; IRB capital "
                    "uses each PD converted to one year; give --horizon T to put every PD on one horizon");
  } else if (horizons.size() == 1 && horizons.begin()->first != 1.0) {
    char buf[240];
    std::snprintf(buf, sizeof buf,
                  "PDs are over %g years: expected loss and the loss distribution are over that horizon; IRB "
                  "capital uses one-year PDs, 1 - (1 - PD)^(1/T)",
                  horizons.begin()->first);
    notes.push_back(buf);
  }
  if (corr) {
    std::set<std::string> used;
    for (const ObligorRecord& rec : book.obligors) used.insert(rec.get(TextField::sector));
    for (const SectorFactor& f : corr->factors) {
      if (!used.count(f.sector)) {
        notes.push_back(corr->origin + ":" + std::to_string(f.line) + ": sector '" + f.sector +
                        "' has no obligor in " + book.origin);
      }
    }
  }
}

}  // namespace

std::vector<std::string> book_currencies(const Book& book, const ScoreSettings& settings) {
  std::set<std::string, std::less<>> found;
  for (const ObligorRecord& rec : book.obligors) {
    const std::string_view c = obligor_currency(rec, settings);
    if (is_currency_code(c) && !found.contains(c)) found.emplace(c);
  }
  return {found.begin(), found.end()};
}

PortfolioResult run_portfolio(const Book& book, const std::vector<Scenario>& scenarios,
                              const std::string& scenario_origin, const CorrelationFile* corr,
                              const Config& config, const PortfolioBookOptions& options) {
  for (const Scenario& sc : scenarios) {
    if (sc.name == "base") {
      throw InputError(
          located(scenario_origin, sc.line,
                  "scenario 'base': the name is reserved for the book as it stands in portfolio runs"));
    }
  }
  PortfolioResult run;
  run.book_origin = book.origin;
  run.correlation_origin = corr ? corr->origin : "";
  run.scenario_origin = scenario_origin;
  run.stress_hold = config.stress.hold;
  run.multi_factor = corr && corr->multi_factor();
  run.factors = run.multi_factor ? corr->factors.size() : 1;
  run.confidence_levels = config.portfolio.confidence_levels;
  run.settings = config.score;
  run.portfolio = config.portfolio;
  run.irb = config.irb;
  run.options = options;
  run.options.progress = nullptr;
  run.notes = book.notes;
  const std::size_t n = book.obligors.size();
  const unsigned threads = std::max(1U, options.threads);

  std::vector<ScoredObligor> base(n);
  parallel_for((n + 255) / 256, threads, [&](std::size_t t, unsigned) {
    for (std::size_t i = t * 256; i < std::min(n, (t + 1) * 256); ++i) {
      score_obligor(book.obligors[i], book.defaults, config.score, base[i]);
    }
  });
  std::vector<Static> statics(n);
  for (std::size_t i = 0; i < n; ++i) statics[i] = static_of(book.obligors[i], base[i], corr);
  resolve_currencies(book, config.score, options, run, statics);
  add_book_notes(book, base, corr, run.notes);

  const auto problem = [&](const std::string& scenario, std::size_t i, const std::string& message) {
    ++run.failed_rows;
    if (run.problems.size() >= options.max_listed_problems) {
      ++run.problems_not_listed;
      return;
    }
    const ObligorRecord& rec = book.obligors[i];
    std::string p = scenario.empty() ? "" : "scenario '" + scenario + "': ";
    p += obligor_problem(book.origin, rec, message);
    run.problems.push_back(p);
  };

  // The book as it stands.
  {
    PortfolioScenarioResult res;
    res.name = "base";
    res.description = "the book as it stands";
    res.obligors.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
      fill_obligor(book.obligors[i], base[i], nullptr, statics[i], corr, config, options, res.obligors[i]);
      if (!res.obligors[i].ok()) problem("", i, res.obligors[i].message);
    }
    for (const PortfolioObligor& o : res.obligors) {
      if (!o.ok()) continue;
      if (o.horizon_years != 1.0 && !o.irb_on_calibrated) ++run.pd_converted;
      if ((o.irb_on_calibrated ? o.pd_calibrated : o.pd_one_year) < config.irb.pd_floor) ++run.pd_floored;
    }
    compute(book, corr, config, options, res, run.notes);
    run.scenarios.push_back(std::move(res));
  }
  // Each scenario: obligors that were left out as the book stands stay out silently (listed once).
  for (const Scenario& sc : scenarios) {
    PortfolioScenarioResult res;
    res.name = sc.name;
    res.description = sc.description;
    res.obligors.resize(n);
    std::vector<StressedObligor> stressed(n);
    parallel_for((n + 255) / 256, threads, [&](std::size_t t, unsigned) {
      for (std::size_t i = t * 256; i < std::min(n, (t + 1) * 256); ++i) {
        stress_obligor(base[i], sc.effect_for(book.obligors[i]), config.score, false, stressed[i],
                       config.stress.hold);
      }
    });
    for (std::size_t i = 0; i < n; ++i) {
      fill_obligor(book.obligors[i], base[i], &stressed[i], statics[i], corr, config, options,
                   res.obligors[i]);
      if (!res.obligors[i].ok()) {
        if (run.scenarios.front().obligors[i].ok()) {
          problem(sc.name, i, res.obligors[i].message);
        } else {
          ++run.failed_rows;
        }
      }
    }
    compute(book, corr, config, options, res, run.notes);
    run.scenarios.push_back(std::move(res));
  }
  return run;
}

OptionCheck PortfolioBookOptions::validate() const {
  if (threads < 1) return OptionProblem{"threads", std::to_string(threads), "must be at least 1"};
  if (asset_correlation && !(*asset_correlation >= 0.0 && *asset_correlation < 1.0)) {
    return OptionProblem{"asset_correlation", option_value_text(*asset_correlation), "must be in [0, 1)"};
  }
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
