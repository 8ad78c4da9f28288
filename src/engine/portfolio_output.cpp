// Writers of the portfolio outputs: table for people, CSV and JSON obligor rows, the summary CSV
// (long format) and the loss distribution CSV. See include/firmcall/portfolio.hpp.
#include <cmath>
#include <cstdio>
#include <string>

#include "firmcall/engine/portfolio_book.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/json_writer.hpp"

namespace firmcall {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// One cell of an obligor row: text or a number (NaN: empty / null).
struct Cell {
  bool text = false;
  std::string s;
  double v = kNaN;
};

Cell num(double v) {
  return Cell{false, {}, v};
}
Cell txt(std::string s) {
  return Cell{true, std::move(s), kNaN};
}

std::vector<Cell> row_cells(const PortfolioResult& run, const PortfolioScenarioResult& sc, const Book& book,
                            std::size_t i) {
  const std::size_t n = sc.obligors.size();
  const std::size_t L = run.confidence_levels.size();
  const ObligorRecord& rec = book.obligors[i];
  const PortfolioObligor& o = sc.obligors[i];
  const bool ok = o.ok();
  std::vector<Cell> c;
  c.reserve(24 + 4 * L);
  c.push_back(txt(sc.name));
  c.push_back(txt(rec.get(TextField::id)));
  c.push_back(txt(rec.get(TextField::name)));
  c.push_back(txt(rec.get(TextField::sector)));
  c.push_back(txt(rec.get(TextField::country)));
  c.push_back(txt(o.currency));
  c.push_back(num(o.fx_rate));
  c.push_back(txt(run.reporting_currency));
  c.push_back(txt(std::string(to_string(o.status))));
  c.push_back(num(o.pd));
  c.push_back(num(o.lgd));
  c.push_back(num(o.ead));
  c.push_back(num(o.horizon_years));
  c.push_back(num(ok ? o.pd_one_year : kNaN));
  if (run.options.pd_calibration) {
    c.push_back(num(ok ? o.pd_calibrated : kNaN));
    c.push_back(num(ok ? o.pd_driving : kNaN));
  }
  c.push_back(num(ok ? o.expected_loss : kNaN));
  c.push_back(num(ok ? o.asset_correlation : kNaN));
  c.push_back(txt(ok ? std::string(to_string(o.correlation_source)) : std::string()));
  c.push_back(num(ok ? o.maturity_years : kNaN));
  c.push_back(num(ok ? o.irb.pd : kNaN));
  c.push_back(txt(std::string(o.irb_pd_basis())));
  c.push_back(num(ok ? o.irb.correlation : kNaN));
  c.push_back(num(ok ? o.irb.capital_ratio : kNaN));
  c.push_back(num(ok ? o.irb.risk_weight : kNaN));
  c.push_back(num(ok ? o.irb.capital : kNaN));
  c.push_back(num(ok ? o.irb.rwa : kNaN));
  const auto at = [&](const std::vector<double>& v, std::size_t l) {
    return ok && !v.empty() ? v[l * n + i] : kNaN;
  };
  for (std::size_t l = 0; l < L; ++l) c.push_back(num(at(sc.exact.es_contributions, l)));
  for (std::size_t l = 0; l < L; ++l) c.push_back(num(at(sc.limit.es_contributions, l)));
  if (run.options.monte_carlo_scenarios > 0) {
    for (std::size_t l = 0; l < L; ++l) {
      c.push_back(num(sc.simulated ? at(sc.mc.es_contributions, l) : kNaN));
      c.push_back(num(sc.simulated ? at(sc.mc.es_contribution_se, l) : kNaN));
    }
  }
  c.push_back(txt(o.message));
  return c;
}

void append_cells_csv(std::string& out, const std::vector<Cell>& cells) {
  for (std::size_t k = 0; k < cells.size(); ++k) {
    if (k > 0) out.push_back(',');
    if (cells[k].text) {
      append_csv_text(out, cells[k].s);
    } else {
      append_number(out, cells[k].v);
    }
  }
  out.push_back('\n');
}

void append_header_csv(std::string& out, const std::vector<std::string>& names) {
  for (std::size_t k = 0; k < names.size(); ++k) {
    if (k > 0) out.push_back(',');
    out += names[k];
  }
  out.push_back('\n');
}

// ---------------------------------------------------------------- formatting for the table

std::string small(double v, int decimals) {
  char buf[64];
  if (!std::isfinite(v)) return "-";
  if (v == 0.0) return "0";
  if (std::fabs(v) >= std::pow(10.0, -decimals + 1) && std::fabs(v) < 1e9) {
    std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  } else {
    std::snprintf(buf, sizeof buf, "%.2e", v);
  }
  return buf;
}

std::string percent_label(double level) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.10g%%", 100.0 * level);
  return buf;
}

