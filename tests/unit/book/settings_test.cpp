// Tests of the settings structs' validate(): the built-in defaults pass, and each constraint the
// settings reader enforces is caught with the field and the constraint named.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/book/settings.hpp"

using namespace firmcall;

namespace {

// The problem validate() reports, as "field: constraint", or "" when valid.
template <class Settings>
std::string problem_of(const Settings& s) {
  const OptionCheck p = s.validate();
  return p ? p->field + ": " + p->constraint : std::string();
}

}  // namespace

TEST_CASE("the built-in settings validate") {
  const ScoreSettings score;  // named: GCC 12 warns on the string member of a temporary
  CHECK(problem_of(score) == "");
  CHECK(problem_of(StressSettings{}) == "");
  CHECK(problem_of(HistorySettings{}) == "");
  CHECK(problem_of(AlertRules{}) == "");
  CHECK(problem_of(MonitorSettings{}) == "");
  CHECK(problem_of(TermSettings{}) == "");
  CHECK(problem_of(PortfolioSettings{}) == "");
  CHECK(problem_of(IrbSettings{}) == "");
  CHECK(problem_of(default_grade_scale()) == "");
  const Config config;
  CHECK(problem_of(config) == "");
}

TEST_CASE("ScoreSettings: each constraint is caught") {
  ScoreSettings s;
  s.default_point_weight = 1.5;
  CHECK(problem_of(s) == "default_point_weight: must lie in [0, 1]");
  s.default_point_weight = -0.1;
  CHECK(problem_of(s) == "default_point_weight: must lie in [0, 1]");
  s.default_point_weight = 1.0;  // the bounds are allowed
  CHECK(problem_of(s) == "");
  s.horizon_years = 0.0;
  CHECK(problem_of(s) == "horizon_years: must be positive");
  s.horizon_years = 1.0;
  s.default_lgd = 1.01;
  CHECK(problem_of(s) == "default_lgd: must lie in [0, 1]");
  s.default_lgd = 0.0;
  s.max_equity_vol = -1.0;
  CHECK(problem_of(s) == "max_equity_vol: must be positive");
  const OptionCheck p = s.validate();
  REQUIRE(p);
  CHECK(p->value == "-1");
  CHECK(p->to_string() == "field 'max_equity_vol': must be positive, got -1");
}

TEST_CASE("ScoreSettings: the default currency is empty or three upper-case letters") {
  // The form of ISO 4217 alphabetic codes (ISO 4217, from memory): three Latin capitals.
  ScoreSettings s;
  CHECK(s.currency.empty());
  CHECK(s.currency.set("GBP"));
  CHECK(s.currency.view() == "GBP");
  for (const char* bad : {"eur", "EURO", "EU", "E1R", "EUR ", "\xc3\x89UR"}) {
    CAPTURE(bad);
    CHECK_FALSE(s.currency.set(bad));
    CHECK(s.currency.view() == "GBP");  // unchanged
  }
  CHECK(problem_of(s) == "");
  CHECK(s.currency.set(""));
  CHECK(s.currency.empty());
  CHECK(is_currency_code("XAU"));
  CHECK_FALSE(is_currency_code("gbp"));
  CHECK_FALSE(is_currency_code(""));
}

TEST_CASE("ScoreSettings: the solver section is checked with the solver's own rules") {
  ScoreSettings s;
  s.solver.max_newton_iterations = 0;
  CHECK(problem_of(s).rfind("solver.max_newton_iterations: ", 0) == 0);
  s.solver.max_newton_iterations = 60;
  s.solver.residual_tolerance = -1e-12;
  CHECK(problem_of(s).rfind("solver.residual_tolerance: ", 0) == 0);
  Config c;
  c.score.solver.max_fallback_iterations = -3;
  CHECK(problem_of(c).rfind("score.solver.max_fallback_iterations: ", 0) == 0);
}

TEST_CASE("StressSettings: the threshold lies in the open unit interval") {
  StressSettings s;
  for (double bad : {0.0, 1.0, -0.5, 2.0}) {
    s.pd_threshold = bad;
    CHECK(problem_of(s) == "pd_threshold: must lie in (0, 1)");
  }
  s.pd_threshold = 0.999;
  CHECK(problem_of(s) == "");
}

TEST_CASE("HistorySettings: each constraint is caught") {
  const auto with = [](auto change) {
    HistorySettings h;
    change(h);
    return problem_of(h);
  };
  CHECK(with([](HistorySettings& h) { h.min_observations = 0; }) == "min_observations: must be positive");
  CHECK(with([](HistorySettings& h) { h.trading_days_per_year = -252; }) ==
        "trading_days_per_year: must be positive");
  CHECK(with([](HistorySettings& h) { h.ewma_decay = 1.0; }) == "ewma_decay: must lie in (0, 1)");
  CHECK(with([](HistorySettings& h) { h.ewma_decay = 0.0; }) == "ewma_decay: must lie in (0, 1)");
  CHECK(with([](HistorySettings& h) { h.iteration_tolerance = 0.0; }) ==
        "iteration_tolerance: must be positive");
  CHECK(with([](HistorySettings& h) { h.max_iterations = -3; }) == "max_iterations: must be positive");
  CHECK(with([](HistorySettings& h) { h.confidence_level = 1.0; }) == "confidence_level: must lie in (0, 1)");
  CHECK(with([](HistorySettings& h) { h.min_observations = 1; }) == "");
}

