// End-to-end tests of currencies: the `currency` column of score, stress and portfolio, and
// `portfolio --reporting-currency CCY --fx FILE` on a small invented book in three currencies,
// checked against totals computed by hand from the book, the FX file and the score command's PDs.
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

namespace {

// Three invented obligors, one per currency; amounts in each obligor's own currency.
const char* const kBook =
    "id,name,sector,country,currency,market_cap,equity_vol,default_point,rate,ead,lgd\n"
    "TAM-1,Tamsin Ropeworks,Industrials,NL,EUR,1000,0.30,600,0.03,100,0.4\n"
    "KES-2,Kestrel Lenses,Technology,GB,GBP,800,0.35,500,0.03,50,0.5\n"
    "ORR-3,Orrin Dairies,Consumer,US,USD,1200,0.25,900,0.03,200,0.45\n";

// Invented rates: EUR per unit of each currency.
const char* const kFx = "# as_of: 2026-06-30\ncurrency,rate\nGBP,1.2\nUSD,0.9\n";

// The same book with every EAD converted to EUR by hand: 100 x 1, 50 x 1.2 = 60, 200 x 0.9 = 180.
const char* const kBookInEur =
    "id,name,sector,country,currency,market_cap,equity_vol,default_point,rate,ead,lgd\n"
    "TAM-1,Tamsin Ropeworks,Industrials,NL,EUR,1000,0.30,600,0.03,100,0.4\n"
    "KES-2,Kestrel Lenses,Technology,GB,EUR,800,0.35,500,0.03,60,0.5\n"
    "ORR-3,Orrin Dairies,Consumer,US,EUR,1200,0.25,900,0.03,180,0.45\n";

// The value of a summary row (group total, method, measure, level: NaN for none).
double summary_value(const firmcall::testing::CsvTable& s, const std::string& method,
                     const std::string& measure, double level = std::nan("")) {
  for (std::size_t i = 0; i < s.rows.size(); ++i) {
    if (s.cell(i, "group_by") != "total" || s.cell(i, "method") != method || s.cell(i, "measure") != measure)
      continue;
    const double l = s.number(i, "confidence_level");
    if ((std::isnan(level) && std::isnan(l)) || l == level) return s.number(i, "value");
  }
  return std::nan("");
}

}  // namespace

TEST_CASE("score and stress rows carry the obligor's currency") {
  TempDir t;
  const std::string book = t.write("b.csv", kBook);
  const auto score = run_firmcall("score '" + book + "' -f csv");
  REQUIRE(score.exit_code == 0);
  const auto s = parse_csv_table(score.out);
  REQUIRE(s.rows.size() == 3);
  CHECK(s.cell(0, "currency") == "EUR");
  CHECK(s.cell(1, "currency") == "GBP");
  CHECK(s.cell(2, "currency") == "USD");
  const auto json = run_firmcall("score '" + book + "' -f json");
  CHECK(json.out.find("\"currency\": \"GBP\"") != std::string::npos);
  const auto table = run_firmcall("score '" + book + "'");
  const std::size_t row = table.out.find("\nKES-2 ");
  REQUIRE(row != std::string::npos);
  CHECK(table.out.substr(row, table.out.find('\n', row + 1) - row).find(" GBP ") != std::string::npos);
  const auto stress = run_firmcall("stress '" + book + "' --equity-shocks 0,-0.3 -f csv");
  REQUIRE(stress.exit_code == 0);
  const auto st = parse_csv_table(stress.out);
  REQUIRE(st.rows.size() == 6);
  CHECK(st.cell(2, "currency") == "USD");
  // The scenario summaries add EADs up unconverted, which a note says.
  CHECK(stress.err.find(book +
                        ": note: the obligors' amounts are in 3 currencies (EUR, GBP, USD); the summaries' "
                        "ead_total, EAD-weighted PDs and expected losses add them up as they are") !=
        std::string::npos);
  // A code that is not three upper-case letters makes the obligor invalid, naming the field.
  const std::string bad = t.write(
      "bad.csv", std::string(kBook) + "LOW-4,Lowercase Mills,Industrials,DE,eur,900,0.3,500,0.03,10,0.4\n");
  const auto r = run_firmcall("score '" + bad + "' -f csv");
  CHECK(r.exit_code == 1);
  CHECK(r.err.find(
            bad + ":5: obligor 'LOW-4': field 'currency': expected three upper-case letters (ISO 4217 style, "
                  "e.g. EUR), got 'eur'") != std::string::npos);
}

