#include "firmcall/io/settings_io.hpp"

#include <cmath>

#include "firmcall/book/errors.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {

using detail::yaml_check_keys;
using detail::yaml_line;
using detail::yaml_number;

double positive(const YAML::Node& n, const std::string& origin, std::string_view key) {
  const double v = yaml_number(n, origin, key);
  if (!(v > 0.0)) {
    throw InputError(located(origin, yaml_line(n), "key '" + std::string(key) + "': must be positive"));
  }
  return v;
}

double in_unit_interval(const YAML::Node& n, const std::string& origin, std::string_view key, bool open) {
  const double v = yaml_number(n, origin, key);
  if (v < 0.0 || v > 1.0 || (open && (v == 0.0 || v == 1.0))) {
    throw InputError(located(origin, yaml_line(n),
                             "key '" + std::string(key) + "': must lie in " + (open ? "(0, 1)" : "[0, 1]")));
  }
  return v;
}

int positive_int(const YAML::Node& n, const std::string& origin, std::string_view key) {
  const double v = positive(n, origin, key);
  if (v != std::floor(v) || v > 1e9) {
    throw InputError(located(origin, yaml_line(n), "key '" + std::string(key) + "': must be a whole number"));
  }
  return static_cast<int>(v);
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
  if (const std::string problem = scale.problem(); !problem.empty()) {
    throw InputError(located(origin, yaml_line(list), "grades: " + problem));
  }
  return scale;
}

MonitorSettings parse_monitoring(const YAML::Node& s, const std::string& origin) {
  MonitorSettings m;
  yaml_check_keys(s, {"store", "busy_timeout_seconds", "alerts"}, origin, "monitoring");
  if (s["store"]) m.store = detail::yaml_string(s["store"], origin, "store");
  if (s["busy_timeout_seconds"]) {
    m.busy_timeout_seconds = positive(s["busy_timeout_seconds"], origin, "busy_timeout_seconds");
  }
  if (const auto a = s["alerts"]) {
    yaml_check_keys(a, {"dd_drop", "pd_ratio", "pd_ratio_min_pd", "downgrade_notches", "pd_ceiling"}, origin,
                    "alerts");
    if (a["dd_drop"]) m.alerts.dd_drop = positive(a["dd_drop"], origin, "dd_drop");
    if (a["pd_ratio"]) {
      m.alerts.pd_ratio = yaml_number(a["pd_ratio"], origin, "pd_ratio");
      if (!(m.alerts.pd_ratio > 1.0)) {
        throw InputError(located(origin, yaml_line(a["pd_ratio"]), "key 'pd_ratio': must be above 1"));
      }
    }
    if (a["pd_ratio_min_pd"]) {
      m.alerts.pd_ratio_min_pd = in_unit_interval(a["pd_ratio_min_pd"], origin, "pd_ratio_min_pd", false);
    }
    if (a["downgrade_notches"]) {
      m.alerts.downgrade_notches = positive_int(a["downgrade_notches"], origin, "downgrade_notches");
    }
    if (a["pd_ceiling"]) m.alerts.pd_ceiling = in_unit_interval(a["pd_ceiling"], origin, "pd_ceiling", false);
  }
  return m;
}

