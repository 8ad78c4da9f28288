// Tests of the configuration file.
#include <doctest/doctest.h>

#include <string>
#include <utility>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/settings_io.hpp"
#include "test_util.hpp"

using namespace firmcall;

TEST_CASE("the shipped config/firmcall.yaml equals the built-in defaults") {
  const Config shipped = load_config(testing::source_dir() + "/config/firmcall.yaml");
  const Config builtin;
  CHECK(shipped.score.default_point_weight == builtin.score.default_point_weight);
  CHECK(shipped.score.default_point_weight == 0.5);  // common practice
  CHECK(shipped.score.horizon_years == builtin.score.horizon_years);
  CHECK(shipped.score.measure == builtin.score.measure);
  CHECK(shipped.score.default_lgd == builtin.score.default_lgd);
  CHECK(shipped.score.default_lgd == 0.45);  // senior unsecured, common practice
  CHECK(shipped.score.max_equity_vol == builtin.score.max_equity_vol);
  CHECK(shipped.score.currency == builtin.score.currency);
  CHECK(shipped.score.currency.empty());
  CHECK(shipped.score.solver.max_newton_iterations == builtin.score.solver.max_newton_iterations);
  CHECK(shipped.score.solver.max_fallback_iterations == builtin.score.solver.max_fallback_iterations);
  CHECK(shipped.score.solver.residual_tolerance == builtin.score.solver.residual_tolerance);
  CHECK(shipped.stress.pd_threshold == builtin.stress.pd_threshold);
  CHECK(shipped.history.min_observations == builtin.history.min_observations);
  CHECK(shipped.history.trading_days_per_year == builtin.history.trading_days_per_year);
  CHECK(shipped.history.ewma_decay == builtin.history.ewma_decay);
  CHECK(shipped.history.iteration_tolerance == builtin.history.iteration_tolerance);
  CHECK(shipped.history.max_iterations == builtin.history.max_iterations);
  CHECK(shipped.history.confidence_level == builtin.history.confidence_level);
  CHECK(shipped.history.drift_shrinkage == builtin.history.drift_shrinkage);
  CHECK(shipped.history.drift_cap == builtin.history.drift_cap);
  CHECK(shipped.portfolio.confidence_levels == builtin.portfolio.confidence_levels);
  CHECK(shipped.portfolio.asset_correlation == builtin.portfolio.asset_correlation);
  CHECK_FALSE(builtin.portfolio.asset_correlation.has_value());  // Basel function of PD by default
  CHECK(shipped.portfolio.loss_grid_points == builtin.portfolio.loss_grid_points);
  CHECK(shipped.portfolio.quadrature_tolerance == builtin.portfolio.quadrature_tolerance);
  CHECK(shipped.portfolio.seed == builtin.portfolio.seed);
  CHECK(shipped.irb.pd_floor == builtin.irb.pd_floor);
  CHECK(shipped.irb.pd_floor == 0.0003);  // Ref: BCBS 2006 para 285
  CHECK(shipped.irb.pd_floor_rule == builtin.irb.pd_floor_rule);
  CHECK(builtin.irb.pd_floor_rule == firmcall::PdFloorRule::basel2);
  CHECK(shipped.irb.maturity_years == builtin.irb.maturity_years);
  CHECK(shipped.irb.maturity_years == 2.5);  // Ref: BCBS 2006 para 318 (foundation approach)
  REQUIRE(shipped.grades.bands.size() == builtin.grades.bands.size());
  for (std::size_t i = 0; i < builtin.grades.bands.size(); ++i) {
    CHECK(shipped.grades.bands[i].label == builtin.grades.bands[i].label);
    CHECK(shipped.grades.bands[i].max_pd == builtin.grades.bands[i].max_pd);
  }
  CHECK(shipped.monitor.store == builtin.monitor.store);
  CHECK(shipped.monitor.busy_timeout_seconds == builtin.monitor.busy_timeout_seconds);
  CHECK(shipped.monitor.alerts.dd_drop == builtin.monitor.alerts.dd_drop);
  CHECK(shipped.monitor.alerts.pd_ratio == builtin.monitor.alerts.pd_ratio);
  CHECK(shipped.monitor.alerts.pd_ratio_min_pd == builtin.monitor.alerts.pd_ratio_min_pd);
  CHECK(shipped.monitor.alerts.downgrade_notches == builtin.monitor.alerts.downgrade_notches);
  CHECK(shipped.monitor.alerts.pd_ceiling == builtin.monitor.alerts.pd_ceiling);
  CHECK(shipped.term.calibration == builtin.term.calibration);
  CHECK(shipped.term.barrier_ratio == builtin.term.barrier_ratio);
  CHECK(shipped.term.barrier_ratio == 1.0);  // barrier at the default point (Black and Cox 1976 style)
  CHECK(shipped.term.barrier_growth == builtin.term.barrier_growth);
}

