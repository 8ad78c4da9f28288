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

namespace {

StoredObligor calibrated(const std::string& id, double dd, double model_pd, double calibrated_pd) {
  StoredObligor o = scored(id, dd, model_pd);
  o.inputs.horizon_years = 1.0;
  o.pd_calibrated = calibrated_pd;
  o.pd_calibrated_lower = calibrated_pd / 2;
  o.pd_calibrated_upper = calibrated_pd * 2;
  return o;
}

RunInfo run_with(std::int64_t id, DrivingPd driving, const std::string& method, char sha) {
  RunInfo r;
  r.run_id = id;
  r.as_of = "2026-11-0" + std::to_string(id);
  r.driving_pd = driving;
  if (!method.empty())
    r.calibration = {.file = "cal.yaml", .method = method, .data_sha256 = std::string(64, sha)};
  return r;
}

}  // namespace

TEST_CASE("runs driving the calibrated PD of one calibration are compared on it") {
  const RunInfo a = run_with(1, DrivingPd::calibrated, "logistic", 'a');
  const RunInfo b = run_with(2, DrivingPd::calibrated, "logistic", 'a');
  const PdBasisChoice basis = comparison_basis(a, b);
  CHECK(basis.basis == PdBasis::calibrated);
  CHECK(basis.note.empty());
  CHECK(basis.description() == "calibrated one-year (method logistic, data sha256 aaaaaaaaaaaa...)");

  // The model PD hardly moves; the calibrated PD triples and crosses the 5% ceiling, two grades
  // down on the test scale (B 0.4% -> D 6%).
  const std::vector<StoredObligor> before = {calibrated("X", 2.0, 0.010, 0.004)};
  const std::vector<StoredObligor> now = {calibrated("X", 1.9, 0.011, 0.06)};
  const Comparison c = compare_runs(before, now, test_scale(), test_rules(), basis);
  const Mover& m = find(c, "X");
  CHECK(m.pd_before == 0.004);
  CHECK(m.pd_now == 0.06);
  CHECK(m.grade_before == 1);       // B: 0.1% < 0.4% <= 0.5%
  CHECK(m.grade_now == 3);          // D: 2% < 6% <= 10%
  CHECK(m.has(Alert::pd_jump));     // 0.06 > 2 x 0.004
  CHECK(m.has(Alert::downgrade));   // two notches
  CHECK(m.has(Alert::pd_ceiling));  // 6% > 5%
  CHECK_FALSE(m.has(Alert::dd_drop));
  CHECK(c.basis.basis == PdBasis::calibrated);

  // The same runs on the model PD: no alert fires (1.0% -> 1.1%, both C).
  const Comparison on_model = compare_runs(before, now, test_scale(), test_rules());
  CHECK(find(on_model, "X").severity == 0);
  CHECK(find(on_model, "X").pd_now == 0.011);

  std::string csv;
  write_movers_report({a, b}, c, test_scale(), test_rules(), {}, OutputFormat::csv, csv);
  CHECK(
      csv.starts_with("id,name,change,status_before,status_now,dd_before,dd_now,dd_change,"
                      "pd_calibrated_before,pd_calibrated_now,pd_calibrated_change,pd_calibrated_ratio,"));
  std::string table;
  write_movers_report({a, b}, c, test_scale(), test_rules(), {}, OutputFormat::table, table);
  CHECK(table.find("\nPD: calibrated one-year (method logistic, data sha256 aaaaaaaaaaaa...)\n") !=
        std::string::npos);
  CHECK(table.find("cal PD %") != std::string::npos);
  std::string json;
  write_movers_report({a, b}, c, test_scale(), test_rules(), {}, OutputFormat::json, json);
  CHECK(json.find("\"pd_basis\": {\"pd\": \"calibrated_one_year\", \"calibration_method\": \"logistic\"") !=
        std::string::npos);
  CHECK(json.find("\"pd_calibrated_now\": 0.06") != std::string::npos);
}

TEST_CASE("a calibrated run and a model run are compared on the model PD with a note") {
  const RunInfo model = run_with(1, DrivingPd::model, "", 'a');
  const RunInfo cal = run_with(2, DrivingPd::calibrated, "logistic", 'a');
  const PdBasisChoice mixed = comparison_basis(model, cal);
  CHECK(mixed.basis == PdBasis::model);
  CHECK(mixed.note ==
        "run 2 drives the calibrated PD and run 1 the model PD; both are compared on the model PD");
  CHECK(comparison_basis(cal, model).note ==
        "run 2 drives the calibrated PD and run 1 the model PD; both are compared on the model PD");
  // Two calibrations (another default history) are not compared with each other either.
  const PdBasisChoice other = comparison_basis(cal, run_with(3, DrivingPd::calibrated, "logistic", 'b'));
  CHECK(other.basis == PdBasis::model);
  CHECK(other.note.find("different calibrations") != std::string::npos);
  // A run recorded with a calibration but driven by the model PD is a model run.
  CHECK(comparison_basis(model, run_with(4, DrivingPd::model, "logistic", 'a')).note.empty());
  CHECK(comparison_basis(model, run_with(4, DrivingPd::model, "", 'a')).basis == PdBasis::model);

  const std::vector<StoredObligor> before = {calibrated("X", 2.0, 0.010, 0.004)};
  const std::vector<StoredObligor> now = {calibrated("X", 1.9, 0.011, 0.06)};
  const Comparison c = compare_runs(before, now, test_scale(), test_rules(), mixed);
  CHECK(find(c, "X").pd_before == 0.010);  // model PDs on both sides
  CHECK(find(c, "X").pd_now == 0.011);
  std::string table;
  write_movers_report({model, cal}, c, test_scale(), test_rules(), {}, OutputFormat::table, table);
  CHECK(table.find("\nPD: model (run 2 drives the calibrated PD and run 1 the model PD; both are compared on "
                   "the model PD)\n") != std::string::npos);
  std::string csv;
  write_movers_report({model, cal}, c, test_scale(), test_rules(), {}, OutputFormat::csv, csv);
  CHECK(csv.find(",pd_before,pd_now,pd_change,pd_ratio,") != std::string::npos);
}