std::vector<double> confidence_levels(const YAML::Node& n, const std::string& origin) {
  const auto fail = [&](const std::string& why) {
    throw InputError(located(origin, yaml_line(n), "key 'confidence_levels': " + why));
  };
  if (!n.IsSequence() || n.size() == 0) fail("expected a list such as [0.99, 0.995, 0.999]");
  if (n.size() > kMaxConfidenceLevels) fail("at most " + std::to_string(kMaxConfidenceLevels) + " levels");
  std::vector<double> levels;
  for (const auto& item : n) {
    const double v = yaml_number(item, origin, "confidence_levels");
    if (!(v > 0.0 && v < 1.0)) fail("each level must lie in (0, 1) (0.999 means 99.9%)");
    if (!levels.empty() && !(v > levels.back())) fail("levels must be listed in increasing order");
    levels.push_back(v);
  }
  return levels;
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
  if (const auto s = root["scoring"]) {
    yaml_check_keys(s, {"default_point_weight", "horizon", "measure", "default_lgd", "max_equity_vol"},
                    origin, "scoring");
    if (s["default_point_weight"]) {
      c.score.default_point_weight =
          in_unit_interval(s["default_point_weight"], origin, "default_point_weight", false);
    }
    if (s["horizon"]) c.score.horizon_years = positive(s["horizon"], origin, "horizon");
    if (s["measure"]) {
      const auto m = measure_from_string(detail::yaml_string(s["measure"], origin, "measure"));
      if (!m) {
        throw InputError(
            located(origin, yaml_line(s["measure"]), "key 'measure': expected physical or risk-neutral"));
      }
      c.score.measure = *m;
    }
    if (s["default_lgd"])
      c.score.default_lgd = in_unit_interval(s["default_lgd"], origin, "default_lgd", false);
    if (s["max_equity_vol"]) c.score.max_equity_vol = positive(s["max_equity_vol"], origin, "max_equity_vol");
  }
  if (const auto s = root["solver"]) {
    yaml_check_keys(s, {"max_newton_iterations", "max_fallback_iterations", "residual_tolerance"}, origin,
                    "solver");
    if (s["max_newton_iterations"]) {
      c.score.solver.max_newton_iterations =
          positive_int(s["max_newton_iterations"], origin, "max_newton_iterations");
    }
    if (s["max_fallback_iterations"]) {
      c.score.solver.max_fallback_iterations =
          positive_int(s["max_fallback_iterations"], origin, "max_fallback_iterations");
    }
    if (s["residual_tolerance"]) {
      c.score.solver.residual_tolerance = positive(s["residual_tolerance"], origin, "residual_tolerance");
    }
  }
  if (const auto s = root["stress"]) {
    yaml_check_keys(s, {"pd_threshold"}, origin, "stress");
    if (s["pd_threshold"])
      c.stress.pd_threshold = in_unit_interval(s["pd_threshold"], origin, "pd_threshold", true);
  }
  if (const auto s = root["history"]) {
    yaml_check_keys(s,
                    {"min_observations", "trading_days_per_year", "ewma_decay", "iteration_tolerance",
                     "max_iterations", "confidence_level"},
                    origin, "history");
    if (s["min_observations"]) {
      c.history.min_observations = positive_int(s["min_observations"], origin, "min_observations");
    }
    if (s["trading_days_per_year"]) {
      c.history.trading_days_per_year = positive(s["trading_days_per_year"], origin, "trading_days_per_year");
    }
    if (s["ewma_decay"]) c.history.ewma_decay = in_unit_interval(s["ewma_decay"], origin, "ewma_decay", true);
    if (s["iteration_tolerance"]) {
      c.history.iteration_tolerance = positive(s["iteration_tolerance"], origin, "iteration_tolerance");
    }
    if (s["max_iterations"])
      c.history.max_iterations = positive_int(s["max_iterations"], origin, "max_iterations");
    if (s["confidence_level"]) {
      c.history.confidence_level = in_unit_interval(s["confidence_level"], origin, "confidence_level", true);
    }
  }
  if (const auto s = root["grades"]) c.grades = parse_grade_scale(s, origin);
  if (const auto s = root["monitoring"]) c.monitor = parse_monitoring(s, origin);
  if (const auto s = root["term_structure"]) {
    yaml_check_keys(s, {"calibration", "barrier_ratio", "barrier_growth"}, origin, "term_structure");
    if (s["calibration"]) {
      const auto cal = calibration_from_string(detail::yaml_string(s["calibration"], origin, "calibration"));
      if (!cal) {
        throw InputError(
            located(origin, yaml_line(s["calibration"]), "key 'calibration': expected once or per-horizon"));
      }
      c.term.calibration = *cal;
    }
    if (s["barrier_ratio"]) c.term.barrier_ratio = positive(s["barrier_ratio"], origin, "barrier_ratio");
    if (s["barrier_growth"]) {
      const double g = yaml_number(s["barrier_growth"], origin, "barrier_growth");
      if (!(std::fabs(g) <= 1.0)) {
        throw InputError(located(origin, yaml_line(s["barrier_growth"]),
                                 "key 'barrier_growth': must lie in [-1, 1] (0.02 means 2% a year)"));
      }
      c.term.barrier_growth = g;
    }
  }
  if (const auto s = root["portfolio"]) {
    yaml_check_keys(
        s, {"confidence_levels", "asset_correlation", "loss_grid_points", "quadrature_tolerance", "seed"},
        origin, "portfolio");
    if (const auto levels = s["confidence_levels"]) {
      c.portfolio.confidence_levels = confidence_levels(levels, origin);
    }
    if (const auto rho = s["asset_correlation"]) {
      if (rho.IsScalar() && rho.Scalar() == "basel") {
        c.portfolio.asset_correlation.reset();
      } else {
        const double v = yaml_number(rho, origin, "asset_correlation");
        if (!(v >= 0.0 && v < 1.0)) {
          throw InputError(located(origin, yaml_line(rho),
                                   "key 'asset_correlation': expected basel or a decimal in [0, 1)"));
        }
        c.portfolio.asset_correlation = v;
      }
    }
    if (s["loss_grid_points"]) {
      c.portfolio.loss_grid_points = positive_int(s["loss_grid_points"], origin, "loss_grid_points");
      if (c.portfolio.loss_grid_points < 16 || c.portfolio.loss_grid_points > (1 << 20)) {
        throw InputError(located(origin, yaml_line(s["loss_grid_points"]),
                                 "key 'loss_grid_points': must lie in [16, 1048576]"));
      }
    }
    if (s["quadrature_tolerance"]) {
      c.portfolio.quadrature_tolerance =
          in_unit_interval(s["quadrature_tolerance"], origin, "quadrature_tolerance", true);
    }
    if (s["seed"]) {
      const double v = yaml_number(s["seed"], origin, "seed");
      if (!(v >= 0.0 && v <= 9007199254740992.0) || v != std::floor(v)) {
        throw InputError(located(origin, yaml_line(s["seed"]), "key 'seed': must be a whole number >= 0"));
      }
      c.portfolio.seed = static_cast<std::uint64_t>(v);
    }
  }
  if (const auto s = root["irb"]) {
    yaml_check_keys(s, {"pd_floor", "maturity"}, origin, "irb");
    if (s["pd_floor"]) c.irb.pd_floor = in_unit_interval(s["pd_floor"], origin, "pd_floor", false);
    if (s["maturity"]) c.irb.maturity_years = positive(s["maturity"], origin, "maturity");
  }
  return c;
}

Config load_config(const std::string& path) {
  return parse_config(detail::read_text_file(path), path);
}

}  // namespace firmcall