std::string fit(const std::string& s, std::size_t w) {
  if (s.size() <= w) return s;
  return s.substr(0, w - 1) + "~";
}

// Appends `text` wrapped at 110 columns, continuation lines indented by two spaces.
void append_wrapped(std::string& out, const std::string& text) {
  constexpr std::size_t kWidth = 110;
  std::size_t start = 0;
  bool first = true;
  while (start < text.size()) {
    const std::size_t room = first ? kWidth : kWidth - 2;
    std::size_t end = text.size();
    if (end - start > room) {
      end = text.rfind(' ', start + room);
      if (end == std::string::npos || end <= start) end = start + room;
    }
    out += first ? "" : "  ";
    out.append(text, start, end - start);
    out += "\n";
    start = end;
    while (start < text.size() && text[start] == ' ') ++start;
    first = false;
  }
}

std::string with_se(double v, double se, int decimals) {
  if (!std::isfinite(v)) return "-";
  return small(v, decimals) + " (" + small(se, decimals) + ")";
}

std::string correlation_text(const PortfolioResult& run) {
  if (run.options.basel_correlation) return "the Basel corporate function of PD for every obligor";
  if (run.options.asset_correlation) {
    return small(100.0 * *run.options.asset_correlation, 1) + "% for every obligor (--asset-correlation)";
  }
  std::string s = "the obligor's asset_correlation, else ";
  if (!run.correlation_origin.empty()) s += "its sector's in " + run.correlation_origin + ", else ";
  if (run.portfolio.asset_correlation) return s + small(100.0 * *run.portfolio.asset_correlation, 1) + "%";
  return s + "the Basel corporate function of PD (12% to 24%)";
}

// The currency of the amounts, and the FX rates used when there are some.
std::string currency_text(const PortfolioResult& run) {
  if (run.reporting_currency.empty())
    return "Amounts (EAD, losses, capital): in the book's unit (no currency stated)";
  std::string s = "Amounts (EAD, losses, capital): ";
  s += run.reporting_currency;
  if (run.fx_origin.empty()) return s + ", the currency of every obligor";
  s += ", converted at the rates of " + run.fx_origin + " as of " + run.fx_as_of + " (" +
       run.reporting_currency + " per unit):";
  for (std::size_t k = 0; k < run.fx_used.size(); ++k) {
    s += k > 0 ? ", " : " ";
    s += run.fx_used[k].currency;
    s += " ";
    append_number(s, run.fx_used[k].rate);
  }
  return s;
}

void group_line(std::string& out, const std::string& label, const GroupTotals& g) {
  char buf[256];
  const double el_pct = g.ead > 0.0 ? 100.0 * g.expected_loss / g.ead : kNaN;
  std::snprintf(buf, sizeof buf, "%-26s %8zu %13s %13s %9s %13s %14s\n", fit(label, 26).c_str(), g.obligors,
                small(g.ead, 2).c_str(), small(g.expected_loss, 4).c_str(), small(el_pct, 3).c_str(),
                small(g.irb_capital, 2).c_str(), small(g.rwa, 2).c_str());
  out += buf;
}

