// Tests of portfolio runs (src/portfolio.cpp, src/portfolio_output.cpp): exposures and their
// checks, the sources of asset correlation, groups, stress scenarios at portfolio level and the
// output formats. Books, correlation files and scenarios are fed from strings.
#include "firmcall/engine/portfolio_book.hpp"

#include <doctest/doctest.h>
#include <yaml-cpp/yaml.h>

#include <boost/math/distributions/normal.hpp>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "csv_table.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/io/calibration_io.hpp"

using namespace firmcall;

namespace {

// Invented obligors; BAD-4 has a negative ead, BAD-5 an lgd of 1.5, BAD-6 no ead, BAD-7 a sector
// the correlation file below does not list.
const char* kBook = R"(book: portfolio test book
defaults: {rate: 0.03, horizon: 1}
obligors:
  - {id: A-1, name: One, sector: Energy, country: DE, market_cap: 600, equity_vol: 0.45,
     short_term_debt: 500, long_term_debt: 900, ead: 40, lgd: 0.4}
  - {id: A-2, name: Two, sector: Utilities, country: GB, market_cap: 800, equity_vol: 0.5,
     short_term_debt: 900, long_term_debt: 1500, ead: 25, asset_correlation: 0.3}
  - {id: A-3, name: Three, sector: Energy, country: DE, market_cap: 300, equity_vol: 0.7,
     default_point: 500, ead: 10, lgd: 0.6, maturity: 4}
  - {id: BAD-4, name: Four, sector: Energy, country: FR, market_cap: 900, equity_vol: 0.4,
     default_point: 700, ead: -5}
  - {id: BAD-5, name: Five, sector: Utilities, country: FR, market_cap: 900, equity_vol: 0.4,
     default_point: 700, ead: 5, lgd: 1.5}
  - {id: BAD-6, name: Six, sector: Energy, country: FR, market_cap: 900, equity_vol: 0.4, default_point: 700}
  - {id: A-7, name: Seven, sector: Mining, country: US, market_cap: 400, equity_vol: 0.6,
     default_point: 600, ead: 15}
)";

const char* kCorrelation = R"(factors:
  - {sector: Energy, asset_correlation: 0.25}
  - {sector: Utilities}
  - {sector: Minng, asset_correlation: 0.1}
factor_correlation:
  - [1.0, 0.5, 0.3]
  - [0.5, 1.0, 0.2]
  - [0.3, 0.2, 1.0]
)";

PortfolioResult run(const Book& book, const CorrelationFile* corr, PortfolioBookOptions opt = {},
                    const std::vector<Scenario>& scenarios = {}, Config config = {}) {
  return run_portfolio(book, scenarios, "scen.yaml", corr, config, opt);
}

std::string written(const PortfolioResult& r, const Book& book, OutputFormat f) {
  std::string out;
  write_portfolio(r, book, f, [&](std::string_view s) { out += s; });
  return out;
}

}  // namespace

TEST_CASE("bad exposures are listed with file, line, obligor and field while the rest run") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  const CorrelationFile corr = parse_correlation_file(kCorrelation, "c.yaml");
  const PortfolioResult r = run(book, &corr);
  const PortfolioScenarioResult& base = r.scenarios.front();
  CHECK(base.included == 3);
  CHECK(r.failed_rows == 4);
  REQUIRE(r.problems.size() == 4);
  CHECK(r.problems[0] == "b.yaml:10: obligor 'BAD-4': field 'ead': must not be negative, got -5");
  CHECK(r.problems[1] ==
        "b.yaml:12: obligor 'BAD-5': field 'lgd': must be a decimal in [0, 1] (0.45 means 45%), got 1.5");
  CHECK(r.problems[2] ==
        "b.yaml:14: obligor 'BAD-6': field 'ead': missing (the portfolio needs an exposure at default)");
  CHECK(
      r.problems[3] ==
      "b.yaml:15: obligor 'A-7': field 'sector': 'Mining' is not a factor of c.yaml (did you mean 'Minng'?)");
  CHECK(base.obligors[3].status == PortfolioStatus::invalid_input);
  CHECK(base.obligors[6].status == PortfolioStatus::invalid_input);
  // The sector the book never uses is a note, not an error.
  bool noted = false;
  for (const auto& n : r.notes) noted |= n == "c.yaml:4: sector 'Minng' has no obligor in b.yaml";
  CHECK(noted);
  // Nothing non-finite is ever printed.
  for (OutputFormat f : {OutputFormat::csv, OutputFormat::json, OutputFormat::table}) {
    const std::string text = written(r, book, f);
    CHECK(text.find("nan") == std::string::npos);
    CHECK(text.find("inf") == std::string::npos);
  }
  const std::string summary = portfolio_summary_csv(r);
  CHECK(summary.find("nan") == std::string::npos);
}

