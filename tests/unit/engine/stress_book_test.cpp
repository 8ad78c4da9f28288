// Tests of stress runs (src/stress.cpp, src/stress_output.cpp): the engine, its summaries and
// its output formats. Books and scenarios are fed from strings.
#include "firmcall/engine/stress_book.hpp"

#include <doctest/doctest.h>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <map>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include <boost/math/distributions/normal.hpp>

#include "csv_table.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/calibration_io.hpp"
#include "reference_solver.hpp"

using namespace firmcall;

namespace {

// Invented obligors: a spread of leverage and volatility, one with an explicit drift, ead and lgd
// on most, and BAD-5 whose equity volatility is missing.
const char* kBook = R"(book: stress test book
defaults: {rate: 0.03, horizon: 1}
obligors:
  - {id: OK-1, name: One, sector: Energy, country: DE, currency: EUR, market_cap: 2400, equity_vol: 0.31,
     short_term_debt: 800, long_term_debt: 1900, ead: 40, lgd: 0.4}
  - {id: OK-2, name: Two, sector: Utilities, country: GB, currency: GBP, market_cap: 800, equity_vol: 0.45,
     short_term_debt: 900, long_term_debt: 1500, ead: 25}
  - {id: OK-3, name: Three, sector: Energy, country: FR, currency: EUR, market_cap: 300, equity_vol: 0.7,
     default_point: 900, drift: 0.08, ead: 10, lgd: 0.6}
  - {id: OK-4, name: Four, sector: Technology, country: US, currency: USD, market_cap: 9000, equity_vol: 0.38,
     short_term_debt: 300, long_term_debt: 1200, rate: 0.042}
  - {id: BAD-5, name: Five, sector: Energy, country: DE, currency: EUR, market_cap: 500,
     short_term_debt: 100, long_term_debt: 100, ead: 5}
)";

using Csv = testing::CsvTable;
Csv parse_csv(const std::string& text) {
  return testing::parse_csv_table(text);
}

// The tests written before the asset-vol hold check the re-solve of (E', sE'): they run with
// --hold equity-vol; the asset-vol tests below pass kHoldAssetVol.
StressSettings held(StressHold hold) {
  StressSettings s;
  s.hold = hold;
  return s;
}
const StressSettings kHoldEquityVol = held(StressHold::equity_vol);
const StressSettings kHoldAssetVol = held(StressHold::asset_vol);

struct Run {
  StressSummary summary;
  std::string text;
};

Run run(const Book& book, const std::string& scenario_yaml, OutputFormat format = OutputFormat::csv,
        unsigned threads = 1, bool sensitivities = false, StressSettings stress = kHoldEquityVol) {
  const ScenarioSet set = parse_scenarios(scenario_yaml, "scen.yaml");
  check_filters(set, book);
  StressBookOptions opts;
  opts.format = format;
  opts.threads = threads;
  opts.sensitivities = sensitivities;
  opts.chunk_obligors = 3;  // several chunks even for a small book
  Run r;
  r.summary = run_stress(book, set.scenarios, set.origin, ScoreSettings{}, stress, opts,
                         [&](std::string_view s) { r.text += s; });
  return r;
}

Book book() {
  return parse_yaml_book(kBook, "book.yaml");
}

ScoredObligor scored(const ObligorRecord& rec, const BookDefaults& defaults) {
  ScoredObligor s;
  score_obligor(rec, defaults, ScoreSettings{}, s);
  return s;
}

}  // namespace

TEST_CASE("a zero shock reproduces the base run exactly") {
  const Book b = book();
  const Run r = run(b, R"(scenarios:
  - name: zero
    shocks: [{equity_change: 0, equity_vol_multiplier: 1, equity_vol_add_points: 0, rate_shift_bp: 0,
              default_point_change: 0}]
)");
  const Csv csv = parse_csv(r.text);
  REQUIRE(csv.rows.size() == b.obligors.size());
  for (std::size_t i = 0; i < b.obligors.size(); ++i) {
    const ScoredObligor base = scored(b.obligors[i], b.defaults);
    if (base.status != RowStatus::ok) continue;
    CHECK(csv.cell(i, "shocked") == "true");  // re-solved, not copied
    for (const char* m :
         {"asset_value", "asset_vol", "distance_to_default", "pd", "spread_bp", "expected_loss"}) {
      CHECK(csv.cell(i, m) == csv.cell(i, std::string(m) + "_stressed"));
    }
    CHECK(csv.number(i, "pd_change") == 0.0);
    CHECK(csv.number(i, "spread_bp_change") == 0.0);
    CHECK(csv.number(i, "distance_to_default_change") == 0.0);
    // And the base columns are the score command's own values, to the last bit.
    CHECK(csv.number(i, "pd") == base.measures.pd);
    CHECK(csv.number(i, "distance_to_default") == base.measures.distance_to_default);
    CHECK(csv.number(i, "spread_bp") == base.measures.spread_bp);
  }
  const ScenarioSummary& s = r.summary.scenarios.at(0);
  CHECK(s.mean_pd == s.mean_pd_stressed);
  CHECK(s.expected_loss == s.expected_loss_stressed);
  CHECK(s.shocked == 4);
}

