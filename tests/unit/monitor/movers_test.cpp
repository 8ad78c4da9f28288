// Tests of the comparison of two runs. The runs are built by hand so that every expected mover,
// grade and alert follows from the numbers below and the rules written in movers.hpp.
#include <doctest/doctest.h>

#include <cmath>

#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/movers.hpp"
#include "firmcall/monitor/store_error.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {

// A five-grade test scale: A <= 0.1%, B <= 0.5%, C <= 2%, D <= 10%, E <= 100%.
GradeScale test_scale() {
  return GradeScale{{{"A", 0.001}, {"B", 0.005}, {"C", 0.02}, {"D", 0.1}, {"E", 1.0}}};
}

AlertRules test_rules() {
  return AlertRules{
      .dd_drop = 1.0, .pd_ratio = 2.0, .pd_ratio_min_pd = 1e-4, .downgrade_notches = 2, .pd_ceiling = 0.05};
}

StoredObligor scored(const std::string& id, double dd, double pd) {
  StoredObligor o;
  o.id = id;
  o.name = id + " Ltd";
  o.status = RowStatus::ok;
  o.has_inputs = true;
  o.has_measures = true;
  o.measures.distance_to_default = dd;
  o.measures.pd = pd;
  return o;
}

StoredObligor unscored(const std::string& id) {
  StoredObligor o;
  o.id = id;
  o.status = RowStatus::invalid_input;
  o.message = "field 'equity_vol': missing";
  return o;
}

const Mover& find(const Comparison& c, const std::string& id) {
  for (const Mover& m : c.movers) {
    if (m.id == id) return m;
  }
  FAIL("no mover " << id);
  return c.movers.front();
}

}  // namespace

TEST_CASE("two hand-built runs give the movers, migrations and alerts that follow from the rules") {
  const std::vector<StoredObligor> before = {
      scored("FALL", 3.0, 0.0008),  // A
      scored("SLIP", 2.5, 0.004),   // B
      scored("TINY", 8.0, 1e-9),    // A
      scored("HIGH", 1.5, 0.07),    // D
      scored("BETTER", 1.0, 0.03),  // D
      scored("GONE", 2.0, 0.01),    // C, not in the newer run
      scored("BROKE", 2.9, 0.002),  // B, not scored in the newer run
  };
  const std::vector<StoredObligor> now = {
      scored("FALL", 1.6, 0.012),    // C: DD -1.4, PD x15, two notches down
      scored("SLIP", 2.0, 0.009),    // C: DD -0.5, PD x2.25, one notch
      scored("TINY", 7.0, 5e-8),     // A: DD -1.0 (not more than 1), PD x50 but below 1e-4
      scored("HIGH", 1.45, 0.074),   // D: above the 5% ceiling
      scored("BETTER", 2.5, 0.006),  // C: one notch up
      unscored("BROKE"),
      scored("FRESH", 1.4, 0.08),    // new, above the ceiling
      scored("NEWOK", 3.3, 0.0005),  // new, quiet
      unscored("SLIP"),              // repeats an id: left out
      unscored(""),                  // no id: left out
  };
  const Comparison c = compare_runs(before, now, test_scale(), test_rules());

  std::vector<std::string> order;
  for (const Mover& m : c.movers) order.push_back(m.id);
  // Severity, then notches down, then PD now (not scored last), then id (movers.hpp).
  CHECK(order == std::vector<std::string>{"FALL", "SLIP", "FRESH", "HIGH", "BROKE", "NEWOK", "TINY", "GONE",
                                          "BETTER"});

  const Mover& fall = find(c, "FALL");
  CHECK(fall.kind == MoveKind::continuing);
  CHECK(fall.severity == 3);
  CHECK(fall.alert_list() == "dd_drop;pd_jump;downgrade");
  CHECK(fall.dd_change() == doctest::Approx(-1.4).epsilon(1e-12));
  CHECK(fall.pd_ratio() == doctest::Approx(15.0).epsilon(1e-12));
  CHECK(fall.grade_before == 0);
  CHECK(fall.grade_now == 2);
  CHECK(fall.notches() == 2);

  CHECK(find(c, "SLIP").alert_list() == "pd_jump");
  CHECK(find(c, "SLIP").notches() == 1);
  CHECK(find(c, "TINY").alerts == 0);
  CHECK(find(c, "HIGH").alert_list() == "pd_ceiling");
  CHECK(find(c, "BETTER").alerts == 0);
  CHECK(find(c, "BETTER").notches() == -1);
  const Mover& broke = find(c, "BROKE");
  CHECK(broke.alert_list() == "not_scored");
  CHECK(std::isnan(broke.pd_now));
  CHECK(broke.grade_before == 1);
  CHECK(broke.grade_now == -1);
  const Mover& fresh = find(c, "FRESH");
  CHECK(fresh.kind == MoveKind::added);
  CHECK(fresh.alert_list() == "pd_ceiling");
  CHECK(std::isnan(fresh.pd_ratio()));
  CHECK(find(c, "NEWOK").kind == MoveKind::added);
  CHECK(find(c, "NEWOK").alerts == 0);
  const Mover& gone = find(c, "GONE");
  CHECK(gone.kind == MoveKind::dropped);
  CHECK(gone.now == nullptr);
  CHECK(gone.name == "GONE Ltd");

  CHECK(c.continuing == 6);
  CHECK(c.added == 2);
  CHECK(c.dropped == 1);
  CHECK(c.flagged == 5);
  CHECK(c.skipped == 2);
  CHECK(c.downgraded == 2);       // FALL, SLIP
  CHECK(c.upgraded == 1);         // BETTER
  CHECK(c.unchanged_grade == 2);  // TINY, HIGH
  CHECK(c.migration[0][2] == 1);  // FALL A -> C
  CHECK(c.migration[1][2] == 1);  // SLIP B -> C
  CHECK(c.migration[0][0] == 1);  // TINY
  CHECK(c.migration[3][3] == 1);  // HIGH
  CHECK(c.migration[3][2] == 1);  // BETTER D -> C
}