TEST_CASE("expected loss by obligor, sector, country and in total is PD x LGD x EAD") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  const PortfolioResult r = run(book, nullptr);
  const PortfolioScenarioResult& base = r.scenarios.front();
  CHECK(base.included == 4);  // A-7 is in: without a correlation file sectors are labels only
  double total = 0.0;
  double energy = 0.0;
  double de = 0.0;
  for (std::size_t i = 0; i < book.obligors.size(); ++i) {
    const PortfolioObligor& o = base.obligors[i];
    if (!o.ok()) continue;
    // Independent of the portfolio code: the score module's PD and the resolved LGD and EAD.
    ScoredObligor s;
    score_obligor(book.obligors[i], book.defaults, ScoreSettings{}, s);
    const double el = s.measures.pd * s.resolved.lgd * s.resolved.ead;
    CHECK(o.expected_loss == doctest::Approx(el).epsilon(1e-15));
    total += el;
    if (book.obligors[i].get(TextField::sector) == "Energy") energy += el;
    if (book.obligors[i].get(TextField::country) == "DE") de += el;
  }
  CHECK(base.total.expected_loss == doctest::Approx(total).epsilon(1e-14));
  CHECK(base.exact.expected_loss == doctest::Approx(total).epsilon(1e-14));
  for (const GroupTotals& g : base.sectors) {
    if (g.name == "Energy") CHECK(g.expected_loss == doctest::Approx(energy).epsilon(1e-14));
  }
  for (const GroupTotals& g : base.countries) {
    if (g.name == "DE") CHECK(g.expected_loss == doctest::Approx(de).epsilon(1e-14));
  }
  // LGD 45% where the obligor gives none (common practice default).
  CHECK(base.obligors[1].lgd == 0.45);
  // Group contributions add up to the portfolio's ES (Euler allocation).
  for (std::size_t l = 0; l < r.confidence_levels.size(); ++l) {
    double by_sector = 0.0;
    for (const GroupTotals& g : base.sectors) by_sector += g.es_exact[l];
    CHECK(by_sector == doctest::Approx(base.exact.tails[l].es).epsilon(1e-10));
    CHECK(base.total.es_exact[l] == doctest::Approx(base.exact.tails[l].es).epsilon(1e-10));
  }
  // IRB: RWA = 12.5 x capital (para 272); maturity 4 years as given, else 2.5.
  CHECK(base.total.rwa == doctest::Approx(12.5 * base.total.irb_capital).epsilon(1e-13));
  CHECK(base.obligors[2].maturity_years == 4.0);
  CHECK(base.obligors[0].maturity_years == 2.5);
}

TEST_CASE("asset correlation: command line, then obligor, then sector, then setting, then Basel") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  const CorrelationFile corr = parse_correlation_file(kCorrelation, "c.yaml");
  const PortfolioResult r = run(book, &corr);
  const auto& o = r.scenarios.front().obligors;
  CHECK(o[0].asset_correlation == 0.25);  // sector Energy
  CHECK(o[0].correlation_source == CorrelationSource::sector);
  CHECK(o[1].asset_correlation == 0.3);  // the obligor's own
  CHECK(o[1].correlation_source == CorrelationSource::obligor);
  // Ref: BCBS 2006 para 272 correlation function of the (floored) PD.
  const PortfolioResult nofile = run(book, nullptr);
  const auto& b = nofile.scenarios.front().obligors;
  CHECK(b[0].correlation_source == CorrelationSource::basel);
  CHECK(b[0].asset_correlation == doctest::Approx(irb_corporate_correlation(std::max(b[0].pd, 0.0003))));
  Config config;
  config.portfolio.asset_correlation = 0.17;
  const PortfolioResult set = run(book, nullptr, {}, {}, config);
  CHECK(set.scenarios.front().obligors[0].asset_correlation == 0.17);
  CHECK(set.scenarios.front().obligors[0].correlation_source == CorrelationSource::setting);
  PortfolioBookOptions opt;
  opt.asset_correlation = 0.05;
  const PortfolioResult cl = run(book, &corr, opt);
  CHECK(cl.scenarios.front().obligors[1].asset_correlation == 0.05);
  CHECK(cl.scenarios.front().obligors[1].correlation_source == CorrelationSource::command_line);
}

