// validate() of the portfolio layer's options: the defaults pass, and each constraint the code
// relies on is caught with the field's name. The constraints are the documented domains: Basel
// IRB PD floor and maturity bounds (Basel II paras 285 and 320), confidence levels inside (0, 1)
// (common practice), grid and budget sizes the calls have always required.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "firmcall/portfolio/irb.hpp"
#include "firmcall/portfolio/loss_distribution.hpp"
#include "firmcall/portfolio/loss_simulation.hpp"

using namespace firmcall;

namespace {

void check_problem(const OptionCheck& check, const std::string& field, const std::string& constraint) {
  REQUIRE(check.has_value());
  CHECK(check->field == field);
  CHECK(check->constraint == constraint);
}

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

}  // namespace

TEST_CASE("IrbOptions: the defaults validate and each constraint names its field") {
  CHECK_FALSE(IrbOptions{}.validate().has_value());
  IrbOptions o;
  o.pd_floor = 1.0;
  check_problem(o.validate(), "pd_floor", "must lie in [0, 1)");
  o.pd_floor = -0.001;
  check_problem(o.validate(), "pd_floor", "must lie in [0, 1)");
  CHECK(o.validate()->value == "-0.001");

  o = {};
  o.min_maturity_years = 0.0;
  check_problem(o.validate(), "min_maturity_years", "must be positive");

  o = {};
  o.max_maturity_years = 0.5;  // below the minimum of one year
  check_problem(o.validate(), "max_maturity_years", "must be at least min_maturity_years");
  o.max_maturity_years = kNaN;
  check_problem(o.validate(), "max_maturity_years", "must be at least min_maturity_years");

  // A zero floor is allowed (PD 0 then means no capital).
  o = {};
  o.pd_floor = 0.0;
  CHECK_FALSE(o.validate().has_value());
}

TEST_CASE("irb_corporate refuses invalid options with its message") {
  IrbOptions o;
  o.min_maturity_years = 6.0;  // above the maximum of five years
  const IrbResult r = irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 100.0, .maturity_years = 2.5}, o);
  CHECK(r.status == IrbStatus::invalid_input);
  CHECK(std::string(r.message) ==
        "IRB options: PD floor must lie in [0, 1) and 0 < minimum maturity <= maximum");
  CHECK(irb_corporate({.pd = 0.01, .lgd = 0.45, .ead = 100.0, .maturity_years = 2.5}).ok());
}

TEST_CASE("OneFactorOptions: the defaults validate and each constraint names its field") {
  CHECK_FALSE(OneFactorOptions{}.validate().has_value());
  const std::string levels_rule = "must be distinct, ascending and inside (0, 1)";
  OneFactorOptions o;
  o.confidence_levels = {};
  check_problem(o.validate(), "confidence_levels", levels_rule);
  o.confidence_levels = {0.999, 0.99};
  check_problem(o.validate(), "confidence_levels", levels_rule);
  CHECK(o.validate()->value == "0.999,0.99");
  o.confidence_levels = {0.99, 0.99};
  check_problem(o.validate(), "confidence_levels", levels_rule);
  o.confidence_levels = {0.0, 0.99};
  check_problem(o.validate(), "confidence_levels", levels_rule);
  o.confidence_levels = {0.99, 1.0};
  check_problem(o.validate(), "confidence_levels", levels_rule);

  o = {};
  o.grid_points = 15;
  check_problem(o.validate(), "grid_points", "must lie in [16, 2^24]");
  o.grid_points = (std::size_t{1} << 24) + 1;
  check_problem(o.validate(), "grid_points", "must lie in [16, 2^24]");
  o.grid_points = 16;
  CHECK_FALSE(o.validate().has_value());

  o = {};
  o.tolerance = 0.0;
  check_problem(o.validate(), "tolerance", "must be positive");
  o.tolerance = kNaN;
  check_problem(o.validate(), "tolerance", "must be positive");

  o = {};
  o.loss_unit = -1.0;
  check_problem(o.validate(), "loss_unit", "must be finite and non-negative");
  o.loss_unit = kInf;
  check_problem(o.validate(), "loss_unit", "must be finite and non-negative");

  o = {};
  o.max_nodes = 63;
  check_problem(o.validate(), "max_nodes", "must be at least 64");
}

TEST_CASE("one_factor_loss_distribution refuses invalid options with its messages") {
  const std::vector<FactorExposure> book = {{0.02, 10.0, 0.2}, {0.05, 5.0, 0.1}};
  OneFactorOptions o;
  o.confidence_levels = {0.99, 0.95};
  LossDistribution d = one_factor_loss_distribution(book, o);
  CHECK(d.status == LossStatus::invalid_input);
  CHECK(d.message == "confidence levels must be distinct, ascending and inside (0, 1)");
  o = {};
  o.max_nodes = 10;
  d = one_factor_loss_distribution(book, o);
  CHECK(d.status == LossStatus::invalid_input);
  CHECK(d.message == "options: grid points in [16, 2^24], tolerance > 0, loss unit >= 0, max nodes >= 64");
  // With the default options the distribution is computed (this tiny book may end on the grid's
  // last point, grid_too_short, but it is not refused).
  CHECK(one_factor_loss_distribution(book, OneFactorOptions{}).status != LossStatus::invalid_input);
}

TEST_CASE("SimulationOptions: the defaults validate and each constraint names its field") {
  CHECK_FALSE(SimulationOptions{}.validate().has_value());
  SimulationOptions o;
  o.confidence_levels = {0.5, 0.4};
  check_problem(o.validate(), "confidence_levels", "must be distinct, ascending and inside (0, 1)");

  o = {};
  o.scenarios = 1;
  check_problem(o.validate(), "scenarios", "must lie in [2, 2^40]");
  CHECK(o.validate()->value == "1");
  o.scenarios = (std::uint64_t{1} << 40) + 1;
  check_problem(o.validate(), "scenarios", "must lie in [2, 2^40]");

  o = {};
  o.exceedance_points = {5.0, 2.0};
  check_problem(o.validate(), "exceedance_points", "must be ascending");
  CHECK(o.validate()->value == "5,2");
}

TEST_CASE("simulate_losses refuses invalid options in its order of checks") {
  const std::vector<SectorExposure> book = {{0.02, 10.0, 0.2, 0}};
  const FactorCholesky one{1, {1.0}};
  SimulationOptions o;
  o.scenarios = 1000;
  o.exceedance_points = {5.0, 2.0};
  CHECK(simulate_losses(book, one, o).message == "exceedance points must be ascending");
  // A broken factor model is reported before unordered exceedance points.
  CHECK(simulate_losses(book, FactorCholesky{}, o).message ==
        "the factor model has no valid Cholesky factor");
  o.scenarios = 1;
  CHECK(simulate_losses(book, one, o).message == "the number of scenarios must lie in [2, 2^40]");
  o = {};
  o.scenarios = 1000;
  CHECK(simulate_losses(book, one, o).status == SimulationStatus::ok);
}