void measures_table(std::string& out, const PortfolioResult& run, const PortfolioScenarioResult& sc) {
  const std::size_t L = run.confidence_levels.size();
  const bool mc = sc.simulated;
  const int width = mc ? 22 : 13;
  char buf[128];
  out += "\n";
  std::snprintf(buf, sizeof buf, "%-34s", "Loss distribution");
  out += buf;
  for (double level : run.confidence_levels) {
    std::snprintf(buf, sizeof buf, "%*s", width, percent_label(level).c_str());
    out += buf;
  }
  out += "\n";
  const auto line = [&](const char* label, const auto& value) {
    std::snprintf(buf, sizeof buf, "%-34s", label);
    out += buf;
    for (std::size_t l = 0; l < L; ++l) {
      std::snprintf(buf, sizeof buf, "%*s", width, value(l).c_str());
      out += buf;
    }
    out += "\n";
  };
  const bool exact_ok = sc.exact.status == LossStatus::ok || sc.exact.status == LossStatus::tolerance_not_met;
  const auto exact = [&](auto f) {
    return [&, f](std::size_t l) { return exact_ok ? small(f(sc.exact.tails[l]), 2) : std::string("-"); };
  };
  line("  VaR, exact one factor", exact([](const LossTail& t) { return t.var; }));
  line("  ES, exact one factor", exact([](const LossTail& t) { return t.es; }));
  line("  VaR - EL, exact one factor",
       exact([&](const LossTail& t) { return t.var - sc.exact.expected_loss; }));
  if (sc.limit.ok) {
    line("  VaR, large-portfolio limit", [&](std::size_t l) { return small(sc.limit.tails[l].var, 2); });
    line("  ES, large-portfolio limit", [&](std::size_t l) { return small(sc.limit.tails[l].es, 2); });
  }
  if (mc) {
    line("  VaR, Monte Carlo (std. error)",
         [&](std::size_t l) { return with_se(sc.mc.tails[l].var, sc.mc.tails[l].var_se, 2); });
    line("  ES, Monte Carlo (std. error)",
         [&](std::size_t l) { return with_se(sc.mc.tails[l].es, sc.mc.tails[l].es_se, 2); });
  }
}

void groups_table(std::string& out, const PortfolioScenarioResult& sc, bool with_countries) {
  char buf[256];
  std::snprintf(buf, sizeof buf, "%-26s %8s %13s %13s %9s %13s %14s\n", "", "obligors", "EAD", "expected",
                "EL % of", "IRB capital", "RWA");
  out += buf;
  std::snprintf(buf, sizeof buf, "%-26s %8s %13s %13s %9s %13s %14s\n", "", "", "", "loss", "EAD", "", "");
  out += buf;
  out += std::string(104, '-') + "\n";
  group_line(out, "total", sc.total);
  for (const GroupTotals& g : sc.sectors) group_line(out, "sector " + g.name, g);
  if (with_countries) {
    for (const GroupTotals& g : sc.countries) group_line(out, "country " + g.name, g);
  }
}

void obligor_table(std::string& out, const PortfolioResult& run, const PortfolioScenarioResult& sc,
                   const Book& book) {
  const std::size_t n = sc.obligors.size();
  const std::size_t L = run.confidence_levels.size();
  const std::size_t top = L - 1;
  const double es = sc.exact.tails.empty() ? kNaN : sc.exact.tails[top].es;
  char buf[320];
  out +=
      "\nObligors (ES contribution at " + percent_label(run.confidence_levels[top]) + ", exact one factor)\n";
  constexpr const char* kFormat = "%-10s %-10s %-10s %-3s %9s %5s %8s %9s %5s %9s %6s %7s  %s\n";
  std::snprintf(buf, sizeof buf, kFormat, "obligor", "name", "sector", "cur", "PD %", "LGD %", "EAD",
                "expected", "rho %", "ES", "share", "IRB RW", "status");
  out += buf;
  std::snprintf(buf, sizeof buf, kFormat, "", "", "", "", "", "", "", "loss", "", "contrib.", "%", "%", "");
  out += buf;
  out += std::string(118, '-') + "\n";
  for (std::size_t i = 0; i < n; ++i) {
    const ObligorRecord& rec = book.obligors[i];
    const PortfolioObligor& o = sc.obligors[i];
    const bool ok = o.ok();
    const double contrib =
        ok && !sc.exact.es_contributions.empty() ? sc.exact.es_contributions[top * n + i] : kNaN;
    std::snprintf(buf, sizeof buf, kFormat, fit(rec.get(TextField::id), 10).c_str(),
                  fit(rec.get(TextField::name), 10).c_str(), fit(rec.get(TextField::sector), 10).c_str(),
                  fit(o.currency, 3).c_str(), small(100.0 * o.pd, 4).c_str(), small(100.0 * o.lgd, 1).c_str(),
                  small(o.ead, 2).c_str(), small(ok ? o.expected_loss : kNaN, 4).c_str(),
                  small(ok ? 100.0 * o.asset_correlation : kNaN, 1).c_str(), small(contrib, 3).c_str(),
                  small(ok && es > 0.0 ? 100.0 * contrib / es : kNaN, 2).c_str(),
                  small(ok ? 100.0 * o.irb.risk_weight : kNaN, 2).c_str(),
                  std::string(to_string(o.status)).c_str());
    out += buf;
  }
  out += std::string(118, '-') + "\n";
  for (std::size_t i = 0; i < n; ++i) {
    if (sc.obligors[i].ok()) continue;
    const std::string& id = book.obligors[i].get(TextField::id);
    out += "  " + (id.empty() ? std::string("?") : id) + ": " + sc.obligors[i].message + "\n";
  }
}