TEST_CASE("stressed results equal scoring a book whose inputs were shocked by hand") {
  // Independent path: the shocked inputs are written into the obligor records and scored as a
  // book (resolve_obligor, solve, measures), without the stress engine.
  const Book b = book();
  const Run r = run(b, R"(scenarios:
  - name: combined
    shocks:
      - {equity_change: -0.3, equity_vol_multiplier: 1.5, rate_shift_bp: 25, default_point_change: 0.1}
)");
  const Csv csv = parse_csv(r.text);
  for (std::size_t i = 0; i < 4; ++i) {
    ObligorRecord rec = b.obligors[i];
    const ScoredObligor base = scored(rec, b.defaults);
    REQUIRE(base.status == RowStatus::ok);
    const MertonInputs& in = base.resolved.inputs;
    rec.set(NumField::market_cap, in.equity_value * (1.0 + -0.3));
    rec.set(NumField::equity_vol, in.equity_vol_annual * 1.5 + 0.0);
    rec.set(NumField::default_point, in.default_point * (1.0 + 0.1));
    rec.set(NumField::rate, in.risk_free_rate_cc + 25.0 / 1e4);
    // The drift follows the rate unless given (OK-3 gives 0.08, which stays).
    const ScoredObligor by_hand = scored(rec, b.defaults);
    REQUIRE(by_hand.status == RowStatus::ok);
    CHECK(csv.number(i, "pd_stressed") == by_hand.measures.pd);
    CHECK(csv.number(i, "distance_to_default_stressed") == by_hand.measures.distance_to_default);
    CHECK(csv.number(i, "spread_bp_stressed") == by_hand.measures.spread_bp);
    CHECK(csv.number(i, "asset_vol_stressed") == by_hand.measures.asset_vol_annual);
  }
}

TEST_CASE("a bad obligor is an invalid row in every scenario while the others are stressed") {
  const Book b = book();
  const Run r = run(b, R"(scenarios:
  - name: a
    shocks: [{equity_change: -0.2}]
  - name: b
    shocks: [{filter: {sector: Energy}, equity_vol_multiplier: 2}]
)");
  const Csv csv = parse_csv(r.text);
  REQUIRE(csv.rows.size() == 10);
  for (std::size_t row : {4u, 9u}) {
    CHECK(csv.cell(row, "id") == "BAD-5");
    CHECK(csv.cell(row, "status") == "invalid_input");
    CHECK(csv.cell(row, "message").find("field 'equity_vol': missing") != std::string::npos);
    CHECK(csv.cell(row, "pd_stressed").empty());
  }
  for (std::size_t row : {0u, 1u, 2u, 3u, 5u, 6u, 7u, 8u}) CHECK(csv.cell(row, "status") == "ok");
  CHECK(csv.cell(6, "shocked") == "false");  // OK-2 is not in Energy
  CHECK(csv.cell(6, "pd_stressed") == csv.cell(6, "pd"));
  CHECK(r.summary.base_invalid == 1);
  CHECK(r.summary.failed_rows == 2);
  CHECK(r.summary.scenarios[0].compared == 4);
  CHECK(r.summary.scenarios[1].shocked == 2);
  REQUIRE(r.summary.problems.size() == 1);  // listed once, not per scenario
  CHECK(r.summary.problems[0] == "book.yaml:12: obligor 'BAD-5': field 'equity_vol': missing");
}

TEST_CASE("a shock that makes an input invalid for one obligor fails that row only") {
  const Book b = book();
  // -40 volatility points: OK-2 (0.45) and OK-3 (0.70) keep a positive volatility, OK-1 (0.31)
  // and OK-4 (0.38) do not.
  const Run r = run(b, "scenarios:\n  - name: calm\n    shocks: [{equity_vol_add_points: -40}]\n");
  const Csv csv = parse_csv(r.text);
  CHECK(csv.cell(0, "status") == "invalid_stress");
  CHECK(csv.cell(0, "message") ==
        "stressed field 'equity_vol': must be positive (check equity_vol_add_points), got "
        "-0.09000000000000002");
  CHECK(csv.cell(1, "status") == "ok");
  CHECK(csv.cell(2, "status") == "ok");
  CHECK(csv.cell(3, "status") == "invalid_stress");
  CHECK(r.summary.scenarios[0].failed == 3);  // two stressed failures and BAD-5
  CHECK(r.summary.problems.size() == 3);
}