TEST_CASE("stress --fx: the summaries in the reporting currency against hand-computed totals") {
  TempDir t;
  const std::string book = t.write("b.csv", kBook);
  const std::string fx = t.write("fx.csv", kFx);
  const auto r =
      run_firmcall("stress '" + book + "' --equity-shocks 0,-0.3 --reporting-currency EUR --fx '" + fx +
                   "' -f csv -o '" + t.file("rows.csv") + "' --summary-output '" + t.file("s.csv") + "'");
  REQUIRE(r.exit_code == 0);
  CHECK(r.err.find("note: the obligors' amounts are in") == std::string::npos);
  const auto rows = parse_csv_table(read_file(t.file("rows.csv")));
  const auto sum = parse_csv_table(read_file(t.file("s.csv")));
  REQUIRE(rows.rows.size() == 6);
  REQUIRE(sum.rows.size() == 2);
  const double rate[] = {1.0, 1.2, 0.9};  // EUR per unit, from the FX file
  for (std::size_t k = 0; k < 2; ++k) {
    CAPTURE(k);
    // By hand: EAD 100 x 1 + 50 x 1.2 + 200 x 0.9 = 340 EUR; expected loss = the rows' own-currency
    // expected losses, each times its rate.
    double el = 0.0, el_stressed = 0.0;
    for (std::size_t i = 0; i < 3; ++i) {
      el += rows.number(3 * k + i, "expected_loss") * rate[i];
      el_stressed += rows.number(3 * k + i, "expected_loss_stressed") * rate[i];
    }
    CHECK(sum.number(k, "ead_total") == doctest::Approx(340.0).epsilon(1e-15));
    CHECK(sum.number(k, "expected_loss") == doctest::Approx(el).epsilon(1e-14));
    CHECK(sum.number(k, "expected_loss_stressed") == doctest::Approx(el_stressed).epsilon(1e-14));
    CHECK(sum.cell(k, "currency") == "EUR");
  }
  CHECK(rows.cell(1, "currency") == "GBP");
  // Without --fx: summed as it stands (100 + 50 + 200), no currency named.
  const auto plain = run_firmcall("stress '" + book + "' --equity-shocks 0 -f csv -o '" + t.file("r2.csv") +
                                  "' --summary-output '" + t.file("s2.csv") + "'");
  REQUIRE(plain.exit_code == 0);
  const auto s2 = parse_csv_table(read_file(t.file("s2.csv")));
  CHECK(s2.number(0, "ead_total") == 350.0);
  CHECK(s2.cell(0, "currency") == "");
  // A currency the FX file lacks.
  const std::string no_usd = t.write("no_usd.csv", "# as_of: 2026-06-30\ncurrency,rate\nGBP,1.2\n");
  const auto bad = run_firmcall("stress '" + book + "' --equity-shocks 0 --reporting-currency EUR --fx '" +
                                no_usd + "' -f csv -o '" + t.file("never.csv") + "'");
  CHECK(bad.exit_code == 2);
  CHECK(bad.err.find(no_usd + ": no rate to EUR for USD (currencies of " + book + ")") != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(t.file("never.csv")));
}