TEST_CASE("grade migration between two stored runs: matrix, new and gone margins, PSI") {
  testing::TempDir dir;
  const std::string path = dir.file("h.sqlite");
  RunStore store(path, StoreOpen::create, 5.0);
  const auto one_year = [](const std::string& id, double pd) {
    StoredObligor o = scored(id, 2.0, pd);
    o.inputs.horizon_years = 1.0;
    return o;
  };
  RunInfo info;
  info.as_of = "2026-11-06";
  {
    RunWriter w(store, info);
    for (const auto& o : {one_year("A", 0.0005), one_year("B", 0.004), one_year("C", 0.015),
                          one_year("GONE", 0.05), unscored("BROKE")}) {
      w.add(o);
    }
    w.commit();
  }
  info.as_of = "2026-11-13";
  {
    RunWriter w(store, info);
    for (const auto& o : {one_year("A", 0.003), one_year("B", 0.004), one_year("C", 0.2),
                          one_year("NEW", 0.0008), unscored("BROKE"), unscored("")}) {
      w.add(o);
    }
    w.commit();
  }
  const RunMigration m = run_grade_migration(store, "1", "2", test_scale());
  REQUIRE(m.grades() == 5);
  const std::size_t kNew = 5, kGone = 5, kUngraded = 6;
  // Hand count from the PDs above on the test scale (A <= 0.1%, B <= 0.5%, C <= 2%, D <= 10%).
  CHECK(m.at(0, 1) == 1);  // A: 0.05% -> 0.3%
  CHECK(m.at(1, 1) == 1);  // B stays
  CHECK(m.at(2, 4) == 1);  // C -> E
  CHECK(m.at(3, kGone) == 1);
  CHECK(m.at(kNew, 0) == 1);
  CHECK(m.at(kUngraded, kUngraded) == 1);
  std::size_t total = 0;
  for (std::size_t c : m.cells) total += c;
  CHECK(total == 6);
  CHECK(m.left_out == 1);  // the entry without an id
  CHECK(m.from_counts == std::vector<std::size_t>{1, 1, 1, 1, 0});
  CHECK(m.to_counts == std::vector<std::size_t>{1, 2, 0, 0, 1});
  // PSI by its definition sum (a - e) ln(a / e) over the grades, with 0.5 added to every grade's
  // count when one is empty (common practice; kPsiEmptyGradeCount).
  const double a[] = {1.5 / 6.5, 2.5 / 6.5, 0.5 / 6.5, 0.5 / 6.5, 1.5 / 6.5};  // 4 obligors + 5 x 0.5
  const double e[] = {1.5 / 6.5, 1.5 / 6.5, 1.5 / 6.5, 1.5 / 6.5, 0.5 / 6.5};
  double psi = 0.0;
  for (int g = 0; g < 5; ++g) psi += (a[g] - e[g]) * std::log(a[g] / e[g]);
  CHECK(m.psi == doctest::Approx(psi).epsilon(1e-12));
  CHECK(m.note.empty());

  std::string json;
  write_run_migration_report(path, m, OutputFormat::json, json);
  CHECK(json.find("\"from_run\": 1, \"to_run\": 2") != std::string::npos);
  CHECK(json.find("{\"from_grade\": \"D\", \"to_grade\": \"gone\", \"obligors\": 1, \"row_share\": 1}") !=
        std::string::npos);
  CHECK(json.find("{\"from_grade\": \"new\", \"to_grade\": \"A\", \"obligors\": 1, \"row_share\": 1}") !=
        std::string::npos);

  CHECK_THROWS_WITH_AS(
      run_grade_migration(store, "2", "2", test_scale()),
      ("history store '" + path + "': run 2 is named as both runs of the migration; name two different runs")
          .c_str(),
      InputError);
  CHECK_THROWS_WITH_AS(run_grade_migration(store, "1", "7", test_scale()),
                       ("history store '" + path + "': no run with id 7").c_str(), InputError);
  info.as_of = "2026-11-20";
  {
    RunWriter w(store, info);
    w.add(unscored("A"));
    w.commit();
  }
  CHECK_THROWS_WITH_AS(run_grade_migration(store, "2", "3", test_scale()),
                       ("history store '" + path +
                        "': run 3 (as of 2026-11-20) has no graded obligor (none was scored), so there is "
                        "no grade migration")
                           .c_str(),
                       InputError);
}