TEST_CASE("grade scales and alert rules from a settings file") {
  const Config c = parse_config(
      "grades:\n  - {label: low, max_pd: 0.01}\n  - {label: high, max_pd: 1}\n"
      "monitoring:\n  store: /var/lib/risk/h.sqlite\n  alerts: {dd_drop: 0.5, downgrade_notches: 1}\n",
      "c.yaml");
  REQUIRE(c.grades.bands.size() == 2);
  CHECK(c.grades.label_of(0.02) == "high");
  CHECK(c.monitor.store == "/var/lib/risk/h.sqlite");
  CHECK(c.monitor.alerts.dd_drop == 0.5);
  CHECK(c.monitor.alerts.downgrade_notches == 1);
  CHECK(c.monitor.alerts.pd_ratio == 2.0);  // not given: built-in default kept
  CHECK_THROWS_WITH_AS(parse_config("grades:\n  - {label: a, max_pd: 0.5}\n", "c.yaml"),
                       "c.yaml:2: grades: the last grade must have max_pd 1 (it holds every PD up to 1)",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_config("grades:\n  - {label: a, max_pc: 1}\n", "c.yaml"),
                       "c.yaml:2: grades: unknown key 'max_pc' (did you mean 'max_pd'?)", InputError);
  CHECK_THROWS_WITH_AS(parse_config("monitoring:\n  alerts: {pd_ratio: 0.5}\n", "c.yaml"),
                       "c.yaml:2: key 'pd_ratio': must be above 1", InputError);
  CHECK_THROWS_WITH_AS(parse_config("monitoring:\n  alert: {}\n", "c.yaml"),
                       "c.yaml:2: monitoring: unknown key 'alert' (did you mean 'alerts'?)", InputError);
}

TEST_CASE("portfolio and irb settings are checked key by key") {
  const Config c = parse_config(
      "portfolio:\n  confidence_levels: [0.95, 0.9999]\n  asset_correlation: 0.2\n  seed: 42\n"
      "irb:\n  maturity: 1\n",
      "c.yaml");
  CHECK(c.portfolio.confidence_levels == std::vector<double>{0.95, 0.9999});
  CHECK(c.portfolio.asset_correlation == 0.2);
  CHECK(c.portfolio.seed == 42);
  CHECK(c.irb.maturity_years == 1.0);
  CHECK_FALSE(parse_config("portfolio:\n  asset_correlation: basel\n", "c.yaml").portfolio.asset_correlation);
  CHECK_THROWS_WITH_AS(parse_config("portfolio:\n  confidence_levels: [0.999, 0.99]\n", "c.yaml"),
                       "c.yaml:2: key 'confidence_levels': levels must be listed in increasing order",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_config("portfolio:\n  confidence_levels: [99.9]\n", "c.yaml"),
                       "c.yaml:2: key 'confidence_levels': each level must lie in (0, 1) (0.999 means 99.9%)",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_config("portfolio:\n  asset_correlation: 1.2\n", "c.yaml"),
                       "c.yaml:2: key 'asset_correlation': expected basel or a decimal in [0, 1)",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_config("portfolio:\n  loss_grid_points: 8\n", "c.yaml"),
                       "c.yaml:2: key 'loss_grid_points': must lie in [16, 1048576]", InputError);
  // The PD floor: a rule's name or a number (Ref: BCBS 2006 para 285, 0.03%; BCBS Dec 2017 for
  // corporates, 0.05%, CRE32.4, from memory).
  const Config b3 = parse_config("irb:\n  pd_floor: basel3\n", "c.yaml");
  CHECK(b3.irb.pd_floor_rule == firmcall::PdFloorRule::basel3);
  CHECK(b3.irb.pd_floor == 0.0005);
  const Config b2 = parse_config("irb:\n  pd_floor: basel2\n", "c.yaml");
  CHECK(b2.irb.pd_floor == 0.0003);
  const Config own = parse_config("irb:\n  pd_floor: 0.001\n", "c.yaml");
  CHECK(own.irb.pd_floor_rule == firmcall::PdFloorRule::value);
  CHECK(own.irb.pd_floor == 0.001);
  CHECK_THROWS_WITH_AS(parse_config("irb:\n  pd_flor: 0.001\n", "c.yaml"),
                       "c.yaml:2: irb: unknown key 'pd_flor' (did you mean 'pd_floor'?)", InputError);
}