TEST_CASE("portfolio --fx: EAD, expected loss and capital against hand-computed totals") {
  TempDir t;
  const std::string book = t.write("b.csv", kBook);
  const std::string fx = t.write("fx.csv", kFx);
  const auto score = run_firmcall("score '" + book + "' -f csv");
  REQUIRE(score.exit_code == 0);
  const auto s = parse_csv_table(score.out);
  const auto r =
      run_firmcall("portfolio '" + book + "' --reporting-currency EUR --fx '" + fx + "' -f csv -o '" +
                   t.file("p.csv") + "' --summary-output '" + t.file("s.csv") + "'");
  REQUIRE(r.exit_code == 0);
  const auto p = parse_csv_table(read_file(t.file("p.csv")));
  REQUIRE(p.rows.size() == 3);
  const double rate[] = {1.0, 1.2, 0.9};  // EUR per unit, from the FX file above
  const double own_ead[] = {100.0, 50.0, 200.0};
  const double lgd[] = {0.4, 0.5, 0.45};
  const char* const currency[] = {"EUR", "GBP", "USD"};
  double el = 0.0, capital = 0.0;
  for (std::size_t i = 0; i < 3; ++i) {
    CAPTURE(i);
    CHECK(p.cell(i, "currency") == currency[i]);
    CHECK(p.cell(i, "reporting_currency") == "EUR");
    CHECK(p.number(i, "fx_rate") == rate[i]);
    CHECK(p.number(i, "ead") == doctest::Approx(own_ead[i] * rate[i]).epsilon(1e-15));
    // The PD does not depend on the currency: the score command's, digit for digit.
    CHECK(p.cell(i, "pd") == s.cell(i, "pd"));
    el += s.number(i, "pd") * lgd[i] * own_ead[i] * rate[i];
    // K (the capital ratio) is free of the currency; capital = K x EAD in EUR (BCBS 2006 para 272).
    capital += p.number(i, "irb_capital_ratio") * own_ead[i] * rate[i];
  }
  // By hand: total EAD = 100 x 1 + 50 x 1.2 + 200 x 0.9 = 100 + 60 + 180 = 340 EUR;
  // EL = PD1 x 0.4 x 100 + PD2 x 0.5 x 60 + PD3 x 0.45 x 180, PDs from the score command.
  const auto sum = parse_csv_table(read_file(t.file("s.csv")));
  CHECK(summary_value(sum, "book", "ead") == doctest::Approx(340.0).epsilon(1e-15));
  CHECK(summary_value(sum, "book", "expected_loss") == doctest::Approx(el).epsilon(1e-14));
  CHECK(summary_value(sum, "irb", "capital") == doctest::Approx(capital).epsilon(1e-14));
  for (std::size_t i = 0; i < sum.rows.size(); ++i) {
    CHECK(sum.cell(i, "currency") == (sum.cell(i, "measure") == "obligors" ? "" : "EUR"));
  }
  // The closing line names the currency of the figures.
  CHECK(r.err.find("IRB capital ") != std::string::npos);
  CHECK(r.err.find(" EUR\n") != std::string::npos);
}