TEST_CASE("scenario summaries agree with a recomputation from the rows") {
  // Definitions (stress.hpp): mean over compared obligors; EAD weights; EL = sum PD x LGD x EAD over
  // obligors with ead, LGD from the obligor, else the book, else 0.45 (common practice).
  const Book b = book();
  StressSettings st;
  st.pd_threshold = 0.01;
  const Run r =
      run(b, "scenarios:\n  - name: s\n    shocks: [{equity_change: -0.3, equity_vol_multiplier: 1.8}]\n",
          OutputFormat::csv, 1, false, st);
  const Csv csv = parse_csv(r.text);
  double n = 0, pd0 = 0, pd1 = 0, w = 0, wpd0 = 0, wpd1 = 0, el0 = 0, el1 = 0;
  std::size_t above0 = 0, above1 = 0, newly = 0;
  for (std::size_t i = 0; i < csv.rows.size(); ++i) {
    if (csv.cell(i, "status") != "ok") continue;
    const double p0 = csv.number(i, "pd");
    const double p1 = csv.number(i, "pd_stressed");
    n += 1;
    pd0 += p0;
    pd1 += p1;
    above0 += p0 > 0.01;
    above1 += p1 > 0.01;
    newly += p0 <= 0.01 && p1 > 0.01;
    if (!csv.cell(i, "ead").empty()) {
      const double ead = csv.number(i, "ead");
      const double lgd = csv.cell(i, "id") == "OK-2" ? 0.45 : csv.number(i, "lgd");  // OK-2 gives no lgd
      CHECK(csv.number(i, "lgd") == lgd);
      w += ead;
      wpd0 += ead * p0;
      wpd1 += ead * p1;
      el0 += p0 * lgd * ead;
      el1 += p1 * lgd * ead;
      CHECK(csv.number(i, "expected_loss_stressed") == doctest::Approx(p1 * lgd * ead).epsilon(1e-15));
    } else {
      CHECK(csv.cell(i, "expected_loss").empty());
    }
  }
  const ScenarioSummary& s = r.summary.scenarios.at(0);
  CHECK(s.compared == 4);
  CHECK(s.with_ead == 3);
  CHECK(s.mean_pd == doctest::Approx(pd0 / n).epsilon(1e-14));
  CHECK(s.mean_pd_stressed == doctest::Approx(pd1 / n).epsilon(1e-14));
  CHECK(s.ead_total == 75.0);
  CHECK(s.ead_weighted_pd == doctest::Approx(wpd0 / w).epsilon(1e-14));
  CHECK(s.ead_weighted_pd_stressed == doctest::Approx(wpd1 / w).epsilon(1e-14));
  CHECK(s.expected_loss == doctest::Approx(el0).epsilon(1e-14));
  CHECK(s.expected_loss_stressed == doctest::Approx(el1).epsilon(1e-14));
  CHECK(s.above_threshold == above0);
  CHECK(s.above_threshold_stressed == above1);
  CHECK(s.newly_above_threshold == newly);
  CHECK(above1 > above0);  // the scenario is strong enough to move some obligors across 1%
  const std::string summary = scenario_summary_csv(
      r.summary,
      parse_scenarios("scenarios:\n  - name: s\n    shocks: [{equity_change: -0.3}]\n", "x").scenarios);
  const Csv sc = parse_csv(summary);
  REQUIRE(sc.rows.size() == 1);
  CHECK(sc.header.size() == stress_summary_columns().size());
  CHECK(sc.number(0, "expected_loss_stressed") == s.expected_loss_stressed);
}

TEST_CASE("monotone where the model guarantees it: more equity volatility") {
  // Guaranteed (derivation in sensitivity_test, "more equity volatility, more asset volatility"):
  // raising equity volatility raises asset volatility, lowers asset value and raises the spread;
  // PD rises while DD > -sV sqrt(T). Equity falls carry no such guarantee with equity volatility
  // held (see the next test), so none is asserted for them.
  const Book b = book();
  std::string yaml = "scenarios:\n";
  const double multipliers[] = {1.0, 1.1, 1.25, 1.5, 2.0, 3.0};
  for (double m : multipliers) {
    yaml += "  - name: m" + std::to_string(m) +
            "\n    shocks: [{equity_vol_multiplier: " + std::to_string(m) + "}]\n";
  }
  const Csv csv = parse_csv(run(b, yaml).text);
  const std::size_t n = b.obligors.size();
  for (std::size_t i = 0; i < 4; ++i) {
    for (std::size_t k = 1; k < std::size(multipliers); ++k) {
      const std::size_t lo = (k - 1) * n + i;
      const std::size_t hi = k * n + i;
      CHECK(csv.number(hi, "asset_vol_stressed") > csv.number(lo, "asset_vol_stressed"));
      CHECK(csv.number(hi, "asset_value_stressed") <= csv.number(lo, "asset_value_stressed"));
      CHECK(csv.number(hi, "spread_bp_stressed") >= csv.number(lo, "spread_bp_stressed"));
      const double sv = csv.number(hi, "asset_vol_stressed");
      if (csv.number(hi, "distance_to_default_stressed") >
          -sv * std::sqrt(csv.number(hi, "horizon_stressed"))) {
        CHECK(csv.number(hi, "pd_stressed") >= csv.number(lo, "pd_stressed"));
      }
    }
  }
}

TEST_CASE("an equity fall is a default-point rise of the inverse size (homogeneity)") {
  // Ref: Black-Scholes is homogeneous of degree one in (V, K) (Merton 1973; from memory), so the
  // Merton measures depend on E and DP only through E/DP: E x 0.7 must give the PD of DP / 0.7.
  const Book b = book();
  const Csv csv = parse_csv(run(b,
                                "scenarios:\n  - name: e\n    shocks: [{equity_change: -0.3}]\n"
                                "  - name: d\n    shocks: [{default_point_change: 0.42857142857142855}]\n")
                                .text);
  const std::size_t n = b.obligors.size();
  for (std::size_t i = 0; i < 4; ++i) {
    CHECK(csv.number(n + i, "pd_stressed") == doctest::Approx(csv.number(i, "pd_stressed")).epsilon(1e-10));
    CHECK(csv.number(n + i, "spread_bp_stressed") ==
          doctest::Approx(csv.number(i, "spread_bp_stressed")).epsilon(1e-10));
  }
}

TEST_CASE("output does not depend on the number of threads") {
  const Book b = book();
  const std::string yaml =
      "scenarios:\n  - name: a\n    shocks: [{equity_change: -0.2, rate_shift_bp: 40}]\n";
  for (OutputFormat f : {OutputFormat::csv, OutputFormat::json, OutputFormat::table}) {
    CHECK(run(b, yaml, f, 1, true).text == run(b, yaml, f, 3, true).text);
  }
}

