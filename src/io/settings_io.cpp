#include "firmcall/io/settings_io.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>

#include "firmcall/book/errors.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {

using detail::yaml_check_keys;
using detail::yaml_line;
using detail::yaml_number;

// The constraints of each section are its validate()'s (book/settings.hpp); the reader checks
// the section after storing each key, so the first broken constraint is the key just read (the
// section's other fields hold defaults or values already checked) and is reported at that key's
// line, in the order the keys are read below.
template <class Section>
void check_key(const Section& section, const YAML::Node& n, const std::string& origin, std::string_view key) {
  if (const OptionCheck p = section.validate()) {
    throw InputError(located(origin, yaml_line(n), "key '" + std::string(key) + "': " + p->constraint));
  }
}

// A number key, when present: stored in `field`, then `section` is checked.
template <class Section>
void read_number(const YAML::Node& map, std::string_view key, double& field, const Section& section,
                 const std::string& origin) {
  if (const auto n = map[std::string(key)]) {
    field = yaml_number(n, origin, key);
    check_key(section, n, origin, key);
  }
}

// A count key, when present: a positive value must be a whole number up to 1e9 to be stored in
// an int; other values are stored as 0 or below, for the section's validate() to refuse.
template <class Section>
void read_count(const YAML::Node& map, std::string_view key, int& field, const Section& section,
                const std::string& origin) {
  if (const auto n = map[std::string(key)]) {
    const double v = yaml_number(n, origin, key);
    if (v > 1e9) {
      throw InputError(located(origin, yaml_line(n),
                               "key '" + std::string(key) + "': too large (the maximum is 1000000000)"));
    }
    if (v > 0.0 && v != std::floor(v)) {
      throw InputError(
          located(origin, yaml_line(n), "key '" + std::string(key) + "': must be a whole number"));
    }
    field = static_cast<int>(std::max(v, -1e9));
    check_key(section, n, origin, key);
  }
}

// A key naming one of an enumeration's values, when present; `parse` gives nullopt for other text.
template <class Enum, class Parse>
void read_choice(const YAML::Node& map, std::string_view key, Enum& field, Parse parse, const char* expected,
                 const std::string& origin) {
  if (const auto n = map[std::string(key)]) {
    const std::optional<Enum> v = parse(detail::yaml_string(n, origin, key));
    if (!v) throw InputError(located(origin, yaml_line(n), "key '" + std::string(key) + "': " + expected));
    field = *v;
  }
}

// The solver section's checks, until MertonSolveOptions (model layer) has a validate() of its
// own for read_number / read_count to use.
double positive(const YAML::Node& n, const std::string& origin, std::string_view key) {
  const double v = yaml_number(n, origin, key);
  if (!(v > 0.0)) {
    throw InputError(located(origin, yaml_line(n), "key '" + std::string(key) + "': must be positive"));
  }
  return v;
}

int positive_int(const YAML::Node& n, const std::string& origin, std::string_view key) {
  const double v = positive(n, origin, key);
  if (v > 1e9) {
    throw InputError(located(origin, yaml_line(n),
                             "key '" + std::string(key) + "': too large (the maximum is 1000000000)"));
  }
  if (v != std::floor(v)) {
    throw InputError(located(origin, yaml_line(n), "key '" + std::string(key) + "': must be a whole number"));
  }
  return static_cast<int>(v);
}

void read_scoring(const YAML::Node& s, const std::string& origin, ScoreSettings& score) {
  yaml_check_keys(s,
                  {"default_point_weight", "horizon", "measure", "default_lgd", "max_equity_vol",
                   "equity_vol_warn_above", "strict_inputs", "financial_leverage_above", "currency"},
                  origin, "scoring");
  read_number(s, "default_point_weight", score.default_point_weight, score, origin);
  read_number(s, "horizon", score.horizon_years, score, origin);
  read_choice(s, "measure", score.measure, measure_from_string, "expected physical or risk-neutral", origin);
  read_number(s, "default_lgd", score.default_lgd, score, origin);
  read_number(s, "max_equity_vol", score.max_equity_vol, score, origin);
  read_number(s, "equity_vol_warn_above", score.equity_vol_warn_above, score, origin);
  read_choice(
      s, "strict_inputs", score.strict_inputs,
      [](const std::string& v) -> std::optional<bool> {
        if (v == "true") return true;
        if (v == "false") return false;
        return std::nullopt;
      },
      "expected true or false", origin);
  read_number(s, "financial_leverage_above", score.financial_leverage_above, score, origin);
  if (const auto n = s["currency"]) {
    const std::string code = detail::yaml_string(n, origin, "currency");
    if (!score.currency.set(code)) {
      throw InputError(located(
          origin, yaml_line(n),
          "key 'currency': must be three upper-case letters (ISO 4217 style, e.g. EUR), got '" + code + "'"));
    }
  }
}