void write_table(const PortfolioResult& run, const Book& book, const TextSink& sink) {
  std::string out;
  const PortfolioScenarioResult& base = run.scenarios.front();
  const std::size_t L = run.confidence_levels.size();
  out += "Portfolio loss: book " + run.book_origin + ", " + std::to_string(base.obligors.size()) +
         " obligors, " + std::to_string(base.included) + " in the portfolio\n";
  out += "PD: Merton (" + std::string(to_string(run.settings.measure)) +
         " measure) at each obligor's horizon; LGD as " + "given (" +
         small(100.0 * run.settings.default_lgd, 0) + "% where none is given)\n";
  if (run.options.pd_calibration) {
    append_wrapped(out, "Driving PD: " + std::string(to_string(run.options.driving_pd)) +
                            " (--driving-pd); calibrated one-year PDs from " +
                            run.options.pd_calibration_origin + " (" +
                            std::string(to_string(run.options.pd_calibration->method)) +
                            ") of each obligor's distance to default");
  }
  if (run.options.pd_calibration && run.options.driving_pd == DrivingPd::calibrated) {
    out +=
        "Expected loss and loss distribution: over each obligor's horizon (calibrated PD, "
        "1 - (1 - PD1)^T)\n";
  } else {
    out += "Expected loss and loss distribution: over each obligor's horizon (model PD)\n";
  }
  append_wrapped(out, "Asset correlation: " + correlation_text(run));
  if (!run.scenario_origin.empty()) {
    out +=
        run.stress_hold == StressHold::asset_vol
            ? "Scenarios of " + run.scenario_origin +
                  ": asset volatility held, equity volatility as the model implies (stress.hold asset-vol)\n"
            : "Scenarios of " + run.scenario_origin + ": equity volatility held (stress.hold equity-vol)\n";
  }
  if (base.exact.status != LossStatus::invalid_input) {
    char buf[256];
    std::snprintf(
        buf, sizeof buf,
        "Exact one factor: loss grid of %zu points, %s apart; %zu factor values (estimated error %.1e)\n",
        base.exact.probability.size(), small(base.exact.loss_unit, 4).c_str(), base.exact.nodes,
        base.exact.error_estimate);
    out += buf;
  }
  if (run.options.monte_carlo_scenarios > 0) {
    out += "Monte Carlo: " + std::to_string(run.options.monte_carlo_scenarios) + " scenarios, seed " +
           std::to_string(run.portfolio.seed) + ", " +
           (run.multi_factor
                ? std::to_string(run.factors) + " sector factors correlated by " + run.correlation_origin
                : std::string("one factor")) +
           (run.options.importance_sampling ? ", importance sampling (factor mean shifted)" : "") + "\n";
  }
  {
    char buf[200];
    append_wrapped(out, currency_text(run));
    std::snprintf(buf, sizeof buf, "IRB: Basel II corporate formula, maturity %g years unless given\n",
                  run.irb.maturity_years);
    out += buf;
    std::snprintf(buf, sizeof buf, "PD floor %g%% (%s), %zu obligors raised to it", 100.0 * run.irb.pd_floor,
                  std::string(pd_floor_source(run.irb.pd_floor_rule)).c_str(), run.pd_floored);
    const bool calibrated_irb = run.options.pd_calibration && run.options.driving_pd == DrivingPd::calibrated;
    const std::string basis =
        calibrated_irb ? std::string("the calibrated one-year PD")
        : run.pd_converted > 0
            ? std::to_string(run.pd_converted) + " model PDs converted to one year, 1 - (1 - PD)^(1/T)"
            : std::string("the model PD, its horizon is one year");
    append_wrapped(out, "IRB PD: one-year PD (" + basis + "); " + buf);
  }
  for (std::size_t s = 0; s < run.scenarios.size(); ++s) {
    const PortfolioScenarioResult& sc = run.scenarios[s];
    out += "\n";
    out += s == 0 ? std::string("The book as it stands")
                  : "Scenario " + sc.name + (sc.description.empty() ? "" : " - " + sc.description);
    out += "\n";
    groups_table(out, sc, s == 0);
    measures_table(out, run, sc);
    if (s == 0) obligor_table(out, run, sc, book);
    sink(out);
    out.clear();
  }
  if (run.scenarios.size() > 1) {
    const std::size_t top = L - 1;
    const std::string lv = percent_label(run.confidence_levels[top]);
    char buf[256];
    out += "\nScenario comparison (exact one factor; IRB capital)\n";
    std::snprintf(buf, sizeof buf, "%-22s %9s %13s %13s %13s %13s %14s\n", "scenario", "obligors",
                  "expected loss", ("VaR " + lv).c_str(), ("ES " + lv).c_str(), "IRB capital", "RWA");
    out += buf;
    out += std::string(104, '-') + "\n";
    for (const PortfolioScenarioResult& sc : run.scenarios) {
      const bool ok = !sc.exact.tails.empty() && sc.exact.status != LossStatus::grid_too_short;
      std::snprintf(buf, sizeof buf, "%-22s %9zu %13s %13s %13s %13s %14s\n", fit(sc.name, 22).c_str(),
                    sc.included, small(sc.total.expected_loss, 4).c_str(),
                    small(ok ? sc.exact.tails[top].var : kNaN, 2).c_str(),
                    small(ok ? sc.exact.tails[top].es : kNaN, 2).c_str(),
                    small(sc.total.irb_capital, 2).c_str(), small(sc.total.rwa, 2).c_str());
      out += buf;
    }
  }
  out +=
      "\nModel estimates under the Merton and one-factor (Gaussian copula) assumptions; not a credit "
      "decision "
      "on their own.\n";
  sink(out);
}