TEST_CASE("configuration errors name the file, line and key") {
  CHECK_THROWS_WITH_AS(
      parse_config("scoring:\n  default_point_wieght: 0.4\n", "c.yaml"),
      "c.yaml:2: scoring: unknown key 'default_point_wieght' (did you mean 'default_point_weight'?)",
      InputError);
  CHECK_THROWS_WITH_AS(parse_config("scoring:\n  default_point_weight: 1.5\n", "c.yaml"),
                       "c.yaml:2: key 'default_point_weight': must lie in [0, 1]", InputError);
  CHECK_THROWS_WITH_AS(parse_config("scoring:\n  measure: real-world\n", "c.yaml"),
                       "c.yaml:2: key 'measure': expected physical or risk-neutral", InputError);
  CHECK_THROWS_WITH_AS(parse_config("solver:\n  max_newton_iterations: 2.5\n", "c.yaml"),
                       "c.yaml:2: key 'max_newton_iterations': must be a whole number", InputError);
  CHECK_THROWS_WITH_AS(parse_config("scorng: {}\n", "c.yaml"),
                       "c.yaml:1: configuration: unknown key 'scorng' (did you mean 'scoring'?)", InputError);
  CHECK_THROWS_WITH_AS(load_config("/nonexistent/firmcall.yaml"),
                       "cannot open file '/nonexistent/firmcall.yaml'", InputError);
  CHECK_THROWS_WITH_AS(parse_config("term_structure:\n  calibration: each\n", "c.yaml"),
                       "c.yaml:2: key 'calibration': expected once or per-horizon", InputError);
  CHECK_THROWS_WITH_AS(parse_config("term_structure:\n  barrier_growth: 3\n", "c.yaml"),
                       "c.yaml:2: key 'barrier_growth': must lie in [-1, 1] (0.02 means 2% a year)",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_config("term_structure:\n  barrier_ratio: 0\n", "c.yaml"),
                       "c.yaml:2: key 'barrier_ratio': must be positive", InputError);
  const Config t =
      parse_config("term_structure:\n  calibration: per-horizon\n  barrier_ratio: 0.8\n", "c.yaml");
  CHECK(t.term.calibration == Calibration::per_horizon);
  CHECK(t.term.barrier_ratio == 0.8);
  CHECK_THROWS_WITH_AS(
      parse_config("scoring:\n  currency: eur\n", "c.yaml"),
      "c.yaml:2: key 'currency': must be three upper-case letters (ISO 4217 style, e.g. EUR), "
      "got 'eur'",
      InputError);
  CHECK(parse_config("scoring:\n  currency: GBP\n", "c.yaml").score.currency.view() == "GBP");
  const Config c = parse_config("scoring:\n  measure: risk-neutral\n  horizon: 2\n", "c.yaml");
  CHECK(c.score.measure == Measure::risk_neutral);
  CHECK(c.score.horizon_years == 2.0);
}

TEST_CASE("the shipped config/firmcall.yaml validates") {
  const Config shipped = load_config(testing::source_dir() + "/config/firmcall.yaml");
  const OptionCheck p = shipped.validate();
  CHECK_MESSAGE(!p, (p ? p->to_string() : std::string()));
}