TEST_CASE("stress scenarios at portfolio level use the stress engine's PDs") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  const ScenarioSet set = parse_scenarios(
      "scenarios:\n"
      "  - name: nothing\n    shocks:\n      - {equity_change: 0}\n"
      "  - name: fall\n    shocks:\n      - {equity_change: -0.3, equity_vol_multiplier: 1.4}\n",
      "scen.yaml");
  check_filters(set, book);
  // Both holds of stress.hold: the portfolio's stressed PDs are the stress engine's under the same one.
  for (const StressHold hold : {StressHold::asset_vol, StressHold::equity_vol}) {
    CAPTURE(to_string(hold));
    Config config;
    config.stress.hold = hold;
    const PortfolioResult r = run(book, nullptr, {}, set.scenarios, config);
    REQUIRE(r.scenarios.size() == 3);
    CHECK(r.stress_hold == hold);
    const PortfolioScenarioResult& base = r.scenarios[0];
    const PortfolioScenarioResult& zero = r.scenarios[1];
    const PortfolioScenarioResult& fall = r.scenarios[2];
    // A zero shock reproduces the book as it stands exactly (as in the stress command).
    CHECK(zero.exact.probability == base.exact.probability);
    CHECK(zero.total.expected_loss == base.total.expected_loss);
    std::string csv;
    StressBookOptions so;
    const StressSummary ss = run_stress(book, set.scenarios, "scen.yaml", ScoreSettings{}, config.stress, so,
                                        [&](std::string_view s) { csv += s; });
    const testing::CsvTable t = testing::parse_csv_table(csv);
    for (std::size_t row = 0; row < t.rows.size(); ++row) {
      if (t.cell(row, "scenario") != "fall" || t.cell(row, "status") != "ok") continue;
      const std::size_t i = row % book.obligors.size();
      if (!fall.obligors[i].ok()) continue;
      CHECK(fall.obligors[i].pd == t.number(row, "pd_stressed"));
    }
    CHECK(fall.total.expected_loss > base.total.expected_loss);
    CHECK(fall.total.irb_capital > base.total.irb_capital);
    // Holding asset volatility the fall is harsher and its 99.9% VaR lies past the loss grid that
    // fits the book as it stands (reported, no figure): the ES comparison is for the other hold.
    if (hold == StressHold::equity_vol) CHECK(fall.exact.tails[2].es > base.exact.tails[2].es);
    CHECK(ss.scenarios.size() == 2);
  }
  CHECK_THROWS_WITH_AS(
      run(book, nullptr, {},
          parse_scenarios("scenarios:\n  - name: base\n    shocks:\n"
                          "      - {equity_change: -0.1}\n",
                          "scen.yaml")
              .scenarios),
      "scen.yaml:2: scenario 'base': the name is reserved for the book as it stands in portfolio runs",
      InputError);
}