// ---------------------------------------------------------------- JSON

void json_key(std::string& out, std::string_view key) {
  out += '"';
  out += key;
  out += "\": ";
}

void group_json(std::string& out, const PortfolioResult& run, const GroupTotals& g) {
  out += "{";
  json_key(out, "name");
  append_json_string(out, g.name);
  out += ", ";
  json_key(out, "obligors");
  out += std::to_string(g.obligors);
  const std::pair<const char*, double> values[] = {
      {"ead", g.ead}, {"expected_loss", g.expected_loss}, {"irb_capital", g.irb_capital}, {"rwa", g.rwa}};
  for (const auto& [k, v] : values) {
    out += ", ";
    json_key(out, k);
    append_json_number(out, v);
  }
  for (std::size_t l = 0; l < run.confidence_levels.size(); ++l) {
    const std::string label = level_label(run.confidence_levels[l]);
    out += ", ";
    json_key(out, "es_contribution_" + label);
    append_json_number(out, g.es_exact[l]);
    out += ", ";
    json_key(out, "large_portfolio_es_contribution_" + label);
    append_json_number(out, g.es_limit[l]);
    if (!g.es_mc.empty()) {
      out += ", ";
      json_key(out, "monte_carlo_es_contribution_" + label);
      append_json_number(out, g.es_mc[l]);
    }
  }
  out += "}";
}

// Opens tail l of a "tails" list with its confidence level and VaR; the caller adds the rest and "}".
JsonFields tail_fields(std::string& out, std::size_t l, double confidence_level, double var) {
  out += l == 0 ? "{" : ", {";
  JsonFields fields(out);
  fields.number("confidence_level", confidence_level).number("var", var);
  return fields;
}

// Appends ", "tails": [...]}": one object a tail, its level and VaR first, then what `rest` adds.
template <class Tail, class Rest>
void append_tails(std::string& out, const std::vector<Tail>& tails, const Rest& rest) {
  out += ", \"tails\": [";
  for (std::size_t l = 0; l < tails.size(); ++l) {
    JsonFields fields = tail_fields(out, l, tails[l].confidence_level, tails[l].var);
    rest(fields, tails[l]);
    out += "}";
  }
  out += "]}";
}

// The exact one-factor distribution's figures and tails.
void exact_json(std::string& out, const LossDistribution& d) {
  out += "{";
  JsonFields(out)
      .text("status", to_string(d.status))
      .number("expected_loss", d.expected_loss)
      .number("loss_unit", d.loss_unit)
      .count("grid_points", d.probability.size())
      .raw("factor_values", std::to_string(d.nodes))
      .number("error_estimate", d.error_estimate)
      .number("top_mass", d.top_mass);
  append_tails(out, d.tails, [&](JsonFields& f, const LossTail& t) {
    f.number("es", t.es)
        .number("unexpected_loss", t.var - d.expected_loss)
        .number("exceedance", t.exceedance);
  });
}

