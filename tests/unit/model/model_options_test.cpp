// validate() of the model layer's options: the defaults pass, and each constraint the code relies
// on (or the settings reader enforces) is caught with the field's name. The constraints are the
// documented domains of the options (common practice: iteration budgets positive, tolerances
// positive, a grid of at least two points).
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>

#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/reverse_stress.hpp"

using namespace firmcall;

namespace {

void check_problem(const OptionCheck& check, const std::string& field, const std::string& constraint) {
  REQUIRE(check.has_value());
  CHECK(check->field == field);
  CHECK(check->constraint == constraint);
}

const MertonInputs kBase{.equity_value = 400,
                         .equity_vol_annual = 0.45,
                         .default_point = 700,
                         .risk_free_rate_cc = 0.03,
                         .horizon_years = 1,
                         .drift_annual = 0.03};

}  // namespace

TEST_CASE("MertonSolveOptions: the defaults validate") {
  CHECK_FALSE(MertonSolveOptions{}.validate().has_value());
}

TEST_CASE("MertonSolveOptions: each constraint names its field") {
  MertonSolveOptions o;
  o.max_newton_iterations = 0;
  check_problem(o.validate(), "max_newton_iterations", "must be positive");
  CHECK(o.validate()->value == "0");

  o = {};
  o.max_fallback_iterations = -3;
  check_problem(o.validate(), "max_fallback_iterations", "must be positive");
  CHECK(o.validate()->value == "-3");

  o = {};
  o.residual_tolerance = -1.0;
  check_problem(o.validate(), "residual_tolerance", "must be positive");
  CHECK(o.validate()->to_string() == "field 'residual_tolerance': must be positive, got -1");

  o.residual_tolerance = std::numeric_limits<double>::quiet_NaN();
  check_problem(o.validate(), "residual_tolerance", "must be positive");
  CHECK(o.validate()->value == "nan");
}

TEST_CASE("solve_asset refuses invalid options without running") {
  MertonSolveOptions o;
  o.residual_tolerance = -1.0;
  const AssetSolution s = solve_asset(kBase, o);
  CHECK(s.status == SolveStatus::invalid_input);
  CHECK(s.method == SolveMethod::none);
  CHECK(s.iterations == 0);
  CHECK(s.residual == -1.0);
  CHECK(s.input_check.ok());  // the inputs themselves are fine

  // The same inputs with the default options solve (guards against a check that refuses all).
  CHECK(solve_asset(kBase).status == SolveStatus::converged);

  AssetSolution batch[3];
  const MertonInputs in[3] = {kBase, kBase, kBase};
  solve_asset_batch(in, batch, 3, o);
  for (const AssetSolution& b : batch) CHECK(b.status == SolveStatus::invalid_input);
}

TEST_CASE("ReverseStressOptions: the defaults validate") {
  CHECK_FALSE(ReverseStressOptions{}.validate().has_value());
}

TEST_CASE("ReverseStressOptions: each constraint names its field") {
  ReverseStressOptions o;
  o.scan_points = 1;
  check_problem(o.validate(), "scan_points", "must be at least 2");

  o = {};
  o.max_refine_iterations = 0;
  check_problem(o.validate(), "max_refine_iterations", "must be positive");

  o = {};
  o.max_equity_fall = 1.0;
  check_problem(o.validate(), "max_equity_fall", "must lie in (0, 1)");
  o.max_equity_fall = 0.0;
  check_problem(o.validate(), "max_equity_fall", "must lie in (0, 1)");

  o = {};
  o.max_vol_multiplier = 1.0;
  check_problem(o.validate(), "max_vol_multiplier", "must be finite and greater than 1");
  o.max_vol_multiplier = std::numeric_limits<double>::infinity();
  check_problem(o.validate(), "max_vol_multiplier", "must be finite and greater than 1");
  CHECK(o.validate()->value == "inf");

  o = {};
  o.solver.residual_tolerance = 0.0;
  check_problem(o.validate(), "solver.residual_tolerance", "must be positive");
}

TEST_CASE("reverse searches refuse invalid options") {
  ReverseStressOptions o;
  o.scan_points = 1;
  CHECK(reverse_equity_fall(kBase, 0.05, o).status == ReverseStatus::invalid_input);
  CHECK(reverse_vol_multiplier(kBase, 0.05, o).status == ReverseStatus::invalid_input);
  o = {};
  o.max_vol_multiplier = 0.5;
  CHECK(reverse_vol_multiplier(kBase, 0.05, o).status == ReverseStatus::invalid_input);
  // With the default options both searches run (whatever they then find).
  CHECK(reverse_equity_fall(kBase, 0.05).status != ReverseStatus::invalid_input);
  CHECK(reverse_vol_multiplier(kBase, 0.05).status != ReverseStatus::invalid_input);
}