TEST_CASE("AlertRules and MonitorSettings: each constraint is caught") {
  const auto with = [](auto change) {
    AlertRules a;
    change(a);
    return problem_of(a);
  };
  CHECK(with([](AlertRules& a) { a.dd_drop = 0.0; }) == "dd_drop: must be positive");
  CHECK(with([](AlertRules& a) { a.pd_ratio = 1.0; }) == "pd_ratio: must be above 1");
  CHECK(with([](AlertRules& a) { a.pd_ratio_min_pd = -1e-9; }) == "pd_ratio_min_pd: must lie in [0, 1]");
  CHECK(with([](AlertRules& a) { a.downgrade_notches = 0; }) == "downgrade_notches: must be positive");
  CHECK(with([](AlertRules& a) { a.pd_ceiling = 1.5; }) == "pd_ceiling: must lie in [0, 1]");
  CHECK(with([](AlertRules& a) { a.pd_ceiling = 1.0; }) == "");  // "switched off", still valid
  MonitorSettings m;
  m.busy_timeout_seconds = 0.0;
  CHECK(problem_of(m) == "busy_timeout_seconds: must be positive");
  m.busy_timeout_seconds = 1.0;
  m.alerts.pd_ratio = 0.5;
  CHECK(problem_of(m) == "alerts.pd_ratio: must be above 1");
}

TEST_CASE("TermSettings: each constraint is caught") {
  TermSettings t;
  t.barrier_ratio = 0.0;
  CHECK(problem_of(t) == "barrier_ratio: must be positive");
  t.barrier_ratio = 0.8;
  t.barrier_growth = -1.5;
  CHECK(problem_of(t) == "barrier_growth: must lie in [-1, 1] (0.02 means 2% a year)");
  t.barrier_growth = -1.0;
  CHECK(problem_of(t) == "");
}

TEST_CASE("PortfolioSettings: each constraint is caught") {
  const auto with = [](auto change) {
    PortfolioSettings p;
    change(p);
    return problem_of(p);
  };
  CHECK(with([](PortfolioSettings& p) { p.confidence_levels.clear(); }) ==
        "confidence_levels: expected a list such as [0.99, 0.995, 0.999]");
  CHECK(with([](PortfolioSettings& p) { p.confidence_levels.assign(kMaxConfidenceLevels + 1, 0.5); }) ==
        "confidence_levels: at most 8 levels");
  CHECK(with([](PortfolioSettings& p) {
          p.confidence_levels = {0.99, 1.0};
        }) == "confidence_levels: each level must lie in (0, 1) (0.999 means 99.9%)");
  CHECK(with([](PortfolioSettings& p) {
          p.confidence_levels = {0.99, 0.99};
        }) == "confidence_levels: levels must be listed in increasing order");
  CHECK(with([](PortfolioSettings& p) { p.asset_correlation = 1.0; }) ==
        "asset_correlation: expected basel or a decimal in [0, 1)");
  CHECK(with([](PortfolioSettings& p) { p.asset_correlation = 0.0; }) == "");
  CHECK(with([](PortfolioSettings& p) { p.loss_grid_points = 0; }) == "loss_grid_points: must be positive");
  CHECK(with([](PortfolioSettings& p) { p.loss_grid_points = 15; }) ==
        "loss_grid_points: must lie in [16, 1048576]");
  CHECK(with([](PortfolioSettings& p) { p.loss_grid_points = (1 << 20) + 1; }) ==
        "loss_grid_points: must lie in [16, 1048576]");
  CHECK(with([](PortfolioSettings& p) { p.loss_grid_points = 16; }) == "");
  CHECK(with([](PortfolioSettings& p) { p.quadrature_tolerance = 1.0; }) ==
        "quadrature_tolerance: must lie in (0, 1)");
  PortfolioSettings p;
  p.confidence_levels = {0.9, 0.95, 0.9};
  const OptionCheck check = p.validate();
  REQUIRE(check);
  CHECK(check->value == "[0.9, 0.95, 0.9]");
}

TEST_CASE("IrbSettings and GradeScale: each constraint is caught") {
  IrbSettings irb;
  irb.pd_floor = 1.5;
  CHECK(problem_of(irb) == "pd_floor: must lie in [0, 1]");
  irb.pd_floor = 0.0;
  // Ref: BCBS 2006 para 285 (0.03%); a named rule holds its own value.
  CHECK(problem_of(irb) == "pd_floor: must be 0.0003 under rule basel2");
  irb.pd_floor_rule = firmcall::PdFloorRule::basel3;
  irb.pd_floor = 0.0003;
  CHECK(problem_of(irb) == "pd_floor: must be 0.0005 under rule basel3");
  irb.pd_floor = 0.0005;  // Ref: BCBS Dec 2017 corporates, CRE32.4 (from memory)
  CHECK(problem_of(irb) == "");
  irb.pd_floor_rule = firmcall::PdFloorRule::value;
  irb.pd_floor = 0.0;
  CHECK(problem_of(irb) == "");
  irb.maturity_years = 0.0;
  CHECK(problem_of(irb) == "maturity_years: must be positive");
  GradeScale g;
  CHECK(problem_of(g) == "bands: the scale has no grades");
  g.bands = {{"A", 0.5}};
  CHECK(problem_of(g) == "bands: the last grade must have max_pd 1 (it holds every PD up to 1)");
}

TEST_CASE("Config names the section of the first broken field") {
  Config c;
  c.history.ewma_decay = 1.5;
  c.irb.maturity_years = -1.0;  // a later section: not the first problem
  CHECK(problem_of(c) == "history.ewma_decay: must lie in (0, 1)");
  c.history.ewma_decay = 0.9;
  CHECK(problem_of(c) == "irb.maturity_years: must be positive");
  c.irb.maturity_years = 1.0;
  c.grades.bands.clear();
  CHECK(problem_of(c) == "grades.bands: the scale has no grades");
  c.grades = default_grade_scale();
  c.monitor.alerts.downgrade_notches = 0;
  CHECK(problem_of(c) == "monitor.alerts.downgrade_notches: must be positive");
}
