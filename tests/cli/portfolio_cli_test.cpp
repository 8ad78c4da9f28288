// End-to-end tests of `firmcall portfolio` (src/cli/cmd_portfolio.cpp): the built binary on the
// sample book, the sample correlation file and the sample scenarios, checked against the score
// and stress commands' own output; bad files and bad obligors.
#include <doctest/doctest.h>

#include <cmath>
#include <filesystem>
#include <string>

#include "csv_table.hpp"
#include "test_util.hpp"

using firmcall::testing::parse_csv_table;
using firmcall::testing::read_file;
using firmcall::testing::run_firmcall;
using firmcall::testing::TempDir;

TEST_CASE("portfolio on the sample book: exit code, PDs equal the score command's, EL = PD x LGD x EAD") {
  const auto score = run_firmcall("score samples/demo_book.yaml --format csv");
  REQUIRE(score.exit_code == 0);
  const auto s = parse_csv_table(score.out);
  const auto r = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv --format csv");
  CHECK(r.exit_code == 0);
  const auto p = parse_csv_table(r.out);
  REQUIRE(p.rows.size() == 36);
  double es_sum = 0.0;
  for (std::size_t i = 0; i < 36; ++i) {
    CAPTURE(i);
    CHECK(p.cell(i, "scenario") == "base");
    CHECK(p.cell(i, "id") == s.cell(i, "id"));
    CHECK(p.cell(i, "status") == "ok");
    CHECK(p.cell(i, "pd") == s.cell(i, "pd"));  // the same double printed with 17 digits
    CHECK(p.number(i, "expected_loss") ==
          doctest::Approx(p.number(i, "pd") * p.number(i, "lgd") * p.number(i, "ead")).epsilon(1e-15));
    // RWA = 12.5 x K x EAD (BCBS 2006 para 272).
    CHECK(p.number(i, "rwa") ==
          doctest::Approx(12.5 * p.number(i, "irb_capital_ratio") * p.number(i, "ead")).epsilon(1e-14));
    es_sum += p.number(i, "es_contribution_99p9");
  }
  // The closing note gives the portfolio's ES; the contributions add up to it (6 digits printed).
  const auto pos = r.err.find("ES 99.9% ");
  REQUIRE(pos != std::string::npos);
  CHECK(es_sum == doctest::Approx(std::stod(r.err.substr(pos + 9))).epsilon(1e-5));
}

TEST_CASE("portfolio with the sample correlation file, Monte Carlo and the output files") {
  TempDir t;
  const std::string out = t.file("p.csv");
  const std::string summary = t.file("s.csv");
  const std::string dist = t.file("d.csv");
  const auto r = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv -c "
      "samples/sector_correlations.yaml --monte-carlo 20000 "
      "--format csv -o '" +
      out + "' --summary-output '" + summary + "' --distribution-output '" + dist + "'");
  CHECK(r.exit_code == 0);
  CHECK(r.out.empty());
  const auto p = parse_csv_table(read_file(out));
  REQUIRE(p.rows.size() == 36);
  CHECK(p.cell(0, "asset_correlation_source") == "sector");
  CHECK(p.number(0, "asset_correlation") == 0.19);  // Transport in the sample file
  CHECK(p.number(0, "monte_carlo_es_contribution_99p9_se") >= 0.0);
  const auto s = parse_csv_table(read_file(summary));
  bool mc_es = false;
  for (std::size_t i = 0; i < s.rows.size(); ++i) {
    if (s.cell(i, "method") == "monte_carlo" && s.cell(i, "measure") == "es" &&
        s.cell(i, "group_by") == "total") {
      CHECK(s.number(i, "standard_error") > 0.0);
      mc_es = true;
    }
  }
  CHECK(mc_es);
  const auto d = parse_csv_table(read_file(dist));
  CHECK(d.rows.size() == 2048);
  double total = 0.0;
  for (std::size_t i = 0; i < d.rows.size(); ++i) total += d.number(i, "probability");
  CHECK(total == doctest::Approx(1.0).epsilon(1e-12));
  // Same results with one thread or two.
  const auto one = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv -c "
      "samples/sector_correlations.yaml --monte-carlo "
      "20000 --format csv -j 1");
  CHECK(one.out == read_file(out));
}