TEST_CASE("output formats: CSV columns by level, JSON shape, summary and distribution files") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  const CorrelationFile corr = parse_correlation_file(kCorrelation, "c.yaml");
  PortfolioBookOptions opt;
  opt.monte_carlo_scenarios = 5000;
  opt.distribution = true;
  const PortfolioResult r = run(book, &corr, opt);
  const testing::CsvTable csv = testing::parse_csv_table(written(r, book, OutputFormat::csv));
  CHECK(csv.header == portfolio_columns(r.confidence_levels, true));
  CHECK(csv.rows.size() == book.obligors.size());
  CHECK(csv.col("es_contribution_99p9") > 0);
  CHECK(csv.col("monte_carlo_es_contribution_99p5_se") > 0);
  CHECK(csv.cell(3, "status") == "invalid_input");
  CHECK(csv.cell(3, "expected_loss").empty());
  CHECK(level_label(0.999) == "99p9");
  CHECK(level_label(0.99) == "99");
  CHECK(level_label(0.9995) == "99p95");
  // JSON: yaml-cpp reads JSON; the shape has run, scenarios with obligors and measures, summary.
  const YAML::Node j = YAML::Load(written(r, book, OutputFormat::json));
  CHECK(j["run"]["factors"].as<int>() == 3);
  CHECK(j["scenarios"][0]["name"].as<std::string>() == "base");
  CHECK(j["scenarios"][0]["obligors"].size() == book.obligors.size());
  CHECK(j["scenarios"][0]["exact_one_factor"]["tails"].size() == 3);
  CHECK(j["scenarios"][0]["monte_carlo"]["tails"][2]["es_se"].as<double>() > 0.0);
  CHECK(j["summary"]["in_portfolio"].as<int>() == 3);
  // Summary: long format; the exact ES of the total equals the run's.
  const testing::CsvTable s = testing::parse_csv_table(portfolio_summary_csv(r));
  bool found = false;
  for (std::size_t row = 0; row < s.rows.size(); ++row) {
    if (s.cell(row, "group_by") == "total" && s.cell(row, "method") == "exact_one_factor" &&
        s.cell(row, "measure") == "es" && s.cell(row, "confidence_level") == "0.999") {
      CHECK(s.number(row, "value") == r.scenarios[0].exact.tails[2].es);
      found = true;
    }
  }
  CHECK(found);
  // Distribution: cumulative and exceedance are complements; the limit's exceedance is there.
  const testing::CsvTable d = testing::parse_csv_table(portfolio_distribution_csv(r));
  CHECK(d.rows.size() == r.scenarios[0].exact.probability.size());
  for (std::size_t row = 0; row < d.rows.size(); row += 101) {
    CHECK(d.number(row, "cumulative") + d.number(row, "exceedance") == doctest::Approx(1.0).epsilon(1e-12));
    CHECK(d.number(row, "large_portfolio_exceedance") >= 0.0);
    CHECK(d.number(row, "monte_carlo_exceedance_se") >= 0.0);
  }
  // The table fits 118 columns (long file names in the heading wrap).
  const std::string table = written(r, book, OutputFormat::table);
  std::size_t start = 0;
  while (start < table.size()) {
    const std::size_t end = table.find('\n', start);
    const std::size_t len = (end == std::string::npos ? table.size() : end) - start;
    const std::string line = table.substr(start, len);
    CHECK(len <= 118);
    start = end == std::string::npos ? table.size() : end + 1;
  }
}

namespace {

// Invented obligors at two horizons: LOW-1 has a tiny PD (below every IRB floor), MID-2 and MID-3
// are the same firm at horizons 1 and 5.
const char* kHorizonBook = R"(book: horizon test book
defaults: {rate: 0.03}
obligors:
  - {id: LOW-1, name: Low, market_cap: 15400, equity_vol: 0.38, short_term_debt: 310,
     long_term_debt: 1200, ead: 15, lgd: 0.6, horizon: 1}
  - {id: MID-2, name: Mid one year, market_cap: 910, equity_vol: 0.36, short_term_debt: 740,
     long_term_debt: 980, ead: 25, lgd: 0.5, horizon: 1}
  - {id: MID-3, name: Mid five years, market_cap: 910, equity_vol: 0.36, short_term_debt: 740,
     long_term_debt: 980, ead: 25, lgd: 0.5, horizon: 5}
)";

// The table with wrapped lines joined again ("\n  " continues a line).
std::string unwrapped(const std::string& s) {
  std::string out;
  out.reserve(s.size());
  for (std::size_t k = 0; k < s.size(); ++k) {
    if (s[k] == '\n' && s.compare(k, 3, "\n  ") == 0) {
      out.push_back(' ');
      k += 2;
    } else {
      out.push_back(s[k]);
    }
  }
  return out;
}

// 1 - (1 - pd)^(1/T) in long double: the naive formula, independent of pd_one_year.
double one_year_long(double pd, double horizon) {
  return static_cast<double>(1.0L - std::pow(1.0L - static_cast<long double>(pd), 1.0L / horizon));
}

}  // namespace