TEST_CASE("output formats: columns, JSON shape, table width, sensitivities at the stressed inputs") {
  const Book b = book();
  const std::string yaml =
      "scenarios:\n  - name: a\n    shocks: [{equity_change: -0.2}]\n"
      "  - name: b\n    description: \"second, with a comma\"\n    shocks: [{rate_shift_bp: 100}]\n";
  const Csv csv = parse_csv(run(b, yaml, OutputFormat::csv, 1, true).text);
  CHECK(csv.header.size() == stress_columns().size() + sensitivity_columns().size());
  for (const auto& row : csv.rows) CHECK(row.size() == csv.header.size());
  // Sensitivities are those of the stressed inputs.
  const ScoredObligor base = scored(b.obligors[0], b.defaults);
  MertonInputs in = base.resolved.inputs;
  in.equity_value *= 1.0 + -0.2;
  const AssetSolution sol = solve_asset(in);
  const MertonSensitivities sens = merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, true);
  CHECK(csv.number(0, "pd_per_equity_vol_pt") == sens.equity_vol.pd);
  CHECK(csv.number(0, "spread_bp_per_rate_bp") == sens.rate.spread_bp);
  CHECK(csv.cell(4, "sensitivity_status").empty());  // BAD-5

  const std::string json = run(b, yaml, OutputFormat::json).text;
  CHECK(json.rfind("{\n  \"run\": {\"book\": \"book.yaml\"", 0) == 0);
  std::size_t ids = 0;
  for (std::size_t p = json.find("{\"id\": "); p != std::string::npos; p = json.find("{\"id\": ", p + 1))
    ++ids;
  CHECK(ids == 10);
  CHECK(json.find("\"description\": \"second, with a comma\"") != std::string::npos);
  CHECK(json.find("nan") == std::string::npos);
  CHECK(json.find("inf") == std::string::npos);
  CHECK(json.substr(json.size() - 4) == "}\n}\n");

  const std::string table = run(b, yaml, OutputFormat::table, 1, true).text;
  std::istringstream lines(table);
  std::string line;
  std::size_t widest = 0;
  while (std::getline(lines, line)) widest = std::max(widest, line.size());
  MESSAGE("widest table line: " << widest);
  CHECK(widest <= 120);
}

TEST_CASE("quick grids give a PD grid per obligor in the table") {
  const Book b = book();
  StressBookOptions opts;
  opts.format = OutputFormat::table;
  std::string text;
  const auto grid = grid_scenarios({0.0, -0.3}, {1.0, 2.0});
  const StressSummary s = run_stress(b, grid, "quick grid", ScoreSettings{}, StressSettings{}, opts,
                                     [&](std::string_view v) { text += v; });
  REQUIRE(s.grid.pd.size() == b.obligors.size() * 4);
  // The (0%, x1) cell is the obligor as it stands.
  CHECK(s.grid.pd[0] == s.grid.base_pd[0]);
  CHECK(std::isnan(s.grid.pd[4 * 4]));  // BAD-5
  CHECK(text.find("PD grid") != std::string::npos);
  CHECK(text.find("equity -30% vol x2") != std::string::npos);  // in the scenario summary
}

namespace {

// A logistic calibration with invented parameters: PD(DD) = 1 / (1 + exp(-(a + b DD))).
constexpr double kA = -1.5, kB = -0.9, kVarA = 0.1 * 0.1, kVarB = 0.05 * 0.05, kCov = -0.002;
const char* kCalibration =
    "firmcall_calibration: 1\nmethod: logistic\npd_horizon_years: 1\nconfidence_level: 0.95\n"
    "sample: {observations: 4000, defaults: 90, as_of_first: 2020-12-31, as_of_last: 2024-12-31, dd_min: -1, "
    "dd_max: 3, data_sha256: x}\n"
    "logistic: {intercept: -1.5, slope: -0.9, intercept_se: 0.1, slope_se: 0.05, covariance: -0.002, "
    "log_likelihood: -400}\n";

// Ref: the logistic function (textbook logistic regression).
double logistic_pd(double dd) {
  return 1.0 / (1.0 + std::exp(-(kA + kB * dd)));
}

// Ref: delta method on the linear predictor (textbook): a + b DD -+ z se, se^2 = var a + DD^2 var b
// + 2 DD cov(a, b), z the 97.5% normal quantile (Boost.Math), mapped through the logistic function.
void logistic_interval(double dd, double& lower, double& upper) {
  const double z = boost::math::quantile(boost::math::normal_distribution<double>(), 0.975);
  const double se = std::sqrt(kVarA + dd * dd * kVarB + 2.0 * dd * kCov);
  const double eta = kA + kB * dd;
  lower = 1.0 / (1.0 + std::exp(-(eta - z * se)));
  upper = 1.0 / (1.0 + std::exp(-(eta + z * se)));
}

Run run_calibrated(const Book& book, const std::string& scenario_yaml, const PdCalibration& cal,
                   DrivingPd driving, OutputFormat format = OutputFormat::csv, unsigned threads = 1,
                   StressSettings stress = {}, ScoreSettings settings = {}) {
  const ScenarioSet set = parse_scenarios(scenario_yaml, "scen.yaml");
  check_filters(set, book);
  StressBookOptions opts;
  opts.format = format;
  opts.threads = threads;
  opts.chunk_obligors = 3;
  opts.pd_calibration = &cal;
  opts.pd_calibration_origin = "cal.yaml";
  opts.driving_pd = driving;
  REQUIRE_FALSE(opts.validate());
  Run r;
  r.summary = run_stress(book, set.scenarios, set.origin, settings, stress, opts,
                         [&](std::string_view s) { r.text += s; });
  return r;
}

const char* kThreeFalls =
    "scenarios:\n"
    "  - name: fall10\n    shocks: [{equity_change: -0.1}]\n"
    "  - name: fall30\n    shocks: [{equity_change: -0.3, equity_vol_multiplier: 1.2}]\n"
    "  - name: fall50\n    shocks: [{equity_change: -0.5, equity_vol_multiplier: 1.5}]\n";

}  // namespace

