// Tests of portfolio runs (src/portfolio.cpp, src/portfolio_output.cpp): exposures and their
// checks, the sources of asset correlation, groups, stress scenarios at portfolio level and the
// output formats. Books, correlation files and scenarios are fed from strings.
#include "firmcall/engine/portfolio_book.hpp"

#include <doctest/doctest.h>
#include <yaml-cpp/yaml.h>

#include <cmath>
#include <string>
#include <vector>

#include "csv_table.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/stress_book.hpp"

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
  const PortfolioResult r = run(book, nullptr, {}, set.scenarios);
  REQUIRE(r.scenarios.size() == 3);
  const PortfolioScenarioResult& base = r.scenarios[0];
  const PortfolioScenarioResult& zero = r.scenarios[1];
  const PortfolioScenarioResult& fall = r.scenarios[2];
  // A zero shock reproduces the book as it stands exactly (as in the stress command).
  CHECK(zero.exact.probability == base.exact.probability);
  CHECK(zero.total.expected_loss == base.total.expected_loss);
  // The stressed PDs are the stress engine's.
  std::string csv;
  StressBookOptions so;
  const StressSummary ss = run_stress(book, set.scenarios, "scen.yaml", ScoreSettings{}, StressSettings{}, so,
                                      [&](std::string_view s) { csv += s; });
  const testing::CsvTable t = testing::parse_csv_table(csv);
  for (std::size_t row = 0; row < t.rows.size(); ++row) {
    if (t.cell(row, "scenario") != "fall" || t.cell(row, "status") != "ok") continue;
    const std::size_t i = row % book.obligors.size();
    if (!fall.obligors[i].ok()) continue;
    CHECK(fall.obligors[i].pd == t.number(row, "pd_stressed"));
  }
  CHECK(fall.total.expected_loss > base.total.expected_loss);
  CHECK(fall.exact.tails[2].es > base.exact.tails[2].es);
  CHECK(fall.total.irb_capital > base.total.irb_capital);
  // The stress summary's expected loss covers obligors with ead, our portfolio only valid ones.
  CHECK(ss.scenarios.size() == 2);
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