TEST_CASE("IRB capital at horizon 5 is the horizon-1 capital of the one-year PDs") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  Config five;
  five.score.horizon_override = 5.0;
  const PortfolioResult r5 = run(book, nullptr, {}, {}, five);
  const PortfolioScenarioResult& base5 = r5.scenarios.front();
  REQUIRE(base5.included == 4);
  double capital = 0.0;
  for (const PortfolioObligor& o : base5.obligors) {
    if (!o.ok()) continue;
    CHECK(o.horizon_years == 5.0);
    const double q = one_year_long(o.pd, 5.0);
    CHECK(o.pd_one_year == doctest::Approx(q).epsilon(1e-13));
    CHECK(o.irb_pd_basis() == "model_converted");
    // Ref: BCBS 2006 para 272 (irb_corporate, checked against Annex 5 in irb_test.cpp): the capital
    // of a horizon-1 obligor whose PD is q.
    const IrbResult one =
        irb_corporate({.pd = q, .lgd = o.lgd, .ead = o.ead, .maturity_years = o.maturity_years});
    CHECK(o.irb.capital == doctest::Approx(one.capital).epsilon(1e-12));
    CHECK(o.irb.pd == doctest::Approx(std::max(q, 0.0003)).epsilon(1e-13));
    // Expected loss stays on the model PD over the horizon.
    CHECK(o.expected_loss == doctest::Approx(o.pd * o.lgd * o.ead).epsilon(1e-15));
    capital += one.capital;
  }
  CHECK(base5.total.irb_capital == doctest::Approx(capital).epsilon(1e-12));
  CHECK(r5.pd_converted == 4);
  // At horizon 1 the model PD goes in as it is.
  const PortfolioResult r1 = run(book, nullptr);
  for (const PortfolioObligor& o : r1.scenarios.front().obligors) {
    if (!o.ok()) continue;
    CHECK(o.pd_one_year == o.pd);
    CHECK(o.irb_pd_basis() == "model");
    CHECK(
        o.irb.capital ==
        irb_corporate({.pd = o.pd, .lgd = o.lgd, .ead = o.ead, .maturity_years = o.maturity_years}).capital);
  }
  CHECK(r1.pd_converted == 0);
  // Ref: BCBS 2006 Annex 5 (from memory): one-year PD 1%, LGD 45%, M 2.5 weighs 92.32%; a five-year
  // PD of 1 - 0.99^5 is that one-year PD.
  const double pd5 = 1.0 - std::pow(0.99, 5.0);
  const IrbResult rw =
      irb_corporate({.pd = one_year_long(pd5, 5.0), .lgd = 0.45, .ead = 1.0, .maturity_years = 2.5});
  CHECK(std::fabs(100.0 * rw.risk_weight - 92.32) <= 0.01);
}

TEST_CASE("the IRB PD floor applies to the one-year PD and is reported") {
  const Book book = parse_yaml_book(kHorizonBook, "h.yaml");
  for (const auto rule : {PdFloorRule::basel2, PdFloorRule::basel3}) {
    Config config;
    config.irb.pd_floor_rule = rule;
    config.irb.pd_floor = pd_floor_of(rule);
    // Ref: BCBS 2006 para 285 (0.03%); BCBS Dec 2017, corporates (0.05%, CRE32.4, from memory).
    CHECK(config.irb.pd_floor == (rule == PdFloorRule::basel2 ? 0.0003 : 0.0005));
    const PortfolioResult r = run(book, nullptr, {}, {}, config);
    const PortfolioObligor& low = r.scenarios.front().obligors[0];
    REQUIRE(low.ok());
    REQUIRE(low.pd_one_year < 0.0003);
    CHECK(low.irb.pd == config.irb.pd_floor);  // floored for the formula ...
    CHECK(low.pd < 0.0003);                    // ... never the model PD
    CHECK(low.expected_loss == low.pd * low.lgd * low.ead);
    std::size_t below = 0;  // obligors whose one-year PD (naive formula, long double) is under the floor
    for (const PortfolioObligor& o : r.scenarios.front().obligors) {
      if (o.ok() && one_year_long(o.pd, o.horizon_years) < config.irb.pd_floor) ++below;
    }
    CHECK(below >= 1);
    CHECK(r.pd_floored == below);
    const std::string table = unwrapped(written(r, book, OutputFormat::table));
    CHECK(table.find(rule == PdFloorRule::basel2
                         ? "PD floor 0.03% (Basel II, BCBS 2006 para 285)"
                         : "PD floor 0.05% (Basel III corporates, BCBS Dec 2017") != std::string::npos);
    CHECK(table.find(std::to_string(below) + " obligors raised to it") != std::string::npos);
    const std::string json = written(r, book, OutputFormat::json);
    CHECK(json.find(std::string("\"irb_pd_floor_rule\": \"") + std::string(to_string(rule)) + "\"") !=
          std::string::npos);
    CHECK(json.find("\"irb_pd_floored\": " + std::to_string(below)) != std::string::npos);
  }
}