TEST_CASE("the reader reports each settings constraint at its key") {
  // Every constraint of the sections' validate(), as the reader words it: file, line, YAML key.
  const std::pair<const char*, const char*> cases[] = {
      {"scoring:\n  horizon: 0\n", "c.yaml:2: key 'horizon': must be positive"},
      {"scoring:\n  default_lgd: -0.1\n", "c.yaml:2: key 'default_lgd': must lie in [0, 1]"},
      {"scoring:\n  max_equity_vol: -2\n", "c.yaml:2: key 'max_equity_vol': must be positive"},
      {"stress:\n  pd_threshold: 1\n", "c.yaml:2: key 'pd_threshold': must lie in (0, 1)"},
      {"history:\n  min_observations: 0\n", "c.yaml:2: key 'min_observations': must be positive"},
      {"history:\n  min_observations: -2.5\n", "c.yaml:2: key 'min_observations': must be positive"},
      {"history:\n  min_observations: 2.5\n", "c.yaml:2: key 'min_observations': must be a whole number"},
      {"history:\n  trading_days_per_year: 0\n", "c.yaml:2: key 'trading_days_per_year': must be positive"},
      {"history:\n  ewma_decay: 0\n", "c.yaml:2: key 'ewma_decay': must lie in (0, 1)"},
      {"history:\n  iteration_tolerance: -1e-8\n", "c.yaml:2: key 'iteration_tolerance': must be positive"},
      {"history:\n  max_iterations: 2e9\n",
       "c.yaml:2: key 'max_iterations': too large (the maximum is 1000000000)"},
      {"solver:\n  max_newton_iterations: 1e12\n",
       "c.yaml:2: key 'max_newton_iterations': too large (the maximum is 1000000000)"},
      {"history:\n  max_iterations: 2.5\n", "c.yaml:2: key 'max_iterations': must be a whole number"},
      {"portfolio:\n  asset_correlation: baselx\n",
       "c.yaml:2: key 'asset_correlation': expected basel or a decimal in [0, 1), got 'baselx'"},
      {"history:\n  confidence_level: 1\n", "c.yaml:2: key 'confidence_level': must lie in (0, 1)"},
      {"history:\n  drift_shrinkage: -0.5\n", "c.yaml:2: key 'drift_shrinkage': must lie in [0, 1]"},
      {"monitoring:\n  busy_timeout_seconds: 0\n", "c.yaml:2: key 'busy_timeout_seconds': must be positive"},
      {"monitoring:\n  alerts:\n    dd_drop: 0\n", "c.yaml:3: key 'dd_drop': must be positive"},
      {"monitoring:\n  alerts:\n    pd_ratio_min_pd: 2\n",
       "c.yaml:3: key 'pd_ratio_min_pd': must lie in [0, 1]"},
      {"monitoring:\n  alerts:\n    downgrade_notches: 0\n",
       "c.yaml:3: key 'downgrade_notches': must be positive"},
      {"monitoring:\n  alerts:\n    pd_ceiling: -1\n", "c.yaml:3: key 'pd_ceiling': must lie in [0, 1]"},
      {"portfolio:\n  confidence_levels: []\n",
       "c.yaml:2: key 'confidence_levels': expected a list such as [0.99, 0.995, 0.999]"},
      {"portfolio:\n  confidence_levels: 0.99\n",
       "c.yaml:2: key 'confidence_levels': expected a list such as [0.99, 0.995, 0.999]"},
      {"portfolio:\n  confidence_levels: [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, x]\n",
       "c.yaml:2: key 'confidence_levels': at most 8 levels"},
      {"portfolio:\n  loss_grid_points: 0\n", "c.yaml:2: key 'loss_grid_points': must be positive"},
      {"portfolio:\n  quadrature_tolerance: 1\n", "c.yaml:2: key 'quadrature_tolerance': must lie in (0, 1)"},
      {"irb:\n  pd_floor: 1.5\n", "c.yaml:2: key 'pd_floor': must lie in [0, 1]"},
      {"irb:\n  pd_floor: basel4\n",
       "c.yaml:2: key 'pd_floor': expected basel2, basel3 or a number, got 'basel4'"},
      {"irb:\n  maturity: 0\n", "c.yaml:2: key 'maturity': must be positive"},
      // The first broken key in the reader's order is the one reported.
      {"history:\n  confidence_level: 2\n  ewma_decay: 2\n",
       "c.yaml:3: key 'ewma_decay': must lie in (0, 1)"},
  };
  for (const auto& [yaml, message] : cases) {
    CAPTURE(yaml);
    CHECK_THROWS_WITH_AS(parse_config(yaml, "c.yaml"), message, InputError);
  }
}

TEST_CASE("a second YAML document in a settings file is an error naming its line") {
  CHECK_THROWS_WITH_AS(
      parse_config("stress:\n  pd_threshold: 0.05\n---\nstress:\n  pd_threshold: 0.5\n", "c.yaml"),
      "c.yaml:3: a second YAML document starts here; a file holds one document (remove "
      "the '---' line, or split the file)",
      InputError);
}