TEST_CASE("stress scenarios at portfolio level: the stressed PDs are the stress command's") {
  const auto st = run_firmcall(  // both follow stress.hold (asset-vol by default)
      "stress samples/demo_book.yaml --scenarios samples/stress_scenarios.yaml --format csv");
  REQUIRE(st.exit_code == 0);
  const auto s = parse_csv_table(st.out);
  const auto r = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv --scenarios "
      "samples/stress_scenarios.yaml --format csv");
  CHECK(r.exit_code == 0);
  const auto p = parse_csv_table(r.out);
  REQUIRE(p.rows.size() == 4 * 36);
  for (std::size_t row = 36; row < p.rows.size(); ++row) {
    CAPTURE(row);
    const std::size_t srow = row - 36;
    CHECK(p.cell(row, "scenario") == s.cell(srow, "scenario"));
    CHECK(p.cell(row, "id") == s.cell(srow, "id"));
    CHECK(p.cell(row, "pd") == s.cell(srow, "pd_stressed"));
  }
  CHECK(r.err.find("severe: 36 of 36 obligors in the portfolio") != std::string::npos);
  // The table closes with the scenario comparison.
  const auto table = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv --scenarios "
      "samples/stress_scenarios.yaml");
  CHECK(table.exit_code == 0);
  CHECK(table.out.find("Scenario comparison") != std::string::npos);
  CHECK(table.out.find("VaR, exact one factor") != std::string::npos);
}

TEST_CASE("bad obligors are listed (exit code 1) while the others run") {
  TempDir t;
  const std::string book = t.write("b.csv",
                                   "id,name,sector,market_cap,equity_vol,default_point,rate,ead,lgd\n"
                                   "G-1,Good,Energy,900,0.4,700,0.03,10,0.4\n"
                                   "N-2,Negative,Energy,900,0.4,700,0.03,-10,0.4\n"
                                   "L-3,Lgd,Energy,900,0.4,700,0.03,10,1.5\n"
                                   "M-4,Missing,Energy,900,0.4,700,0.03,,0.4\n"
                                   "G-5,Good,Energy,500,0.5,700,0.03,20,\n");
  const auto r = run_firmcall("portfolio '" + book + "' --format csv");
  CHECK(r.exit_code == 1);
  const auto p = parse_csv_table(r.out);
  REQUIRE(p.rows.size() == 5);
  CHECK(p.cell(0, "status") == "ok");
  CHECK(p.cell(4, "status") == "ok");
  CHECK(p.number(4, "lgd") == 0.45);  // the configured default (common practice)
  CHECK(r.err.find(book + ":3: obligor 'N-2': field 'ead': must not be negative, got -10") !=
        std::string::npos);
  CHECK(r.err.find(book +
                   ":4: obligor 'L-3': field 'lgd': must be a decimal in [0, 1] (0.45 means 45%), got 1.5") !=
        std::string::npos);
  CHECK(r.err.find(book +
                   ":5: obligor 'M-4': field 'ead': missing (the portfolio needs an exposure at default)") !=
        std::string::npos);
  CHECK(r.err.find("base: 2 of 5 obligors in the portfolio") != std::string::npos);
}

TEST_CASE("bad correlation files and command lines exit with code 2 and write nothing") {
  TempDir t;
  const std::string out = t.file("never.csv");
  const std::string bad = t.write("c.yaml",
                                  "factors: [{sector: Energy}, {sector: Transport}, {sector: Utilities}]\n"
                                  "factor_correlation:\n"
                                  "  - [1.0, -0.6, -0.6]\n"
                                  "  - [-0.6, 1.0, -0.6]\n"
                                  "  - [-0.6, -0.6, 1.0]\n");
  auto r =
      run_firmcall("portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv -c '" +
                   bad + "' -o '" + out + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err ==
        "firmcall: error: " + bad +
            ":3: factor_correlation: not positive definite (smallest eigenvalue -0.2; a correlation matrix "
            "needs all eigenvalues above 1e-10 for its Cholesky factor)\n");
  CHECK_FALSE(std::filesystem::exists(out));
  r = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv "
      "--importance-sampling");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--importance-sampling: applies to the simulation; give --monte-carlo N as well") !=
        std::string::npos);
  r = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv "
      "--asset-correlation 1.5");
  CHECK(r.exit_code == 2);
  r = run_firmcall(
      "portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv --levels "
      "0.999,0.99");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--levels: list the levels in increasing order") != std::string::npos);
  // A sector the correlation file does not list makes those obligors invalid, not the run.
  const std::string partial = t.write("p.yaml", "factors: [{sector: Energy, asset_correlation: 0.2}]\n");
  r = run_firmcall("portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv -c '" +
                   partial + "' --format csv");
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("obligor 'ALD-01': field 'sector': 'Transport' is not a factor of " + partial) !=
        std::string::npos);
}