// The large-portfolio limit's expected loss and tails.
void limit_json(std::string& out, const LargePortfolioResult& r) {
  out += "{";
  JsonFields(out).number("expected_loss", r.expected_loss);
  append_tails(out, r.tails, [](JsonFields& f, const LargePortfolioTail& t) {
    f.number("es", t.es).number("factor", t.factor);
  });
}

// The simulation's settings, figures and tails with their standard errors.
void monte_carlo_json(std::string& out, const PortfolioResult& run, const SimulationResult& r) {
  out += "{";
  JsonFields(out)
      .raw("scenarios", std::to_string(r.scenarios))
      .raw("seed", std::to_string(run.portfolio.seed))
      .boolean("importance_sampling", run.options.importance_sampling)
      .number("effective_scenarios", r.effective_scenarios)
      .number_list("factor_shift", r.factor_shift)
      .number("expected_loss", r.expected_loss)
      .number("expected_loss_se", r.expected_loss_se);
  append_tails(out, r.tails, [](JsonFields& f, const SimulatedTail& t) {
    f.number("var_se", t.var_se)
        .number("es", t.es)
        .number("es_se", t.es_se)
        .number("exceedance", t.exceedance);
  });
}

void scenario_json(std::string& out, const PortfolioResult& run, const PortfolioScenarioResult& sc,
                   const Book& book) {
  const std::vector<std::string> cols = portfolio_columns(
      run.confidence_levels, run.options.monte_carlo_scenarios > 0, run.options.pd_calibration != nullptr);
  out += "    {";
  JsonFields(out)
      .text("name", sc.name)
      .text("description", sc.description)
      .count("in_portfolio", sc.included);
  out += ",\n     \"obligors\": [\n";
  for (std::size_t i = 0; i < sc.obligors.size(); ++i) {
    const std::vector<Cell> cells = row_cells(run, sc, book, i);
    out += i == 0 ? "      {" : ",\n      {";
    for (std::size_t k = 1; k < cells.size(); ++k) {  // the scenario name is the enclosing object's
      if (k > 1) out += ", ";
      json_key(out, cols[k]);
      if (cells[k].text) {
        append_json_string(out, cells[k].s);
      } else {
        append_json_number(out, cells[k].v);
      }
    }
    out += "}";
  }
  out += "\n     ],\n     \"total\": ";
  group_json(out, run, sc.total);
  for (const auto& [key, groups] :
       {std::pair{"sectors", &sc.sectors}, std::pair{"countries", &sc.countries}}) {
    out += ",\n     \"";
    out += key;
    out += "\": [";
    for (std::size_t g = 0; g < groups->size(); ++g) {
      out += g == 0 ? "\n       " : ",\n       ";
      group_json(out, run, (*groups)[g]);
    }
    out += "]";
  }
  out += ",\n     \"exact_one_factor\": ";
  exact_json(out, sc.exact);
  out += ",\n     \"large_portfolio\": ";
  limit_json(out, sc.limit);
  out += ",\n     \"monte_carlo\": ";
  if (sc.simulated) {
    monte_carlo_json(out, run, sc.mc);
  } else {
    out += "null";
  }
  out += "}";
}