TEST_CASE("with a calibration every row ends with the calibrated PD of base and stressed DD") {
  const Book b = book();
  const CalibrationRecord cal = parse_calibration(kCalibration, "cal.yaml");
  const Run r = run_calibrated(b, kThreeFalls, cal.calibration, DrivingPd::calibrated);
  const Csv csv = parse_csv(r.text);
  // The calibrated columns come last, after every column of the run without a calibration.
  const auto& plain = stress_columns();
  const auto& added = stress_pd_calibration_columns();
  REQUIRE(csv.header.size() == plain.size() + added.size());
  for (std::size_t i = 0; i < added.size(); ++i) CHECK(csv.header[plain.size() + i] == added[i]);
  int checked = 0;
  std::set<std::string> flags;
  for (std::size_t i = 0; i < csv.rows.size(); ++i) {
    CAPTURE(csv.cell(i, "id"));
    if (csv.cell(i, "status") != "ok") {
      CHECK(csv.cell(i, "pd_calibrated_stressed").empty());
      CHECK(csv.cell(i, "pd_calibrated_stressed_extrapolated").empty());
      continue;
    }
    const double dd0 = csv.number(i, "distance_to_default");
    const double dd1 = csv.number(i, "distance_to_default_stressed");
    CHECK(csv.number(i, "pd_calibrated") == doctest::Approx(logistic_pd(dd0)).epsilon(1e-13));
    const double p1 = csv.number(i, "pd_calibrated_stressed");
    CHECK(p1 == doctest::Approx(logistic_pd(dd1)).epsilon(1e-13));
    double lo = 0, hi = 0;
    logistic_interval(dd1, lo, hi);
    CHECK(csv.number(i, "pd_calibrated_stressed_lower") == doctest::Approx(lo).epsilon(1e-12));
    CHECK(csv.number(i, "pd_calibrated_stressed_upper") == doctest::Approx(hi).epsilon(1e-12));
    CHECK(csv.cell(i, "pd_calibrated_stressed_extrapolated") == (dd1 < -1.0 || dd1 > 3.0 ? "true" : "false"));
    CHECK(csv.cell(i, "pd_calibrated_extrapolated") == (dd0 < -1.0 || dd0 > 3.0 ? "true" : "false"));
    CHECK(csv.number(i, "pd_calibrated_change") == p1 - csv.number(i, "pd_calibrated"));
    flags.insert(csv.cell(i, "pd_calibrated_stressed_extrapolated"));
    ++checked;
  }
  CHECK(checked == 12);                                    // four obligors scored, three scenarios
  CHECK(flags == std::set<std::string>{"false", "true"});  // DDs inside and outside [-1, 3]
  // The same text whatever the thread count.
  CHECK(run_calibrated(b, kThreeFalls, cal.calibration, DrivingPd::calibrated, OutputFormat::csv, 3).text ==
        r.text);
  // With --sensitivities the calibrated columns still come last.
  StressBookOptions opts;
  opts.sensitivities = true;
  opts.pd_calibration = &cal.calibration;
  std::string text;
  run_stress(b, parse_scenarios(kThreeFalls, "s.yaml").scenarios, "s.yaml", ScoreSettings{}, StressSettings{},
             opts, [&](std::string_view v) { text += v; });
  const Csv both = parse_csv(text);
  REQUIRE(both.header.size() == plain.size() + sensitivity_columns().size() + added.size());
  CHECK(both.header[plain.size()] == "sensitivity_status");
  CHECK(both.header.back() == "pd_calibrated_change");
}

TEST_CASE("calibrated PDs rise with the size of the equity fall") {
  // A larger fall with more volatility lowers DD (Merton 1974), and the calibration falls with DD
  // (negative slope), so the calibrated PD rises scenario by scenario.
  const Book b = book();
  const CalibrationRecord cal = parse_calibration(kCalibration, "cal.yaml");
  const Run r = run_calibrated(b, kThreeFalls, cal.calibration, DrivingPd::calibrated);
  const Csv csv = parse_csv(r.text);
  std::map<std::string, std::vector<double>> by_obligor;
  for (std::size_t i = 0; i < csv.rows.size(); ++i) {
    if (csv.cell(i, "status") == "ok")
      by_obligor[csv.cell(i, "id")].push_back(csv.number(i, "pd_calibrated_stressed"));
  }
  REQUIRE(by_obligor.size() == 4);
  for (const auto& [id, pd] : by_obligor) {
    CAPTURE(id);
    REQUIRE(pd.size() == 3);
    CHECK(pd[0] < pd[1]);
    CHECK(pd[1] < pd[2]);
  }
  for (const ScenarioSummary& s : r.summary.scenarios)
    CHECK(s.calibrated.mean_pd_stressed > s.calibrated.mean_pd);
  CHECK(r.summary.scenarios[0].calibrated.mean_pd_stressed <
        r.summary.scenarios[2].calibrated.mean_pd_stressed);
}