void read_solver(const YAML::Node& s, const std::string& origin, MertonSolveOptions& solver) {
  yaml_check_keys(s, {"max_newton_iterations", "max_fallback_iterations", "residual_tolerance"}, origin,
                  "solver");
  if (s["max_newton_iterations"]) {
    solver.max_newton_iterations = positive_int(s["max_newton_iterations"], origin, "max_newton_iterations");
  }
  if (s["max_fallback_iterations"]) {
    solver.max_fallback_iterations =
        positive_int(s["max_fallback_iterations"], origin, "max_fallback_iterations");
  }
  if (s["residual_tolerance"]) {
    solver.residual_tolerance = positive(s["residual_tolerance"], origin, "residual_tolerance");
  }
}

void read_history(const YAML::Node& s, const std::string& origin, HistorySettings& history) {
  yaml_check_keys(s,
                  {"min_observations", "trading_days_per_year", "ewma_decay", "iteration_tolerance",
                   "max_iterations", "confidence_level", "drift_shrinkage", "drift_cap"},
                  origin, "history");
  read_count(s, "min_observations", history.min_observations, history, origin);
  read_number(s, "trading_days_per_year", history.trading_days_per_year, history, origin);
  read_number(s, "ewma_decay", history.ewma_decay, history, origin);
  read_number(s, "iteration_tolerance", history.iteration_tolerance, history, origin);
  read_count(s, "max_iterations", history.max_iterations, history, origin);
  read_number(s, "confidence_level", history.confidence_level, history, origin);
  read_number(s, "drift_shrinkage", history.drift_shrinkage, history, origin);
  read_number(s, "drift_cap", history.drift_cap, history, origin);
}

// `grades:` a list of {label, max_pd}, best grade first.
GradeScale parse_grade_scale(const YAML::Node& list, const std::string& origin) {
  if (!list.IsSequence()) {
    throw InputError(located(origin, yaml_line(list), "key 'grades': expected a list of {label, max_pd}"));
  }
  GradeScale scale;
  for (const auto& g : list) {
    yaml_check_keys(g, {"label", "max_pd"}, origin, "grades");
    if (!g["label"] || !g["max_pd"]) {
      throw InputError(located(origin, yaml_line(g), "grades: each grade needs a label and a max_pd"));
    }
    scale.bands.push_back(
        {detail::yaml_string(g["label"], origin, "label"), yaml_number(g["max_pd"], origin, "max_pd")});
  }
  if (const OptionCheck p = scale.validate()) {
    throw InputError(located(origin, yaml_line(list), "grades: " + p->constraint));
  }
  return scale;
}

void read_monitoring(const YAML::Node& s, const std::string& origin, MonitorSettings& m) {
  yaml_check_keys(s, {"store", "busy_timeout_seconds", "alerts"}, origin, "monitoring");
  if (s["store"]) m.store = detail::yaml_string(s["store"], origin, "store");
  read_number(s, "busy_timeout_seconds", m.busy_timeout_seconds, m, origin);
  if (const auto a = s["alerts"]) {
    yaml_check_keys(a, {"dd_drop", "pd_ratio", "pd_ratio_min_pd", "downgrade_notches", "pd_ceiling"}, origin,
                    "alerts");
    read_number(a, "dd_drop", m.alerts.dd_drop, m.alerts, origin);
    read_number(a, "pd_ratio", m.alerts.pd_ratio, m.alerts, origin);
    read_number(a, "pd_ratio_min_pd", m.alerts.pd_ratio_min_pd, m.alerts, origin);
    read_count(a, "downgrade_notches", m.alerts.downgrade_notches, m.alerts, origin);
    read_number(a, "pd_ceiling", m.alerts.pd_ceiling, m.alerts, origin);
  }
}

void read_term_structure(const YAML::Node& s, const std::string& origin, TermSettings& term) {
  yaml_check_keys(s, {"calibration", "barrier_ratio", "barrier_growth"}, origin, "term_structure");
  read_choice(s, "calibration", term.calibration, calibration_from_string, "expected once or per-horizon",
              origin);
  read_number(s, "barrier_ratio", term.barrier_ratio, term, origin);
  read_number(s, "barrier_growth", term.barrier_growth, term, origin);
}

// The list's shape is checked before its items (a list too long is refused unread), then each
// level as it is read, so the first problem is the one met first in the list.
void read_confidence_levels(const YAML::Node& n, const std::string& origin, PortfolioSettings& p) {
  constexpr std::string_view key = "confidence_levels";
  std::vector<double>& levels = p.confidence_levels;
  levels.clear();
  if (!n.IsSequence() || n.size() == 0 || n.size() > kMaxConfidenceLevels) {
    if (n.IsSequence()) levels.resize(n.size());
    check_key(p, n, origin, key);
  }
  for (const auto& item : n) {
    levels.push_back(yaml_number(item, origin, key));
    check_key(p, n, origin, key);
  }
}