void write_json(const PortfolioResult& run, const Book& book, const TextSink& sink) {
  std::string out = "{\n  \"run\": {";
  JsonFields fields(out);
  fields.text("book", run.book_origin)
      .text("correlation_file", run.correlation_origin)
      .text("scenario_file", run.scenario_origin)
      .text("stress_hold", run.scenario_origin.empty() ? "" : to_string(run.stress_hold))
      .number_list("confidence_levels", run.confidence_levels)
      .text("measure", to_string(run.settings.measure))
      .number("default_lgd", run.settings.default_lgd)
      .text("reporting_currency", run.reporting_currency)
      .text("fx_file", run.fx_origin)
      .text_or_null("fx_as_of", run.fx_as_of, !run.fx_origin.empty());
  out += ", \"fx_rates\": {";
  for (std::size_t k = 0; k < run.fx_used.size(); ++k) {
    if (k > 0) out += ", ";
    json_key(out, run.fx_used[k].currency);
    append_json_number(out, run.fx_used[k].rate);
  }
  out += "}";
  if (run.options.basel_correlation) {
    fields.text("asset_correlation", "basel");
  } else if (run.options.asset_correlation) {
    fields.number("asset_correlation", *run.options.asset_correlation);
  } else {
    fields.text("asset_correlation", "by obligor");
  }
  fields.count("factors", run.factors)
      .raw("monte_carlo_scenarios", std::to_string(run.options.monte_carlo_scenarios))
      .raw("seed", std::to_string(run.portfolio.seed))
      .number("irb_pd_floor", run.irb.pd_floor)
      .text("irb_pd_floor_rule", to_string(run.irb.pd_floor_rule))
      .text("irb_pd_basis", run.options.pd_calibration && run.options.driving_pd == DrivingPd::calibrated
                                ? "calibrated"
                            : run.pd_converted > 0 ? "model_converted"
                                                   : "model")
      .text("expected_loss_horizon", "obligor")
      .number("irb_maturity", run.irb.maturity_years);
  if (run.options.pd_calibration) {
    fields.text("pd_calibration", run.options.pd_calibration_origin)
        .text("driving_pd", to_string(run.options.driving_pd));
  }
  out += "},\n  \"scenarios\": [\n";
  sink(out);
  for (std::size_t s = 0; s < run.scenarios.size(); ++s) {
    out.clear();
    if (s > 0) out += ",\n";
    scenario_json(out, run, run.scenarios[s], book);
    sink(out);
  }
  out = "\n  ],\n  \"summary\": {";
  JsonFields(out)
      .count("obligors", book.obligors.size())
      .count("in_portfolio", run.scenarios.front().included)
      .count("failed_rows", run.failed_rows)
      .count("irb_pd_converted", run.pd_converted)
      .count("irb_pd_floored", run.pd_floored);
  out += "}\n}\n";
  sink(out);
}

}  // namespace

std::vector<std::string> portfolio_columns(const std::vector<double>& levels, bool simulated,
                                           bool calibrated) {
  std::vector<std::string> c = {"scenario",
                                "id",
                                "name",
                                "sector",
                                "country",
                                "currency",
                                "fx_rate",
                                "reporting_currency",
                                "status",
                                "pd",
                                "lgd",
                                "ead",
                                "horizon",
                                "pd_one_year",
                                "expected_loss",
                                "asset_correlation",
                                "asset_correlation_source",
                                "maturity",
                                "irb_pd",
                                "irb_pd_basis",
                                "irb_correlation",
                                "irb_capital_ratio",
                                "irb_risk_weight",
                                "irb_capital",
                                "rwa"};
  if (calibrated) c.insert(c.begin() + 14, {"pd_calibrated", "pd_driving"});
  for (double l : levels) c.push_back("es_contribution_" + level_label(l));
  for (double l : levels) c.push_back("large_portfolio_es_contribution_" + level_label(l));
  if (simulated) {
    for (double l : levels) {
      c.push_back("monte_carlo_es_contribution_" + level_label(l));
      c.push_back("monte_carlo_es_contribution_" + level_label(l) + "_se");
    }
  }
  c.push_back("message");
  return c;
}

void write_portfolio(const PortfolioResult& run, const Book& book, OutputFormat format,
                     const TextSink& sink) {
  if (format == OutputFormat::table) {
    write_table(run, book, sink);
    return;
  }
  if (format == OutputFormat::json) {
    write_json(run, book, sink);
    return;
  }
  std::string out;
  append_header_csv(out, portfolio_columns(run.confidence_levels, run.options.monte_carlo_scenarios > 0,
                                           run.options.pd_calibration != nullptr));
  for (const PortfolioScenarioResult& sc : run.scenarios) {
    for (std::size_t i = 0; i < sc.obligors.size(); ++i) {
      append_cells_csv(out, row_cells(run, sc, book, i));
      if (out.size() > (1U << 20)) {
        sink(out);
        out.clear();
      }
    }
  }
  sink(out);
}