TEST_CASE("calibrated scenario figures agree with a recomputation from the rows") {
  // Definitions as for the model figures; expected loss over the horizon T with the constant
  // annual intensity 1 - (1 - PD1)^T (common practice). The book's horizon is set to 2 years.
  const Book b = book();
  const CalibrationRecord cal = parse_calibration(kCalibration, "cal.yaml");
  StressSettings st;
  st.pd_threshold = 0.02;
  ScoreSettings two_years;
  two_years.horizon_override = 2.0;
  const Run r = run_calibrated(
      b, "scenarios:\n  - name: s\n    shocks: [{equity_change: -0.3, equity_vol_multiplier: 1.8}]\n",
      cal.calibration, DrivingPd::calibrated, OutputFormat::csv, 2, st, two_years);
  const Csv csv = parse_csv(r.text);
  double n = 0, pd0 = 0, pd1 = 0, w = 0, wpd0 = 0, wpd1 = 0, el0 = 0, el1 = 0;
  std::size_t above0 = 0, above1 = 0, newly = 0;
  for (std::size_t i = 0; i < csv.rows.size(); ++i) {
    if (csv.cell(i, "status") != "ok") continue;
    CHECK(csv.number(i, "horizon") == 2.0);
    const double p0 = csv.number(i, "pd_calibrated");
    const double p1 = csv.number(i, "pd_calibrated_stressed");
    n += 1;
    pd0 += p0;
    pd1 += p1;
    above0 += p0 > 0.02;
    above1 += p1 > 0.02;
    newly += p0 <= 0.02 && p1 > 0.02;
    if (!csv.cell(i, "ead").empty()) {
      const double ead = csv.number(i, "ead");
      const double lgd = csv.number(i, "lgd");
      w += ead;
      wpd0 += ead * p0;
      wpd1 += ead * p1;
      el0 += (1.0 - std::pow(1.0 - p0, 2.0)) * lgd * ead;
      el1 += (1.0 - std::pow(1.0 - p1, 2.0)) * lgd * ead;
    }
  }
  REQUIRE(r.summary.calibrated);
  const ScenarioPdFigures& f = r.summary.scenarios.at(0).calibrated;
  CHECK(n == 4);
  CHECK(f.mean_pd == doctest::Approx(pd0 / n).epsilon(1e-14));
  CHECK(f.mean_pd_stressed == doctest::Approx(pd1 / n).epsilon(1e-14));
  CHECK(f.ead_weighted_pd == doctest::Approx(wpd0 / w).epsilon(1e-14));
  CHECK(f.ead_weighted_pd_stressed == doctest::Approx(wpd1 / w).epsilon(1e-14));
  CHECK(f.expected_loss == doctest::Approx(el0).epsilon(1e-12));
  CHECK(f.expected_loss_stressed == doctest::Approx(el1).epsilon(1e-12));
  CHECK(f.above_threshold == above0);
  CHECK(f.above_threshold_stressed == above1);
  CHECK(f.newly_above_threshold == newly);
  // Without a calibration the summary has no calibrated figures and its CSV no calibrated columns.
  const Run plain =
      run(b, "scenarios:\n  - name: s\n    shocks: [{equity_change: -0.3, equity_vol_multiplier: 1.8}]\n",
          OutputFormat::csv, 1, false, st);
  CHECK_FALSE(plain.summary.calibrated);
  const ScenarioSummary& m = r.summary.scenarios.at(0);
  // The summary CSV ends with the calibrated figures, named apart from the model ones.
  const auto scenarios =
      parse_scenarios("scenarios:\n  - name: s\n    shocks: [{equity_change: -0.3}]\n", "x").scenarios;
  const Csv sc = parse_csv(scenario_summary_csv(r.summary, scenarios));
  REQUIRE(sc.header.size() == stress_summary_columns().size() + stress_summary_calibration_columns().size());
  CHECK(sc.number(0, "mean_pd_calibrated_stressed") == f.mean_pd_stressed);
  CHECK(sc.number(0, "expected_loss_calibrated_change") == f.expected_loss_stressed - f.expected_loss);
  CHECK(sc.number(0, "mean_pd") == m.mean_pd);
  const Csv sp = parse_csv(scenario_summary_csv(plain.summary, scenarios));
  CHECK(sp.header.size() == stress_summary_columns().size());
}