TEST_CASE("the rules are strict where they say 'more than' and inclusive where they say 'at least'") {
  // Exactly at each bound: DD fell by exactly 1, PD exactly doubled, exactly at the ceiling; one notch
  // short of the downgrade bound.
  const std::vector<StoredObligor> before = {scored("X", 3.0, 0.01)};
  const std::vector<StoredObligor> at_bounds = {scored("X", 2.0, 0.02)};
  CHECK(compare_runs(before, at_bounds, test_scale(), test_rules()).movers[0].alerts == 0);
  AlertRules r = test_rules();
  r.pd_ceiling = 0.015;
  r.downgrade_notches = 1;  // C -> C is no downgrade
  CHECK(compare_runs(before, at_bounds, test_scale(), r).movers[0].alert_list() == "pd_ceiling");
  const std::vector<StoredObligor> past = {scored("X", 1.9, 0.0201)};  // C -> D
  CHECK(compare_runs(before, past, test_scale(), r).movers[0].alert_list() ==
        "dd_drop;pd_jump;downgrade;pd_ceiling");
}

TEST_CASE("runs to compare: the latest and the one before, or as named") {
  testing::TempDir dir;
  RunStore store(dir.file("h.sqlite"), StoreOpen::create, 5.0);
  RunInfo info;
  info.as_of = "2026-11-06";
  { RunWriter(store, info).commit(); }
  CHECK_THROWS_WITH_AS(
      select_runs(store, "", ""),
      ("history store '" + dir.file("h.sqlite") +
       "': run 1 (as of 2026-11-06) is the first one; nothing to compare it with (name the run to compare "
       "with)")
          .c_str(),
      StoreError);
  info.as_of = "2026-11-13";
  { RunWriter(store, info).commit(); }
  info.as_of = "2026-11-20";
  { RunWriter(store, info).commit(); }
  const RunPair latest = select_runs(store, "", "");
  CHECK(latest.now.run_id == 3);
  CHECK(latest.before.run_id == 2);
  const RunPair named = select_runs(store, "2026-11-13", "1");
  CHECK(named.now.run_id == 2);
  CHECK(named.before.run_id == 1);
  CHECK_THROWS_WITH_AS(select_runs(store, "2", "2026-11-13"),
                       "run 2 would be compared with itself; name another run", InputError);
}

TEST_CASE("MoversOptions::validate: the defaults and every top, 0 meaning all rows") {
  CHECK_FALSE(firmcall::MoversOptions{}.validate().has_value());
  CHECK_FALSE(firmcall::MoversOptions{.watchlist = true, .top = 0}.validate().has_value());
  CHECK_FALSE(firmcall::MoversOptions{.watchlist = false, .top = 1000000}.validate().has_value());
}