TEST_CASE("a book of mixed horizons gets a note counting the obligors at each horizon") {
  const Book book = parse_yaml_book(kHorizonBook, "h.yaml");
  const PortfolioResult r = run(book, nullptr);
  bool found = false;
  for (const std::string& n : r.notes) {
    if (n.find("different horizons (2 at 1 year, 1 at 5 years)") != std::string::npos) found = true;
  }
  CHECK(found);
  CHECK(r.pd_converted == 1);
  const PortfolioObligor& five = r.scenarios.front().obligors[2];
  CHECK(five.irb_pd_basis() == "model_converted");
  CHECK(five.pd_one_year == doctest::Approx(one_year_long(five.pd, 5.0)).epsilon(1e-13));
  const std::string csv = written(r, book, OutputFormat::csv);
  CHECK(csv.find(",horizon,pd_one_year,expected_loss,") != std::string::npos);
  CHECK(csv.find(",irb_pd,irb_pd_basis,irb_correlation,") != std::string::npos);
  CHECK(csv.find(",model_converted,") != std::string::npos);
  const std::string table = unwrapped(written(r, book, OutputFormat::table));
  CHECK(table.find("Expected loss and loss distribution: over each obligor's horizon") != std::string::npos);
  CHECK(table.find("1 model PDs converted to one year") != std::string::npos);
  // One horizon other than one year: a note says so, without the mixed-horizon wording.
  Config at_five;
  at_five.score.horizon_override = 5.0;
  const PortfolioResult r5 = run(book, nullptr, {}, {}, at_five);
  bool converted_note = false;
  for (const std::string& n : r5.notes) {
    CHECK(n.find("different horizons") == std::string::npos);
    if (n.find("PDs are over 5 years") != std::string::npos) converted_note = true;
  }
  CHECK(converted_note);
}

namespace {

// An invented logistic calibration: PD1(DD) = 1 / (1 + exp(-(-1.5 - 0.9 DD))).
const char* kLogisticCalibration =
    "firmcall_calibration: 1\nmethod: logistic\npd_horizon_years: 1\nconfidence_level: 0.95\n"
    "sample: {observations: 4000, defaults: 90, as_of_first: 2020-12-31, as_of_last: 2024-12-31, dd_min: -1, "
    "dd_max: 8, data_sha256: x}\n"
    "logistic: {intercept: -1.5, slope: -0.9, intercept_se: 0.1, slope_se: 0.05, covariance: -0.002, "
    "log_likelihood: -400}\n";

// Ref: BCBS 2006 para 272 (corporate exposures), written out here apart from irb.cpp:
// R = 0.12 w + 0.24 (1 - w), w = (1 - e^(-50 PD)) / (1 - e^(-50)); b = (0.11852 - 0.05478 ln PD)^2;
// K = [LGD N(G(PD)/sqrt(1 - R) + sqrt(R/(1 - R)) G(0.999)) - PD LGD] (1 + (M - 2.5) b) / (1 - 1.5 b).
double basel_corporate_capital(double pd, double lgd, double ead, double maturity_years) {
  const boost::math::normal_distribution<double> z;
  const double w = (1.0 - std::exp(-50.0 * pd)) / (1.0 - std::exp(-50.0));
  const double r = 0.12 * w + 0.24 * (1.0 - w);
  const double b = std::pow(0.11852 - 0.05478 * std::log(pd), 2.0);
  const double m = std::clamp(maturity_years, 1.0, 5.0);
  const double x = boost::math::quantile(z, pd) / std::sqrt(1.0 - r) +
                   std::sqrt(r / (1.0 - r)) * boost::math::quantile(z, 0.999);
  const double k = (lgd * boost::math::cdf(z, x) - pd * lgd) * (1.0 + (m - 2.5) * b) / (1.0 - 1.5 * b);
  return k * ead;
}

}  // namespace