TEST_CASE("the driving PD: the table, the PD grid and the JSON say which PD they show") {
  const Book b = book();
  const CalibrationRecord cal = parse_calibration(kCalibration, "cal.yaml");
  const std::string scen = "scenarios:\n  - name: s\n    shocks: [{equity_change: -0.3}]\n";
  const Run t = run_calibrated(b, scen, cal.calibration, DrivingPd::calibrated, OutputFormat::table);
  CHECK(t.text.find("PD: calibrated one-year (cal.yaml, logistic) drives the summaries") !=
        std::string::npos);
  CHECK(t.text.find("  calibrated one-year PD ") != std::string::npos);
  CHECK(t.text.find("  on the calibrated one-year PD") != std::string::npos);
  CHECK(t.text.find("; PD: calibrated one-year)") != std::string::npos);
  const Run tm = run_calibrated(b, scen, cal.calibration, DrivingPd::model, OutputFormat::table);
  CHECK(tm.text.find(
            "PD: model drives the summaries and the PD grid; calibrated one-year PDs (cal.yaml, logistic)") !=
        std::string::npos);
  CHECK(tm.text.find("; PD: model)") != std::string::npos);
  // The summary lines show the driving PD's figures (table: percent with four decimals).
  char mean[128];
  std::snprintf(mean, sizeof mean, "  mean PD          %.4f%% -> %.4f%%",
                100.0 * t.summary.scenarios[0].calibrated.mean_pd,
                100.0 * t.summary.scenarios[0].calibrated.mean_pd_stressed);
  CHECK(t.text.find(mean) != std::string::npos);
  std::snprintf(mean, sizeof mean, "  mean PD          %.4f%% -> %.4f%%",
                100.0 * tm.summary.scenarios[0].mean_pd, 100.0 * tm.summary.scenarios[0].mean_pd_stressed);
  CHECK(tm.text.find(mean) != std::string::npos);
  for (const Run* x : {&t, &tm}) {
    std::istringstream lines(x->text);
    for (std::string line; std::getline(lines, line);) CHECK(line.size() <= 120);
  }

  const Run j = run_calibrated(b, scen, cal.calibration, DrivingPd::calibrated, OutputFormat::json);
  for (const char* key : {"\"pd_calibration\": \"cal.yaml\"", "\"pd_calibration_method\": \"logistic\"",
                          "\"driving_pd\": \"calibrated\"",
                          "\"pd_calibrated_stressed_extrapolated\": ", "\"pd_calibrated_change\": ",
                          "\"mean_pd_calibrated_stressed\": ", "\"expected_loss_calibrated_change\": "}) {
    CAPTURE(key);
    CHECK(j.text.find(key) != std::string::npos);
  }
  // BAD-5 is not scored: its calibrated fields are null.
  CHECK(j.text.find("\"pd_calibrated\": null") != std::string::npos);

  // The PD grid shows the driving PD: the unshocked cell is the calibrated PD as it stands.
  StressBookOptions opts;
  opts.format = OutputFormat::table;
  opts.pd_calibration = &cal.calibration;
  opts.pd_calibration_origin = "cal.yaml";
  opts.driving_pd = DrivingPd::calibrated;
  std::string text;
  const StressSummary g = run_stress(b, grid_scenarios({0.0, -0.3}, {1.0}), "quick grid", ScoreSettings{},
                                     StressSettings{}, opts, [&](std::string_view v) { text += v; });
  const ScoredObligor s0 = scored(b.obligors[0], b.defaults);
  CHECK(g.grid.base_pd[0] == doctest::Approx(logistic_pd(s0.measures.distance_to_default)).epsilon(1e-13));
  CHECK(g.grid.pd[0] == g.grid.base_pd[0]);
  CHECK(g.grid.pd[1] > g.grid.pd[0]);
  CHECK(text.find("PD grid: calibrated one-year PD %") != std::string::npos);
}

TEST_CASE("driving PD calibrated needs a calibration") {
  StressBookOptions opts;
  opts.driving_pd = DrivingPd::calibrated;
  const OptionCheck c = opts.validate();
  REQUIRE(c);
  CHECK(c->field == "driving_pd");
}

// ---------------------------------------------------------------- the asset-vol hold

TEST_CASE("asset-vol hold: sV held x the multiplier, V from the equity equation, sE as implied") {
  // Reference: tests/support/reference_solver.hpp (long-double bisection on E = V N(d1) - K N(d2),
  // written independently of src/); sE' = N(d1) sV V / E (Ito's lemma, Merton 1974); PD = N(-DD).
  const Book b = book();
  const Run r = run(b, R"(scenarios:
  - name: fall
    shocks: [{equity_change: -0.6, rate_shift_bp: 25, default_point_change: 0.1}]
  - name: fall_and_vol
    shocks: [{equity_change: -0.3, equity_vol_multiplier: 1.5, equity_vol_add_points: 2}]
)",
                    OutputFormat::csv, 1, false, kHoldAssetVol);
  const Csv csv = parse_csv(r.text);
  REQUIRE(csv.rows.size() == 2 * b.obligors.size());
  for (std::size_t row = 0; row < csv.rows.size(); ++row) {
    const std::size_t i = row % b.obligors.size();
    const ScoredObligor base = scored(b.obligors[i], b.defaults);
    if (base.status != RowStatus::ok) {
      CHECK(csv.cell(row, "status") == "invalid_input");
      continue;
    }
    REQUIRE(csv.cell(row, "status") == "ok");
    const double m = row < b.obligors.size() ? 1.0 : 1.5;
    const double add = row < b.obligors.size() ? 0.0 : 0.02;
    const long double sv = base.solution.asset_vol_annual * m + add;
    CHECK(csv.number(row, "asset_vol_stressed") == doctest::Approx(static_cast<double>(sv)).epsilon(1e-15));
    const long double e = csv.number(row, "equity_value_stressed");
    const long double dp = csv.number(row, "default_point_stressed");
    const long double rate = csv.number(row, "rate_stressed");
    const long double t = csv.number(row, "horizon_stressed");
    const long double k = dp * expl(-rate * t);
    const long double v = testing::ref_asset_value(sv, e, k, t);
    CHECK(csv.number(row, "asset_value_stressed") == doctest::Approx(static_cast<double>(v)).epsilon(1e-12));
    const long double st = sv * sqrtl(t);
    const long double d1 = (logl(v / k) + 0.5L * st * st) / st;
    const long double se = testing::ref_ncdf(d1) * sv * v / e;
    CHECK(csv.number(row, "equity_vol_stressed") == doctest::Approx(static_cast<double>(se)).epsilon(1e-11));
    // The leverage effect: a fall with sV held raises the equity volatility.
    if (m == 1.0) CHECK(csv.number(row, "equity_vol_stressed") > csv.number(row, "equity_vol"));
    const long double mu = base.resolved.drift_follows_rate ? base.resolved.inputs.drift_annual + 25e-4L
                                                            : base.resolved.inputs.drift_annual;
    const long double drift = row < b.obligors.size() ? mu : base.resolved.inputs.drift_annual;
    const long double dd = (logl(v / dp) + (drift - 0.5L * sv * sv) * t) / st;
    CHECK(csv.number(row, "pd_stressed") ==
          doctest::Approx(static_cast<double>(testing::ref_ncdf(-dd))).epsilon(1e-9));
  }
}