void read_portfolio(const YAML::Node& s, const std::string& origin, PortfolioSettings& p) {
  yaml_check_keys(
      s, {"confidence_levels", "asset_correlation", "loss_grid_points", "quadrature_tolerance", "seed"},
      origin, "portfolio");
  if (const auto levels = s["confidence_levels"]) read_confidence_levels(levels, origin, p);
  if (const auto rho = s["asset_correlation"]) {
    if (rho.IsScalar() && rho.Scalar() == "basel") {
      p.asset_correlation.reset();
    } else {
      if (rho.IsScalar() && !rho.Scalar().empty() &&
          std::isalpha(static_cast<unsigned char>(rho.Scalar()[0]))) {
        throw InputError(located(
            origin, yaml_line(rho),
            "key 'asset_correlation': expected basel or a decimal in [0, 1), got '" + rho.Scalar() + "'"));
      }
      p.asset_correlation = yaml_number(rho, origin, "asset_correlation");
      check_key(p, rho, origin, "asset_correlation");
    }
  }
  read_count(s, "loss_grid_points", p.loss_grid_points, p, origin);
  read_number(s, "quadrature_tolerance", p.quadrature_tolerance, p, origin);
  // The seed is read through a double: whole numbers are exact up to 2^53.
  if (s["seed"]) {
    const double v = yaml_number(s["seed"], origin, "seed");
    if (!(v >= 0.0 && v <= 9007199254740992.0) || v != std::floor(v)) {
      throw InputError(located(origin, yaml_line(s["seed"]), "key 'seed': must be a whole number >= 0"));
    }
    p.seed = static_cast<std::uint64_t>(v);
  }
}

void read_irb(const YAML::Node& s, const std::string& origin, IrbSettings& irb) {
  yaml_check_keys(s, {"pd_floor", "maturity"}, origin, "irb");
  // pd_floor: basel2 (0.03%), basel3 (0.05%, corporates) or a number.
  if (const auto n = s["pd_floor"]) {
    const std::optional<PdFloorRule> rule =
        n.IsScalar() ? pd_floor_rule_from_string(n.Scalar()) : std::optional<PdFloorRule>{};
    if (rule) {
      irb.pd_floor_rule = *rule;
      irb.pd_floor = pd_floor_of(*rule);
    } else {
      const std::string text = detail::yaml_string(n, origin, "pd_floor");
      if (!text.empty() && std::isalpha(static_cast<unsigned char>(text[0]))) {
        throw InputError(located(origin, yaml_line(n),
                                 "key 'pd_floor': expected basel2, basel3 or a number, got '" + text + "'"));
      }
      irb.pd_floor_rule = PdFloorRule::value;
      irb.pd_floor = yaml_number(n, origin, "pd_floor");
      check_key(irb, n, origin, "pd_floor");
    }
  }
  read_number(s, "maturity", irb.maturity_years, irb, origin);
}

}  // namespace

Config parse_config(const std::string& text, const std::string& origin) {
  Config c;
  const YAML::Node root = detail::yaml_load(text, origin);
  if (root.IsNull()) return c;
  yaml_check_keys(root,
                  {"scoring", "solver", "stress", "history", "grades", "monitoring", "term_structure",
                   "portfolio", "irb"},
                  origin, "configuration");
  if (const auto s = root["scoring"]) read_scoring(s, origin, c.score);
  if (const auto s = root["solver"]) read_solver(s, origin, c.score.solver);
  if (const auto s = root["stress"]) {
    yaml_check_keys(s, {"pd_threshold", "hold"}, origin, "stress");
    read_number(s, "pd_threshold", c.stress.pd_threshold, c.stress, origin);
    read_choice(s, "hold", c.stress.hold, parse_stress_hold, "expected asset-vol or equity-vol", origin);
  }
  if (const auto s = root["history"]) read_history(s, origin, c.history);
  if (const auto s = root["grades"]) c.grades = parse_grade_scale(s, origin);
  if (const auto s = root["monitoring"]) read_monitoring(s, origin, c.monitor);
  if (const auto s = root["term_structure"]) read_term_structure(s, origin, c.term);
  if (const auto s = root["portfolio"]) read_portfolio(s, origin, c.portfolio);
  if (const auto s = root["irb"]) read_irb(s, origin, c.irb);
  return c;
}

Config load_config(const std::string& path) {
  return parse_config(detail::read_text_file(path), path);
}

}  // namespace firmcall