TEST_CASE("with a calibration the driving PD sets IRB capital and EL: calibrated or model") {
  const Book book = parse_yaml_book(kBook, "b.yaml");
  const CalibrationRecord cal = parse_calibration(kLogisticCalibration, "cal.yaml");
  Config five;
  five.score.horizon_override = 5.0;
  for (const DrivingPd driving : {DrivingPd::model, DrivingPd::calibrated}) {
    PortfolioBookOptions opt;
    opt.pd_calibration = &cal.calibration;
    opt.pd_calibration_origin = "cal.yaml";
    opt.driving_pd = driving;
    const PortfolioResult r = run(book, nullptr, opt, {}, five);
    const PortfolioScenarioResult& base = r.scenarios.front();
    REQUIRE(base.included == 4);
    double capital = 0.0;
    for (std::size_t i = 0; i < book.obligors.size(); ++i) {
      const PortfolioObligor& o = base.obligors[i];
      if (!o.ok()) continue;
      ScoredObligor s;
      score_obligor(book.obligors[i], book.defaults, five.score, s);
      // Ref: the logistic function of the calibration file (common practice for a logistic fit).
      const double pd1 = 1.0 / (1.0 + std::exp(-(-1.5 - 0.9 * s.measures.distance_to_default)));
      CHECK(o.pd_calibrated == doctest::Approx(pd1).epsilon(1e-13));
      // The IRB PD is the driving one-year PD: calibrated, or the model PD over one year,
      // 1 - (1 - PD)^(1/T) (constant annual intensity, common practice).
      const bool cal_drives = driving == DrivingPd::calibrated;
      const double irb_pd1 = cal_drives ? pd1 : 1.0 - std::pow(1.0 - o.pd, 1.0 / 5.0);
      CHECK(o.irb_pd_basis() == (cal_drives ? "calibrated" : "model_converted"));
      CHECK(o.irb.pd == doctest::Approx(std::max(irb_pd1, 0.0003)).epsilon(1e-12));
      const double k = basel_corporate_capital(std::max(irb_pd1, 0.0003), o.lgd, o.ead, o.maturity_years);
      CHECK(o.irb.capital == doctest::Approx(k).epsilon(1e-10));
      capital += k;
      // Constant annual intensity (common practice): PD over 5 years = 1 - (1 - PD1)^5.
      const double pd_t = driving == DrivingPd::calibrated ? 1.0 - std::pow(1.0 - pd1, 5.0) : o.pd;
      CHECK(o.pd_driving == doctest::Approx(pd_t).epsilon(1e-12));
      CHECK(o.expected_loss == doctest::Approx(pd_t * o.lgd * o.ead).epsilon(1e-12));
    }
    CHECK(base.total.irb_capital == doctest::Approx(capital).epsilon(1e-10));
    CHECK(r.pd_converted == (driving == DrivingPd::model ? base.included : 0));
    if (driving == DrivingPd::model) {
      // Ref: the same run without a calibration (our own baseline, not a value): EL, the exact
      // distribution and IRB capital do not move when the model PD drives them.
      const PortfolioResult plain = run(book, nullptr, {}, {}, five);
      CHECK(base.total.expected_loss == plain.scenarios.front().total.expected_loss);
      CHECK(base.exact.tails.back().es == plain.scenarios.front().exact.tails.back().es);
      CHECK(base.total.irb_capital == plain.scenarios.front().total.irb_capital);
    }
    const std::string json = written(r, book, OutputFormat::json);
    CHECK(json.find(driving == DrivingPd::calibrated
                        ? "\"irb_pd_basis\": \"calibrated\""
                        : "\"irb_pd_basis\": \"model_converted\"") != std::string::npos);
    CHECK(json.find("\"driving_pd\": \"" + std::string(to_string(driving)) + "\"") != std::string::npos);
    const std::string table = written(r, book, OutputFormat::table);
    CHECK(table.find("Driving PD: " + std::string(to_string(driving))) != std::string::npos);
    const std::string csv = written(r, book, OutputFormat::csv);
    CHECK(csv.find(",pd_one_year,pd_calibrated,pd_driving,expected_loss,") != std::string::npos);
  }
  // Without a calibration the columns are as before and a calibrated driving PD is refused.
  CHECK(written(run(book, nullptr), book, OutputFormat::csv).find("pd_calibrated") == std::string::npos);
  PortfolioBookOptions bad;
  bad.driving_pd = DrivingPd::calibrated;
  CHECK(bad.validate().has_value());
}