TEST_CASE("portfolio --fx: the loss distribution equals that of the book converted by hand") {
  TempDir t;
  const std::string book = t.write("b.csv", kBook);
  const std::string eur = t.write("eur.csv", kBookInEur);
  const std::string fx = t.write("fx.csv", kFx);
  const auto a =
      run_firmcall("portfolio '" + book + "' --reporting-currency EUR --fx '" + fx + "' -f csv -o '" +
                   t.file("a.csv") + "' --summary-output '" + t.file("as.csv") + "'");
  const auto b = run_firmcall("portfolio '" + eur + "' -f csv -o '" + t.file("pb.csv") +
                              "' --summary-output '" + t.file("bs.csv") + "'");
  REQUIRE(a.exit_code == 0);
  REQUIRE(b.exit_code == 0);
  const auto sa = parse_csv_table(read_file(t.file("as.csv")));
  const auto sb = parse_csv_table(read_file(t.file("bs.csv")));
  for (double level : {0.99, 0.995, 0.999}) {
    CAPTURE(level);
    for (const char* m : {"var", "es"}) {
      CAPTURE(m);
      CHECK(summary_value(sa, "exact_one_factor", m, level) ==
            doctest::Approx(summary_value(sb, "exact_one_factor", m, level)).epsilon(1e-12));
      CHECK(summary_value(sa, "large_portfolio", m, level) ==
            doctest::Approx(summary_value(sb, "large_portfolio", m, level)).epsilon(1e-12));
    }
  }
  const auto pa = parse_csv_table(read_file(t.file("a.csv")));
  const auto pb = parse_csv_table(read_file(t.file("pb.csv")));
  for (std::size_t i = 0; i < 3; ++i) {
    CHECK(pa.number(i, "es_contribution_99p9") ==
          doctest::Approx(pb.number(i, "es_contribution_99p9")).epsilon(1e-12));
  }
  // The single-currency book is reported in its currency without --fx.
  CHECK(pb.cell(0, "reporting_currency") == "EUR");
  CHECK(pb.number(1, "fx_rate") == 1.0);
  // The JSON names the FX file, its date and the rates used.
  const auto j = run_firmcall("portfolio '" + book + "' --reporting-currency EUR --fx '" + fx + "' -f json");
  REQUIRE(j.exit_code == 0);
  CHECK(j.out.find("\"reporting_currency\": \"EUR\", \"fx_file\": \"" + fx +
                   "\", \"fx_as_of\": \"2026-06-30\"") != std::string::npos);
  CHECK(j.out.find("\"fx_rates\": {\"EUR\": 1, \"GBP\": 1.2, \"USD\": 0.9}") != std::string::npos);
  // The table names them too.
  const auto table = run_firmcall("portfolio '" + book + "' --reporting-currency EUR --fx '" + fx + "'");
  // (the line wraps at 110 columns, so the parts are looked for one by one)
  CHECK(table.out.find("Amounts (EAD, losses, capital): EUR, converted at the rates of") !=
        std::string::npos);
  CHECK(table.out.find(fx) != std::string::npos);
  CHECK(table.out.find("GBP 1.2, USD 0.9") != std::string::npos);
}

TEST_CASE("portfolio refuses books it cannot add up in one currency, exit code 2, nothing written") {
  TempDir t;
  const std::string book = t.write("b.csv", kBook);
  const std::string out = t.file("never.csv");
  auto r = run_firmcall("portfolio '" + book + "' -f csv -o '" + out + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(book +
                   ": the obligors' amounts are in 3 currencies (EUR, GBP, USD): a portfolio adds exposures "
                   "and losses up in one currency; give --reporting-currency CCY and --fx FILE") !=
        std::string::npos);
  CHECK_FALSE(std::filesystem::exists(out));
  // A currency the FX file does not list, named with its obligors.
  const std::string no_usd = t.write("no_usd.csv", "# as_of: 2026-06-30\ncurrency,rate\nGBP,1.2\n");
  r = run_firmcall("portfolio '" + book + "' --reporting-currency EUR --fx '" + no_usd + "' -f csv -o '" +
                   out + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(no_usd + ": no rate to EUR for USD (obligor 'ORR-3') of " + book) != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(out));
  // Obligors without a currency among others with one.
  const std::string mixed =
      t.write("mixed.csv",
              std::string(kBookInEur) + "NON-4,Nonesuch Kilns,Industrials,DE,,900,0.3,500,0.03,10,0.4\n");
  r = run_firmcall("portfolio '" + mixed + "' -f csv -o '" + out + "'");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(mixed + ": obligor 'NON-4' state no currency while the others are in EUR") !=
        std::string::npos);
  // ... which the setting scoring.currency settles.
  const std::string cfg = t.write("c.yaml", "scoring:\n  currency: EUR\n");
  r = run_firmcall("--config '" + cfg + "' portfolio '" + mixed + "' -f csv");
  CHECK(r.exit_code == 0);
  CHECK(parse_csv_table(r.out).cell(3, "currency") == "EUR");
  // Each option needs the other; a bad code is named.
  r = run_firmcall("portfolio '" + book + "' --reporting-currency EUR");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--fx") != std::string::npos);
  const std::string fx = t.write("fx.csv", kFx);
  r = run_firmcall("portfolio '" + book + "' --reporting-currency eur --fx '" + fx + "'");
  CHECK(r.exit_code == 2);
  CHECK(
      r.err.find(
          "--reporting-currency: expected three upper-case letters (ISO 4217 style, e.g. EUR), got 'eur'") !=
      std::string::npos);
}