std::string portfolio_summary_csv(const PortfolioResult& run) {
  std::string out = "scenario,group_by,group,method,measure,confidence_level,value,standard_error,currency\n";
  const auto row = [&](const std::string& scenario, std::string_view group_by, const std::string& group,
                       std::string_view method, std::string_view measure, double level, double value,
                       double se) {
    append_csv_text(out, scenario);
    out += ',';
    out += group_by;
    out += ',';
    append_csv_text(out, group);
    out += ',';
    out += method;
    out += ',';
    out += measure;
    out += ',';
    append_number(out, level);
    out += ',';
    append_number(out, value);
    out += ',';
    append_number(out, se);
    out += ',';
    if (measure != "obligors") append_csv_text(out, run.reporting_currency);
    out += '\n';
  };
  const auto groups = [&](const std::string& scenario, std::string_view by, const GroupTotals& g,
                          bool simulated) {
    row(scenario, by, g.name, "book", "obligors", kNaN, static_cast<double>(g.obligors), kNaN);
    row(scenario, by, g.name, "book", "ead", kNaN, g.ead, kNaN);
    row(scenario, by, g.name, "book", "expected_loss", kNaN, g.expected_loss, kNaN);
    row(scenario, by, g.name, "irb", "capital", kNaN, g.irb_capital, kNaN);
    row(scenario, by, g.name, "irb", "rwa", kNaN, g.rwa, kNaN);
    for (std::size_t l = 0; l < run.confidence_levels.size(); ++l) {
      const double lv = run.confidence_levels[l];
      row(scenario, by, g.name, "exact_one_factor", "es_contribution", lv, g.es_exact[l], kNaN);
      row(scenario, by, g.name, "large_portfolio", "es_contribution", lv, g.es_limit[l], kNaN);
      if (simulated) row(scenario, by, g.name, "monte_carlo", "es_contribution", lv, g.es_mc[l], kNaN);
    }
  };
  for (const PortfolioScenarioResult& sc : run.scenarios) {
    groups(sc.name, "total", sc.total, sc.simulated);
    const bool exact_ok =
        sc.exact.status == LossStatus::ok || sc.exact.status == LossStatus::tolerance_not_met;
    for (std::size_t l = 0; exact_ok && l < sc.exact.tails.size(); ++l) {
      const LossTail& t = sc.exact.tails[l];
      row(sc.name, "total", "total", "exact_one_factor", "var", t.confidence_level, t.var, kNaN);
      row(sc.name, "total", "total", "exact_one_factor", "es", t.confidence_level, t.es, kNaN);
      row(sc.name, "total", "total", "exact_one_factor", "unexpected_loss", t.confidence_level,
          t.var - sc.exact.expected_loss, kNaN);
    }
    for (const LargePortfolioTail& t : sc.limit.tails) {
      row(sc.name, "total", "total", "large_portfolio", "var", t.confidence_level, t.var, kNaN);
      row(sc.name, "total", "total", "large_portfolio", "es", t.confidence_level, t.es, kNaN);
    }
    if (sc.simulated) {
      row(sc.name, "total", "total", "monte_carlo", "expected_loss", kNaN, sc.mc.expected_loss,
          sc.mc.expected_loss_se);
      for (const SimulatedTail& t : sc.mc.tails) {
        row(sc.name, "total", "total", "monte_carlo", "var", t.confidence_level, t.var, t.var_se);
        row(sc.name, "total", "total", "monte_carlo", "es", t.confidence_level, t.es, t.es_se);
      }
    }
    for (const GroupTotals& g : sc.sectors) groups(sc.name, "sector", g, sc.simulated);
    for (const GroupTotals& g : sc.countries) groups(sc.name, "country", g, sc.simulated);
  }
  return out;
}

std::string portfolio_distribution_csv(const PortfolioResult& run) {
  const bool mc = run.options.monte_carlo_scenarios > 0;
  std::string out = "scenario,loss,currency,probability,cumulative,exceedance,large_portfolio_exceedance";
  if (mc) out += ",monte_carlo_exceedance,monte_carlo_exceedance_se";
  out += '\n';
  for (const PortfolioScenarioResult& sc : run.scenarios) {
    const LossDistribution& d = sc.exact;
    for (std::size_t k = 0; k < d.probability.size(); ++k) {
      append_csv_text(out, sc.name);
      out += ',';
      append_number(out, static_cast<double>(k) * d.loss_unit);
      out += ',';
      append_csv_text(out, run.reporting_currency);
      out += ',';
      append_number(out, d.probability[k]);
      out += ',';
      append_number(out, d.cumulative[k]);
      out += ',';
      append_number(out, d.exceedance[k]);
      out += ',';
      append_number(out, k < sc.limit_exceedance.size() ? sc.limit_exceedance[k] : kNaN);
      if (mc) {
        const bool has = sc.simulated && k < sc.mc.exceedance.size();
        out += ',';
        append_number(out, has ? sc.mc.exceedance[k] : kNaN);
        out += ',';
        append_number(out, has ? sc.mc.exceedance_se[k] : kNaN);
      }
      out += '\n';
    }
  }
  return out;
}

}  // namespace firmcall