TEST_CASE("asset-vol hold: a zero shock reproduces the base run exactly; a fall always raises PD") {
  const Book b = book();
  const Run zero = run(b, "scenarios:\n  - name: zero\n    shocks: [{equity_change: 0}]\n", OutputFormat::csv,
                       1, false, kHoldAssetVol);
  const Csv z = parse_csv(zero.text);
  for (std::size_t i = 0; i < 4; ++i) {
    for (const char* m : {"equity_vol", "asset_value", "asset_vol", "pd", "spread_bp"})
      CHECK(z.cell(i, m) == z.cell(i, std::string(m) + "_stressed"));
  }
  // With sV held, C(V) = E is increasing in V, so a smaller E means a smaller V, a smaller DD and a
  // larger PD (Merton 1974); the equity-vol re-solve has no such guarantee (docs/stress.md).
  double last[4] = {0, 0, 0, 0};
  for (const char* fall : {"-0.1", "-0.5", "-0.9", "-0.999"}) {
    const Run r =
        run(b, std::string("scenarios:\n  - name: f\n    shocks: [{equity_change: ") + fall + "}]\n",
            OutputFormat::csv, 1, false, kHoldAssetVol);
    const Csv c = parse_csv(r.text);
    for (std::size_t i = 0; i < 4; ++i) {
      CHECK(c.number(i, "pd_stressed") > c.number(i, "pd"));
      CHECK(c.number(i, "pd_stressed") > last[i]);
      last[i] = c.number(i, "pd_stressed");
    }
  }
  // A 99.9% fall takes every obligor of this book past PD 5%.
  for (double pd : last) CHECK(pd > 0.05);
}

TEST_CASE("asset-vol hold: a volatility addition that leaves sV negative fails that row, naming asset_vol") {
  const Book b = book();
  const Run r = run(b, "scenarios:\n  - name: calm\n    shocks: [{equity_vol_add_points: -25}]\n",
                    OutputFormat::csv, 1, false, kHoldAssetVol);
  const Csv c = parse_csv(r.text);
  bool named = false;
  for (std::size_t i = 0; i < 4; ++i) {
    const ScoredObligor base = scored(b.obligors[i], b.defaults);
    if (base.solution.asset_vol_annual < 0.25) {
      CHECK(c.cell(i, "status") == "invalid_stress");
      CHECK(c.cell(i, "message").find("'asset_vol'") != std::string::npos);
      CHECK(c.cell(i, "equity_vol_stressed").empty());
      named = true;
    } else {
      CHECK(c.cell(i, "status") == "ok");
    }
  }
  CHECK(named);
}

TEST_CASE("every output states the hold: table header line, JSON run key") {
  const Book b = book();
  const char* scen = "scenarios:\n  - name: f\n    shocks: [{equity_change: -0.2}]\n";
  CHECK(run(b, scen, OutputFormat::table, 1, false, kHoldAssetVol).text.find("\nHold: asset-vol (") !=
        std::string::npos);
  CHECK(run(b, scen, OutputFormat::table, 1, false, kHoldEquityVol).text.find("\nHold: equity-vol (") !=
        std::string::npos);
  CHECK(run(b, scen, OutputFormat::json, 1, false, kHoldAssetVol).text.find("\"hold\": \"asset-vol\"") !=
        std::string::npos);
  CHECK(run(b, scen, OutputFormat::json, 1, false, kHoldEquityVol).text.find("\"hold\": \"equity-vol\"") !=
        std::string::npos);
}

TEST_CASE("stress output is the same for any thread count and piece size") {
  const Book b = book();
  const ScenarioSet set = parse_scenarios(kThreeFalls, "s.yaml");
  const auto text_of = [&](OutputFormat format, unsigned threads, std::size_t piece, bool reverse) {
    StressBookOptions opts;
    opts.format = format;
    opts.threads = threads;
    opts.piece_obligors = piece;
    opts.chunk_obligors = 3;
    std::string out;
    const TextSink sink = [&](std::string_view s) { out += s; };
    if (reverse) {
      const ReverseStressSummary r = run_reverse_stress(b, 0.05, ScoreSettings{}, opts, sink);
      out += std::to_string(r.problems.size()) + " " + std::to_string(r.problems_not_listed);
    } else {
      const StressSummary s =
          run_stress(b, set.scenarios, set.origin, ScoreSettings{}, kHoldAssetVol, opts, sink);
      out += scenario_summary_csv(s, set.scenarios);
      for (const std::string& p : s.problems) out += p + "\n";
    }
    return out;
  };
  for (const OutputFormat format : {OutputFormat::csv, OutputFormat::json, OutputFormat::table}) {
    for (const bool reverse : {false, true}) {
      const std::string reference = text_of(format, 1, kBookPieceObligors, reverse);
      CHECK(!reference.empty());
      for (const unsigned threads : {1U, 2U}) {
        for (const std::size_t piece : {std::size_t{1}, std::size_t{7}, kBookPieceObligors}) {
          CAPTURE(threads);
          CAPTURE(piece);
          CHECK(text_of(format, threads, piece, reverse) == reference);
        }
      }
    }
  }
  StressBookOptions bad;
  bad.piece_obligors = 0;
  CHECK(bad.validate().has_value());
}