TEST_CASE("FX rates: EADs and every loss scale by the rate, PDs and capital ratios do not") {
  // Invented book in two currencies, and the same book with the GBP exposure converted by hand
  // (20 GBP x 1.25 EUR per GBP = 25 EUR).
  const Book two = parse_yaml_book(R"(defaults: {rate: 0.03, horizon: 1}
obligors:
  - {id: E-1, currency: EUR, market_cap: 600, equity_vol: 0.45, default_point: 700, ead: 40, lgd: 0.4}
  - {id: G-2, currency: GBP, market_cap: 800, equity_vol: 0.5, default_point: 1200, ead: 20, lgd: 0.5}
)",
                                   "two.yaml");
  const Book one = parse_yaml_book(R"(defaults: {rate: 0.03, horizon: 1}
obligors:
  - {id: E-1, currency: EUR, market_cap: 600, equity_vol: 0.45, default_point: 700, ead: 40, lgd: 0.4}
  - {id: G-2, currency: EUR, market_cap: 800, equity_vol: 0.5, default_point: 1200, ead: 25, lgd: 0.5}
)",
                                   "one.yaml");
  CHECK(book_currencies(two, ScoreSettings{}) == std::vector<std::string>{"EUR", "GBP"});
  CHECK_THROWS_WITH_AS(
      run(two, nullptr),
      "two.yaml: the obligors' amounts are in 2 currencies (EUR, GBP): a portfolio adds exposures "
      "and losses up in one currency; give FX rates and a reporting currency",
      InputError);
  const FxTable fx = parse_fx_rates("# as_of: 2026-03-31\ncurrency,rate\nGBP,1.25\n", "fx.csv");
  PortfolioBookOptions opt;
  opt.fx = &fx;
  opt.reporting_currency = "EUR";
  const PortfolioResult a = run(two, nullptr, opt);
  const PortfolioResult b = run(one, nullptr);
  CHECK(a.reporting_currency == "EUR");
  CHECK(b.reporting_currency == "EUR");
  CHECK(a.fx_as_of == "2026-03-31");
  REQUIRE(a.fx_used.size() == 2);
  CHECK(a.fx_used[1].currency == "GBP");
  CHECK(a.fx_used[1].rate == 1.25);
  const PortfolioScenarioResult& x = a.scenarios.front();
  const PortfolioScenarioResult& y = b.scenarios.front();
  CHECK(x.obligors[1].currency == "GBP");
  CHECK(x.obligors[1].ead == 25.0);  // 20 x 1.25, exact in binary
  CHECK(x.total.ead == 65.0);        // 40 + 25, by hand
  CHECK(x.obligors[1].pd == y.obligors[1].pd);
  CHECK(x.obligors[1].irb.capital_ratio == y.obligors[1].irb.capital_ratio);
  CHECK(x.total.expected_loss == doctest::Approx(y.total.expected_loss).epsilon(1e-15));
  CHECK(x.total.irb_capital == doctest::Approx(y.total.irb_capital).epsilon(1e-15));
  REQUIRE(x.exact.tails.size() == y.exact.tails.size());
  for (std::size_t l = 0; l < x.exact.tails.size(); ++l) {
    CHECK(x.exact.tails[l].es == doctest::Approx(y.exact.tails[l].es).epsilon(1e-12));
  }
  // The library names fields, not flags.
  opt.reporting_currency = "eur";
  CHECK_THROWS_WITH_AS(
      run(two, nullptr, opt),
      "field 'reporting_currency': must be three upper-case letters (ISO 4217 style, e.g. EUR) "
      "with FX rates",
      OptionError);
  PortfolioBookOptions no_fx;
  no_fx.reporting_currency = "EUR";
  CHECK(no_fx.validate()->field == "reporting_currency");
}
