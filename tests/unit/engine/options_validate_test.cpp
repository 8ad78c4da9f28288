// Tests of validate() on the engine's run options: the defaults are valid and each constraint the
// engines rely on is reported with its field and rule.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/engine/portfolio_book.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/engine/term_book.hpp"

namespace {

// The first broken constraint must name `field` and say `constraint`.
void check_problem(const firmcall::OptionCheck& check, const std::string& field,
                   const std::string& constraint) {
  REQUIRE(check.has_value());
  CHECK(check->field == field);
  CHECK(check->constraint == constraint);
}

}  // namespace

TEST_CASE("ScoreBookOptions: defaults validate, threads and chunk_bytes are checked") {
  firmcall::ScoreBookOptions o;
  CHECK_FALSE(o.validate().has_value());
  o.threads = 0;
  check_problem(o.validate(), "threads", "must be at least 1");
  CHECK(o.validate()->value == "0");
  o = {};
  o.chunk_bytes = 0;
  check_problem(o.validate(), "chunk_bytes", "must be positive");
}

TEST_CASE("StressBookOptions: defaults validate, threads is checked, chunk_obligors 0 is accepted") {
  firmcall::StressBookOptions o;
  CHECK_FALSE(o.validate().has_value());
  o.chunk_obligors = 0;  // the engine takes 0 as one obligor per step
  CHECK_FALSE(o.validate().has_value());
  o.threads = 0;
  check_problem(o.validate(), "threads", "must be at least 1");
}

TEST_CASE("TermBookOptions: defaults validate and each constraint is caught") {
  firmcall::TermBookOptions o;
  CHECK_FALSE(o.validate().has_value());
  o.horizons = {0.5, 1.0, 100.0};  // the bounds parse_horizons accepts
  CHECK_FALSE(o.validate().has_value());

  firmcall::TermBookOptions t;
  t.threads = 0;
  check_problem(t.validate(), "threads", "must be at least 1");

  firmcall::TermBookOptions h;
  h.horizons.assign(firmcall::kMaxHorizons + 1, 1.0);
  check_problem(h.validate(), "horizons", "must hold at most 30 horizons");
  h.horizons = {0.0};
  check_problem(h.validate(), "horizons", "must be in (0, 100] years");
  h.horizons = {100.5};
  check_problem(h.validate(), "horizons", "must be in (0, 100] years");
  h.horizons = {1.0, 1.0};
  check_problem(h.validate(), "horizons", "must be strictly increasing");
  CHECK(h.validate()->value == "1");

  firmcall::TermBookOptions m;
  m.models.clear();
  check_problem(m.validate(), "models", "must name at least one model");

  firmcall::TermBookOptions b;
  b.barrier.default_point_ratio = 0.0;
  check_problem(b.validate(), "barrier.default_point_ratio", "must be positive");
  b.barrier.default_point_ratio = 1.0;
  b.barrier.growth_rate_cc = -1.0;  // the edge the command line accepts
  CHECK_FALSE(b.validate().has_value());
  b.barrier.growth_rate_cc = 1.5;
  check_problem(b.validate(), "barrier.growth_rate_cc", "must be in [-1, 1]");
  CHECK(b.validate()->value == "1.5");
}

TEST_CASE("PortfolioBookOptions: defaults validate, threads and asset_correlation are checked") {
  firmcall::PortfolioBookOptions o;
  CHECK_FALSE(o.validate().has_value());
  o.asset_correlation = 0.0;  // [0, 1) as the command line reads it
  CHECK_FALSE(o.validate().has_value());
  o.asset_correlation = 1.0;
  check_problem(o.validate(), "asset_correlation", "must be in [0, 1)");
  o.asset_correlation = -0.1;
  check_problem(o.validate(), "asset_correlation", "must be in [0, 1)");
  o.asset_correlation.reset();
  o.threads = 0;
  check_problem(o.validate(), "threads", "must be at least 1");
}
