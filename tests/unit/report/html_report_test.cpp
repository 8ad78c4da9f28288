// Tests of the HTML report (src/html_report.cpp, src/cli/cmd_report.cpp) on the built binary and the
// samples: every section of the full sample run, the page's self-containment (no scripts, no links
// out of the page), numbers shown against the CSV output of the score, stress, portfolio and movers
// commands for the same inputs, sections left out when their data is missing, escaping, and bad
// input. The XML well-formedness of the page and of each chart is checked by a real XML parser in
// tests/cli/report_xml_check.py (CTest test report_xml_well_formed).
#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include "csv_table.hpp"
#include "firmcall/report/html_report.hpp"
#include "firmcall/report/svg.hpp"
#include "test_util.hpp"

using firmcall::testing::CsvTable;
using firmcall::testing::parse_csv_table;
using firmcall::testing::read_file;
using firmcall::testing::run_firmcall;
using firmcall::testing::TempDir;

namespace {

std::string fmt(const char* format, double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

// The score table's PD text (docs/report.md, "Numbers for people"): percent with four decimals, scientific
// below 0.001 %; the report adds the percent sign.
std::string table_pd(double pd) {
  const double p = 100.0 * pd;
  if (p == 0.0) return "0%";
  return fmt(std::fabs(p) >= 1e-3 ? "%.4f%%" : "%.2e%%", p);
}

// The report's amount text (docs/report.md, "Numbers for people"): two decimals with thousands
// separators from 1 on (values here stay below 1,000 where this is used), three significant
// digits below 1 (%#.3g, %.2e below 0.001).
std::string table_amount(double v) {
  const double a = std::fabs(v);
  if (v != 0.0 && a < 1.0) return fmt(a >= 1e-3 ? "%#.3g" : "%.2e", v);
  return fmt("%.2f", v);
}

// Unescapes the five entities the report writes.
std::string unescape(std::string s) {
  const std::vector<std::pair<std::string, std::string>> entities = {
      {"&lt;", "<"}, {"&gt;", ">"}, {"&quot;", "\""}, {"&#39;", "'"}, {"&amp;", "&"}};
  for (const auto& [from, to] : entities) {
    for (std::size_t p = s.find(from); p != std::string::npos; p = s.find(from, p + to.size())) {
      s.replace(p, from.size(), to);
    }
  }
  return s;
}

// The cells of the row whose first cell is `id` in the first table after `marker`.
std::vector<std::string> table_row(const std::string& html, const std::string& marker,
                                   const std::string& id) {
  const std::size_t table = html.find(marker);
  REQUIRE_MESSAGE(table != std::string::npos, "no " << marker);
  const std::size_t end = html.find("</table>", table);
  const std::size_t row = html.find("<td>" + id + "</td>", table);
  REQUIRE_MESSAGE((row != std::string::npos && row < end), "no row " << id << " after " << marker);
  const std::size_t row_end = html.find("</tr>", row);
  std::vector<std::string> cells;
  for (std::size_t p = html.find("<td", row); p < row_end; p = html.find("<td", p + 1)) {
    const std::size_t open = html.find('>', p) + 1;
    cells.push_back(unescape(html.substr(open, html.find("</td>", open) - open)));
  }
  return cells;
}

// Records the four weekly samples into `db` (samples/weekly/README.md).
void record_weeks(const std::string& db) {
  for (int w = 1; w <= 4; ++w) {
    const auto r =
        run_firmcall("-q score samples/weekly/week" + std::to_string(w) + ".yaml --record --db '" + db + "'");
    REQUIRE(r.exit_code == 0);
  }
}

struct FullRun {
  TempDir dir;
  std::string html;
  int exit_code = -1;
  std::string err;
};

// The full sample run of the README's quick start.
const FullRun& full_run() {
  static FullRun run = [] {
    FullRun f;
    record_weeks(f.dir.file("weekly.sqlite"));
    const auto r = run_firmcall(
        "report samples/demo_book.yaml --scenarios samples/stress_scenarios.yaml --names "
        "GOR-33,BEL-28,CIN-03,ALD-01 "
        "--portfolio --reporting-currency EUR --fx samples/demo_fx.csv --validate samples/outcomes.csv --db "
        "'" +
        f.dir.file("weekly.sqlite") + "' --html '" + f.dir.file("report.html") + "'");
    f.exit_code = r.exit_code;
    f.err = r.err;
    f.html = read_file(f.dir.file("report.html"));
    return f;
  }();
  return run;
}

}  // namespace

TEST_CASE("report on the full sample run: exit code, every section, nothing fetched from anywhere") {
  const FullRun& f = full_run();
  CHECK(f.exit_code == 0);
  CHECK(f.err.find("wrote") != std::string::npos);
  REQUIRE(!f.html.empty());
  for (const std::string& id : firmcall::report_section_ids()) {
    CAPTURE(id);
    CHECK(f.html.find("<section id=\"" + id + "\"") != std::string::npos);
  }
  CHECK(f.html.find("Not in this report") == std::string::npos);
  // Self-contained: no scripts, no external resources, every link points inside the page.
  CHECK(f.html.find("<script") == std::string::npos);
  CHECK(f.html.find("http:") == std::string::npos);
  CHECK(f.html.find("https:") == std::string::npos);
  CHECK(f.html.find("//") == std::string::npos);
  CHECK(f.html.find("url(") == std::string::npos);
  CHECK(f.html.find("@import") == std::string::npos);
  CHECK(f.html.find(" src=") == std::string::npos);
  for (std::size_t p = f.html.find("href=\""); p != std::string::npos; p = f.html.find("href=\"", p + 1)) {
    CHECK(f.html[p + 6] == '#');
  }
  // Every chart: a title, axis titles and a caption with the model caution.
  std::size_t charts = 0;
  for (std::size_t p = f.html.find("<figure"); p != std::string::npos; p = f.html.find("<figure", p + 1)) {
    ++charts;
    const std::string fig = f.html.substr(p, f.html.find("</figure>", p) - p);
    CHECK(fig.find("<title>") != std::string::npos);
    CHECK(fig.find("fc-chart-title") != std::string::npos);
    CHECK(fig.find("fc-axis-title") != std::string::npos);
    CHECK(fig.find("not a credit decision on their own") != std::string::npos);
  }
  // grades, DD/leverage, PD by scenario, 3 per-scenario changes, term, loss distribution, movers,
  // ROC, CAP and default rate by grade.
  CHECK(charts == 12);
  CHECK(f.html.find("Model caution.") != std::string::npos);
  // The store holds the weekly books, not the demo book: the movers section says so.
  CHECK(f.html.find("The store's runs are of samples/weekly/week4.yaml (Harbourline credit desk - weekly "
                    "watch), not of this report's book samples/demo_book.yaml") != std::string::npos);
}

TEST_CASE("report tables show the score command's CSV values with the table's rounding") {
  const FullRun& f = full_run();
  const auto score = run_firmcall("score samples/demo_book.yaml --format csv");
  REQUIRE(score.exit_code == 0);
  const CsvTable s = parse_csv_table(score.out);
  REQUIRE(s.rows.size() == 36);
  std::size_t checked = 0;
  for (std::size_t i = 0; i < s.rows.size(); ++i) {
    const std::string id = s.cell(i, "id");
    // Only the weakest and strongest 10 are in the name tables.
    const bool weak =
        f.html.find("<td>" + id + "</td>", f.html.find("fc-names-weak")) < f.html.find("fc-names-strong");
    const std::string marker = weak ? "fc-names-weak" : "fc-names-strong";
    if (f.html.find("<td>" + id + "</td>", f.html.find(marker)) >
        f.html.find("</table>", f.html.find(marker))) {
      continue;
    }
    CAPTURE(id);
    const auto cells = table_row(f.html, marker, id);
    REQUIRE(cells.size() == 12);
    CHECK(cells[1] == s.cell(i, "name"));
    CHECK(cells[11] == s.cell(i, "currency"));                           // the obligor's currency, last
    CHECK(cells[4] == fmt("%.3f", s.number(i, "distance_to_default")));  // score table: DD 3 decimals
    CHECK(cells[5] == table_pd(s.number(i, "pd")));
    CHECK(cells[7] == fmt("%.3f", s.number(i, "leverage")));
    ++checked;
  }
  CHECK(checked == 20);
  // Spot values quoted in the README's quick-start score table (samples/demo_book.yaml).
  CHECK(table_row(f.html, "fc-names-weak", "GOR-33")[5] == "18.8634%");
  CHECK(table_row(f.html, "fc-names-weak", "GOR-33")[6] == "172.92");
  CHECK(table_row(f.html, "fc-names-weak", "GOR-33")[8] == "5,440.64");
  CHECK(table_row(f.html, "fc-names-weak", "GOR-33")[11] == "ZAR");  // the book's currency of GOR-33, last
  CHECK(table_row(f.html, "fc-names-strong", "DUN-04")[5] == "8.81e-14%");
}

TEST_CASE("report stress, portfolio and movers figures equal those commands' CSV output") {
  const FullRun& f = full_run();
  TempDir t;
  // Stress: the per-scenario summary CSV (docs/stress.md).
  const auto st = run_firmcall(
      "-q stress samples/demo_book.yaml --scenarios samples/stress_scenarios.yaml --reporting-currency EUR "
      "--fx "
      "samples/demo_fx.csv --format csv -o '" +
      t.file("rows.csv") + "' --summary-output '" + t.file("summary.csv") + "'");
  REQUIRE(st.exit_code == 0);
  const CsvTable sum = parse_csv_table(read_file(t.file("summary.csv")));
  REQUIRE(sum.rows.size() == 3);
  for (std::size_t k = 0; k < 3; ++k) {
    const std::string name = sum.cell(k, "scenario");
    CAPTURE(name);
    const auto cells = table_row(f.html, "fc-stress-summary", name);
    REQUIRE(cells.size() == 10);
    CHECK(cells[1] == sum.cell(k, "compared"));
    CHECK(cells[3] == table_pd(sum.number(k, "mean_pd_stressed")));
    CHECK(cells[5] == table_pd(sum.number(k, "ead_weighted_pd_stressed")));
    CHECK(cells[7] == sum.cell(k, "above_threshold_stressed"));
    CHECK(cells[9] == fmt("%.2f", sum.number(k, "expected_loss_stressed")));
  }
  // The report holds the stress command's volatility (stress.hold, asset-vol by default): under it
  // severe moves more names above 5% than the 16 of docs/stress.md's equity-vol example.
  CHECK(std::stoi(table_row(f.html, "fc-stress-summary", "severe")[7]) > 16);
  // Per-obligor stressed PD: the stress rows CSV.
  const CsvTable rows = parse_csv_table(read_file(t.file("rows.csv")));
  std::size_t matched = 0;
  for (std::size_t i = 0; i < rows.rows.size(); ++i) {
    if (rows.cell(i, "scenario") != "severe") continue;
    const std::string id = rows.cell(i, "id");
    const std::size_t table = f.html.find("fc-stress-names");
    if (f.html.find("<td>" + id + "</td>", table) > f.html.find("</table>", table)) continue;
    const auto cells = table_row(f.html, "fc-stress-names", id);
    CHECK(cells[2] == table_pd(rows.number(i, "pd")));
    CHECK(cells[4] == table_pd(rows.number(i, "pd_stressed")));  // columns: mild, severe, energy_transition
    ++matched;
  }
  CHECK(matched == 20);

  // Portfolio: VaR and ES of the exact one-factor distribution (portfolio --summary-output).
  const auto pf = run_firmcall(
      "-q portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv -o '" +
      t.file("p.txt") + "' --summary-output '" + t.file("p.csv") + "'");
  REQUIRE(pf.exit_code == 0);
  const CsvTable ps = parse_csv_table(read_file(t.file("p.csv")));
  std::size_t levels = 0;
  for (std::size_t i = 0; i < ps.rows.size(); ++i) {
    if (ps.cell(i, "scenario") != "base" || ps.cell(i, "group_by") != "total" ||
        ps.cell(i, "method") != "exact_one_factor" ||
        (ps.cell(i, "measure") != "var" && ps.cell(i, "measure") != "es")) {
      continue;
    }
    const std::string level = fmt("%g%%", 100.0 * ps.number(i, "confidence_level"));
    CAPTURE(level);
    const auto cells = table_row(f.html, "fc-portfolio-levels", level);
    CHECK(cells[ps.cell(i, "measure") == "var" ? 1 : 2] == fmt("%.2f", ps.number(i, "value")));
    ++levels;
  }
  CHECK(levels == 6);

  // Movers: run 4 against run 3 of the weekly samples (movers --format csv).
  record_weeks(t.file("w.sqlite"));
  const auto mv = run_firmcall("movers --db '" + t.file("w.sqlite") + "' --format csv");
  REQUIRE(mv.exit_code == 0);
  const CsvTable m = parse_csv_table(mv.out);
  const auto zep = table_row(f.html, "fc-movers", "ZEP-26");
  CHECK(m.cell(0, "id") == "ZEP-26");  // the most severe first, as in the watchlist of docs/monitoring.md
  CHECK(zep[2] == fmt("%.3f", m.number(0, "dd_before")));
  CHECK(zep[3] == fmt("%.3f", m.number(0, "dd_now")));
  CHECK(zep[6] == table_pd(m.number(0, "pd_now")));
  CHECK(zep[7] == "FC8 to FC10");
  CHECK(zep[8] == "dd_drop pd_jump downgrade pd_ceiling");
  CHECK(zep[6] == "16.9426%");  // docs/monitoring.md, watchlist example
}

TEST_CASE("report amounts name their currency: totals in the reporting currency, names in their own") {
  const FullRun& f = full_run();
  TempDir t;
  // The portfolio run's total EAD and expected loss in EUR (portfolio --summary-output) are the
  // book summary's cards; the section names the FX file, its date and the rates.
  const auto pf = run_firmcall(
      "-q portfolio samples/demo_book.yaml --reporting-currency EUR --fx samples/demo_fx.csv -o '" +
      t.file("p.txt") + "' --summary-output '" + t.file("p.csv") + "'");
  REQUIRE(pf.exit_code == 0);
  const CsvTable ps = parse_csv_table(read_file(t.file("p.csv")));
  double ead = std::nan(""), el = std::nan("");
  for (std::size_t i = 0; i < ps.rows.size(); ++i) {
    if (ps.cell(i, "scenario") != "base" || ps.cell(i, "group_by") != "total" ||
        ps.cell(i, "method") != "book")
      continue;
    if (ps.cell(i, "measure") == "ead") ead = ps.number(i, "value");
    if (ps.cell(i, "measure") == "expected_loss") el = ps.number(i, "value");
  }
  const std::string note = " at the rates of samples/demo_fx.csv as of 2026-11-30";
  CHECK(f.html.find("<div class=\"fc-card-value\">" + firmcall::report_amount(ead) +
                    "</div><div class=\"fc-card-note\">exposure at default, in EUR" + note) !=
        std::string::npos);
  CHECK(f.html.find("<div class=\"fc-card-value\">" + firmcall::report_amount(el) + "</div>") !=
        std::string::npos);
  CHECK(f.html.find("every amount (EAD, losses, capital, contributions) in EUR, each EAD converted" + note +
                    " (EUR per unit: AUD 0.61,") != std::string::npos);
  CHECK(f.html.find("portfolio loss (EUR)") != std::string::npos);
  CHECK(f.html.find("EAD weights and expected losses in EUR.") != std::string::npos);  // the stress section
  // Without a portfolio run a book in 15 currencies has no total EAD.
  const auto r = run_firmcall("-q report samples/demo_book.yaml --html '" + t.file("r.html") + "'");
  REQUIRE(r.exit_code == 0);
  const std::string html = read_file(t.file("r.html"));
  CHECK(html.find(
            "<div class=\"fc-card-value\">-</div><div class=\"fc-card-note\">exposure at default, not added "
            "up: the book is in 15 currencies") != std::string::npos);
  // A portfolio section of that book needs the FX rates.
  const auto no_fx =
      run_firmcall("-q report samples/demo_book.yaml --portfolio --html '" + t.file("n.html") + "'");
  CHECK(no_fx.exit_code == 2);
  CHECK(no_fx.err.find("the obligors' amounts are in 15 currencies") != std::string::npos);
  CHECK_FALSE(std::filesystem::exists(t.file("n.html")));
}

TEST_CASE("report term structures equal score --horizons for the chosen names") {
  const FullRun& f = full_run();
  const auto r = run_firmcall("score samples/demo_book.yaml --horizons 0.5,1,2,3,5,7,10 --format csv");
  REQUIRE(r.exit_code == 0);
  const CsvTable c = parse_csv_table(r.out);
  std::size_t checked = 0;
  const std::vector<std::string> horizons = {"0.5", "1", "2", "3", "5", "7", "10"};
  for (const std::string id : {"GOR-33", "BEL-28", "CIN-03", "ALD-01"}) {
    const auto cells = table_row(f.html, "fc-term", id);
    REQUIRE(cells.size() == 9);
    std::size_t j = 0;
    for (std::size_t i = 0; i < c.rows.size(); ++i) {
      if (c.cell(i, "id") != id) continue;
      CAPTURE(id);
      CAPTURE(c.cell(i, "horizon"));
      CHECK(cells[2 + j] == table_pd(c.number(i, "pd")));
      ++j;
      ++checked;
    }
  }
  CHECK(checked == 28);
}

TEST_CASE("report without optional inputs leaves those sections out and says so") {
  TempDir t;
  const auto r = run_firmcall("report samples/demo_book.yaml --html '" + t.file("r.html") + "'");
  CHECK(r.exit_code == 0);
  const std::string html = read_file(t.file("r.html"));
  for (const std::string id : {"summary", "dd-leverage", "names"}) {
    CHECK(html.find("<section id=\"" + id + "\"") != std::string::npos);
  }
  for (const std::string id : {"stress", "term", "portfolio", "monitoring"}) {
    CAPTURE(id);
    CHECK(html.find("<section id=\"" + id + "\"") == std::string::npos);
  }
  CHECK(html.find(
            "Not in this report: stress results (give --scenarios FILE); PD term structures (give --names "
            "ID,ID); portfolio loss distribution (give --portfolio); movers and alerts (give --db STORE).") !=
        std::string::npos);
}

TEST_CASE("report escapes names and marks obligors that could not be scored") {
  TempDir t;
  const std::string book = t.write("b.csv",
                                   "id,name,market_cap,equity_vol,short_term_debt,long_term_debt,rate\n"
                                   "AMP-01,\"Smith & <Sons> \"\"Ltd\"\"\",1000,0.3,200,400,0.03\n"
                                   "BAD-02,Broken Row,1000,35%,200,400,0.03\n");
  const auto r = run_firmcall("report '" + book + "' --html '" + t.file("r.html") + "'");
  CHECK(r.exit_code == 1);  // the page is written; one obligor is not scored
  const std::string html = read_file(t.file("r.html"));
  CHECK(html.find("Smith &amp; &lt;Sons&gt; &quot;Ltd&quot;") != std::string::npos);
  CHECK(html.find("<Sons>") == std::string::npos);
  const auto failed = table_row(html, "fc-failed", "BAD-02");
  CHECK(failed[1] == "invalid_input");
  CHECK(failed[2].find("equity_vol") != std::string::npos);
}

TEST_CASE("report portfolio section names the obligors left out, and draws nothing when none is in") {
  TempDir t;
  const std::string book = t.write("b.csv",
                                   "id,name,market_cap,equity_vol,short_term_debt,long_term_debt,rate,ead\n"
                                   "NOE-01,No Exposure,1000,0.3,200,400,0.03,\n");
  const auto r = run_firmcall("report '" + book + "' --portfolio --html '" + t.file("r.html") + "'");
  CHECK(r.exit_code == 0);  // scored; only the portfolio leaves it out, as `firmcall portfolio` does
  const std::string html = read_file(t.file("r.html"));
  CHECK(html.find("<section id=\"portfolio\"") != std::string::npos);
  CHECK(html.find("Left out of the portfolio: " + t.file("b.csv") +
                  ":2: obligor &#39;NOE-01&#39;: field &#39;ead&#39;") != std::string::npos);
  CHECK(html.find("No obligor is in the portfolio") != std::string::npos);
  CHECK(html.find("fc-portfolio-levels") == std::string::npos);
}

TEST_CASE("report refuses bad input with exit code 2 and writes nothing") {
  TempDir t;
  const std::string out = t.file("r.html");
  struct Case {
    std::string args;
    std::string message;
  };
  const std::vector<Case> cases = {
      {"samples/no_such_book.yaml", "samples/no_such_book.yaml"},
      {"samples/demo_book.yaml --names GOR-33,XYZ-99",
       "--names: obligor 'XYZ-99' is not in samples/demo_book.yaml"},
      {"samples/demo_book.yaml --names GOR-33 --horizons 1,0.5", "--horizons"},
      {"samples/demo_book.yaml --horizons 1,2", "--horizons: applies to the term structures; give --names"},
      {"samples/demo_book.yaml --scenarios samples/no_such.yaml", "samples/no_such.yaml"},
      {"samples/demo_book.yaml --db '" + t.file("missing.sqlite") + "'", "missing.sqlite"},
      {"samples/demo_book.yaml --db samples/demo_book.yaml", "samples/demo_book.yaml"},
      {"samples/demo_book.yaml --correlation samples/sector_correlations.yaml", "give --portfolio"},
      // As score: a calibration that cannot be read is named; the calibrated PD needs a calibration.
      {"samples/demo_book.yaml --pd-calibration samples/no_such_calibration.yaml",
       "samples/no_such_calibration.yaml"},
      {"samples/demo_book.yaml --pd-calibration '" + t.write("bad_cal.yaml", "firmcall_calibration: 1\n") +
           "'",
       "bad_cal.yaml"},
      {"samples/demo_book.yaml --pd-calibration samples/outcomes.csv", "samples/outcomes.csv"},
      {"samples/demo_book.yaml --driving-pd calibrated", "--driving-pd calibrated: needs --pd-calibration"},
      {"samples/demo_book.yaml --pd-calibration samples/calibration.yaml --driving-pd neither",
       "--driving-pd"},
      {"samples/demo_book.yaml --validate-against samples/outcomes.csv",
       "--validate-against: applies to the validation section; give --validate"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.args);
    const auto r = run_firmcall("report " + c.args + " --html '" + out + "'");
    CHECK(r.exit_code == 2);
    CHECK(r.err.find(c.message) != std::string::npos);
    CHECK_FALSE(std::filesystem::exists(out));
  }
  std::filesystem::remove(t.file("bad_cal.yaml"));
  // A store with one run has nothing to compare; an earlier page is left as it was.
  t.write("r.html", "earlier page");
  const auto rec =
      run_firmcall("-q score samples/weekly/week1.yaml --record --db '" + t.file("one.sqlite") + "'");
  REQUIRE(rec.exit_code == 0);
  const auto r =
      run_firmcall("report samples/demo_book.yaml --db '" + t.file("one.sqlite") + "' --html '" + out + "'");
  CHECK(r.exit_code == 2);
  CHECK(read_file(out) == "earlier page");
  const auto dir = std::filesystem::directory_iterator(t.path);
  CHECK(std::distance(std::filesystem::begin(dir), std::filesystem::end(dir)) == 2);  // no temporary left
}

TEST_CASE("report --pd-calibration: the portfolio section and expected loss follow the calibrated PD") {
  TempDir t;
  const auto r = run_firmcall(
      "-q report samples/demo_book.yaml --pd-calibration samples/calibration.yaml --portfolio --top 1000 "
      "--reporting-currency EUR --fx samples/demo_fx.csv "
      "--html '" +
      t.file("r.html") + "'");
  REQUIRE(r.exit_code == 0);
  const std::string html = read_file(t.file("r.html"));
  // The header states the driving PD and the calibration's origin.
  CHECK(html.find("<strong>Driving PD: calibrated one-year PD</strong>") != std::string::npos);
  CHECK(html.find(
            "Calibration samples/calibration.yaml: logistic, 7,621 obligor-years with 186 defaults, as of "
            "2019-12-31 to 2023-12-31") != std::string::npos);
  // portfolio --pd-calibration (the calibrated PD drives by default): VaR and ES of the exact
  // distribution, and each obligor's expected loss PD x LGD x EAD on the calibrated PD.
  const auto pf = run_firmcall(
      "-q portfolio samples/demo_book.yaml --pd-calibration samples/calibration.yaml -f csv "
      "--reporting-currency EUR --fx samples/demo_fx.csv "
      "-o '" +
      t.file("p.csv") + "' --summary-output '" + t.file("s.csv") + "'");
  REQUIRE(pf.exit_code == 0);
  const CsvTable ps = parse_csv_table(read_file(t.file("s.csv")));
  std::size_t levels = 0;
  for (std::size_t i = 0; i < ps.rows.size(); ++i) {
    if (ps.cell(i, "scenario") != "base" || ps.cell(i, "group_by") != "total") continue;
    if (ps.cell(i, "method") == "irb" && ps.cell(i, "measure") == "capital") {
      CHECK(html.find("Basel IRB capital on the calibrated one-year PDs " +
                      fmt("%.2f", ps.number(i, "value"))) != std::string::npos);
    }
    if (ps.cell(i, "method") != "exact_one_factor" ||
        (ps.cell(i, "measure") != "var" && ps.cell(i, "measure") != "es")) {
      continue;
    }
    const std::string level = fmt("%g%%", 100.0 * ps.number(i, "confidence_level"));
    CAPTURE(level);
    const auto cells = table_row(html, "fc-portfolio-levels", level);
    CHECK(cells[ps.cell(i, "measure") == "var" ? 1 : 2] == fmt("%.2f", ps.number(i, "value")));
    ++levels;
  }
  CHECK(levels == 6);
  const CsvTable po = parse_csv_table(read_file(t.file("p.csv")));
  std::size_t obligors = 0;
  for (std::size_t i = 0; i < po.rows.size(); ++i) {
    if (po.cell(i, "status") != "ok") continue;
    const std::string id = po.cell(i, "id");
    const std::string marker =
        html.find("<td>" + id + "</td>", html.find("fc-names-weak")) < html.find("fc-names-strong")
            ? "fc-names-weak"
            : "fc-names-strong";
    const auto cells = table_row(html, marker, id);
    REQUIRE(cells.size() == 16);  // the last: the obligor's currency
    CAPTURE(id);
    // EL = PD_T LGD EAD with PD_T = 1 - (1 - PD1)^T (constant annual default intensity, from memory).
    const double pd_t = -std::expm1(po.number(i, "horizon") * std::log1p(-po.number(i, "pd_calibrated")));
    CHECK(std::fabs(pd_t - po.number(i, "pd_driving")) <= 1e-15);
    // The name table is in the obligor's currency, the portfolio in EUR: EL / fx_rate.
    CHECK(cells[14] == table_amount(po.number(i, "expected_loss") / po.number(i, "fx_rate")));
    CHECK(cells[15] == po.cell(i, "currency"));
    CHECK(cells[7] == table_pd(po.number(i, "pd_calibrated")));
    CHECK(cells[6] == table_pd(po.number(i, "pd")));
    ++obligors;
  }
  CHECK(obligors == 36);
  // --driving-pd model: the grades and the portfolio are those of a run without a calibration.
  const auto m = run_firmcall(
      "-q report samples/demo_book.yaml --pd-calibration samples/calibration.yaml --driving-pd model "
      "--portfolio --reporting-currency EUR --fx samples/demo_fx.csv "
      "--html '" +
      t.file("m.html") + "'");
  REQUIRE(m.exit_code == 0);
  const auto plain = run_firmcall(
      "-q report samples/demo_book.yaml --portfolio --reporting-currency EUR --fx samples/demo_fx.csv --html "
      "'" +
      t.file("n.html") + "'");
  REQUIRE(plain.exit_code == 0);
  const std::string model = read_file(t.file("m.html")), none = read_file(t.file("n.html"));
  CHECK(model.find("<strong>Driving PD: model PD (Merton)</strong>") != std::string::npos);
  CHECK(none.find("Driving PD") == std::string::npos);
  const auto section = [](const std::string& page, const std::string& id) {
    const std::size_t p = page.find("<section id=\"" + id + "\"");
    return page.substr(p, page.find("</section>", p) - p);
  };
  CHECK(section(model, "portfolio") == section(none, "portfolio"));
  CHECK(section(model, "summary") == section(none, "summary"));
}

TEST_CASE("report --validate-against: the migration matrix and PSI equal validate --against") {
  TempDir t;
  // An earlier sample: the first 500 rows of the outcomes file with every PD halved.
  const CsvTable now = parse_csv_table(read_file(std::string(FIRMCALL_SOURCE_DIR) + "/samples/outcomes.csv"));
  std::string earlier = "id,pd,defaulted\n";
  for (std::size_t i = 0; i < 500; ++i) {
    earlier += now.cell(i, "id") + "," + fmt("%.17g", 0.5 * now.number(i, "pd")) + "," +
               now.cell(i, "defaulted") + "\n";
  }
  const std::string path = t.write("earlier.csv", earlier);
  const auto r =
      run_firmcall("-q report samples/demo_book.yaml --validate samples/outcomes.csv --validate-against '" +
                   path + "' --html '" + t.file("r.html") + "'");
  REQUIRE(r.exit_code == 0);
  const std::string html = read_file(t.file("r.html"));
  const auto v = run_firmcall("-q validate samples/outcomes.csv --against '" + path + "' -f csv");
  REQUIRE(v.exit_code == 0);
  const CsvTable vc = parse_csv_table(v.out);
  for (std::size_t i = 0; i < vc.rows.size(); ++i) {
    if (vc.cell(i, "statistic") == "psi") {
      CHECK(html.find("Population stability index " + fmt("%.4f", vc.number(i, "value"))) !=
            std::string::npos);
    }
    if (vc.cell(i, "statistic") == "matched") CHECK(vc.number(i, "value") == 500.0);
  }
  CHECK(html.find(" 500 obligors in both samples (matched on id)") != std::string::npos);
  // Halving a PD moves an obligor at most one or two grades up the master scale; the matrix rows
  // add up to the 500 matched obligors (counted by hand from the table).
  const std::size_t table = html.find("<table class=\"fc-table fc-migration\">");
  REQUIRE(table != std::string::npos);
  std::size_t total = 0;
  const std::size_t end = html.find("</table>", table);
  for (std::size_t p = html.find("<tr><td>", table); p < end; p = html.find("<tr><td>", p + 1)) {
    const std::size_t last = html.rfind("<td class=\"fc-num\">", html.find("</tr>", p)) + 19;
    total += std::stoul(html.substr(last, html.find("</td>", last) - last));
  }
  CHECK(total == 500);
}

TEST_CASE("svg writer: exact lines carry their values, interval charts their figures") {
  firmcall::SvgPlot plot({.label = "x", .min = 0, .max = 1}, {.label = "y", .min = 0, .max = 2}, "t", 600.0,
                         300.0);
  plot.exact_line({0.0, 0.25, 1.0}, {0.0, 0.1, 2.0}, "fc-s1", "curve");
  const std::string svg = plot.str();
  CHECK(svg.find("points=\"0,0 0.25,0.1 1,2\"") != std::string::npos);
  // matrix(a 0 0 d e f) maps (x, y) to (a x + e, d y + f): the plot's own px and py.
  const std::size_t m = svg.find("transform=\"matrix(");
  REQUIRE(m != std::string::npos);
  double a = 0, b = 0, c = 0, d = 0, e = 0, f = 0;
  REQUIRE(std::sscanf(svg.c_str() + m + 18, "%lf %lf %lf %lf %lf %lf", &a, &b, &c, &d, &e, &f) == 6);
  CHECK(b == 0.0);
  CHECK(c == 0.0);
  for (const double x : {0.0, 0.3, 1.0}) CHECK(a * x + e == doctest::Approx(plot.px(x)).epsilon(1e-12));
  for (const double y : {0.0, 0.7, 2.0}) CHECK(d * y + f == doctest::Approx(plot.py(y)).epsilon(1e-12));
  // A log axis has no affine map: nothing is drawn.
  firmcall::SvgPlot logp({.label = "x", .min = 0, .max = 1},
                         {.label = "y", .min = 1e-4, .max = 1, .log = true}, "t");
  logp.exact_line({0.0, 1.0}, {0.001, 0.1}, "fc-s1", "curve");
  CHECK(logp.str().find("<polyline") == std::string::npos);

  const std::string chart = firmcall::svg_interval_chart(
      {"A", "B&C"}, {{0.01, 0.02, 0.005, 0.05, "first"}, {0.2, 0.0, 0.0, 0.3, "second"}}, "grade",
      {.label = "rate", .min = 1e-4, .max = 1, .log = true, .format = firmcall::TickFormat::percent}, "title",
      "mean PD", "observed");
  CHECK(chart.find("<g class=\"fc-interval-mark\" data-category=\"A\" data-predicted=\"0.01\" "
                   "data-observed=\"0.02\" data-lower=\"0.005\" "
                   "data-upper=\"0.05\">") != std::string::npos);
  CHECK(chart.find("data-category=\"B&amp;C\"") != std::string::npos);
  CHECK(chart.find("<title>second</title>") != std::string::npos);
  CHECK(chart.find("class=\"fc-whisker\"") != std::string::npos);
  CHECK(chart.find("mean PD") != std::string::npos);
}

TEST_CASE("svg writer: escaping, ticks, labels and number formats") {
  using firmcall::SvgAxis;
  using firmcall::TickFormat;
  CHECK(firmcall::xml_escape("a&b<c>\"d'e") == "a&amp;b&lt;c&gt;&quot;d&#39;e");
  CHECK(firmcall::xml_escape(std::string("x\x01y")) == "x\xEF\xBF\xBDy");  // XML 1.0 forbids U+0001
  // Nice steps of 1, 2, 2.5 or 5 times a power of ten (common practice for chart axes).
  CHECK(firmcall::axis_ticks(SvgAxis{"", 0.0, 10.0, false, TickFormat::plain}, 5) ==
        std::vector<double>{0, 2, 4, 6, 8, 10});
  CHECK(firmcall::axis_ticks(SvgAxis{"", 0.0, 1.0, false, TickFormat::plain}, 4) ==
        std::vector<double>{0, 0.25, 0.5, 0.75, 1.0});
  CHECK(firmcall::axis_ticks(SvgAxis{"", 1e-6, 1.0, true, TickFormat::percent}, 7).size() == 7);
  CHECK(firmcall::tick_label(0.05, TickFormat::percent, 0.01) == "5%");
  CHECK(firmcall::tick_label(1e-4, TickFormat::percent, 1e-4) == "0.01%");  // a log axis tick
  CHECK(firmcall::tick_label(12500, TickFormat::amount, 2500) == "12,500");
  CHECK(firmcall::tick_label(0.25, TickFormat::plain, 0.25) == "0.25");
  CHECK(firmcall::group_thousands(1234567.5, 2) == "1,234,567.50");
  CHECK(firmcall::group_thousands(-999.5, 0) == "-1,000");  // printf rounds half to even: 999.5 -> 1000
  CHECK(firmcall::report_pd(0.0009270) == "0.0927%");
  CHECK(firmcall::report_pd(9.27e-7) == "9.27e-05%");
  CHECK(firmcall::report_spread_bp(172.9249) == "172.92");
  CHECK(firmcall::report_spread_bp(3.17e-4) == "3.17e-04");
  // Amounts below 1 keep three significant digits (C's %#.3g, and %.2e below 0.001, as the
  // spreads); 1 and above two decimals with thousands separators (common practice).
  CHECK(firmcall::report_amount(2.18e-4) == "2.18e-04");
  CHECK(firmcall::report_amount(0.0123) == "0.0123");
  CHECK(firmcall::report_amount(0.5) == "0.500");
  CHECK(firmcall::report_amount(-0.00042) == "-4.20e-04");
  CHECK(firmcall::report_amount(0.0) == "0.00");
  CHECK(firmcall::report_amount(1307.5) == "1,307.50");
  SvgAxis x{"leverage DP/V (ratio)", 0.0, 1.0, false, TickFormat::plain};
  SvgAxis y{"DD <sd>", 0.0, 8.0, false, TickFormat::plain};
  firmcall::SvgPlot plot(x, y, "A & B");
  CHECK(plot.px(0.0) < plot.px(1.0));
  CHECK(plot.py(0.0) > plot.py(8.0));  // SVG y grows downwards
  plot.point(0.5, 4.0, "fc-dot", "tip <1>", "ID&1");
  const std::string svg = plot.str();
  CHECK(svg.rfind("<svg class=\"fc-chart\"", 0) == 0);
  CHECK(svg.find("<title>A &amp; B</title>") != std::string::npos);
  CHECK(svg.find("DD &lt;sd&gt;") != std::string::npos);
  CHECK(svg.find(">ID&amp;1</text>") != std::string::npos);
  CHECK(svg.find("tip &lt;1&gt;") != std::string::npos);
}

TEST_CASE("ReportOptions::validate: a book is enough; each rule of the sections caught") {
  firmcall::ReportOptions o;
  auto problem = o.validate();  // no book
  REQUIRE(problem.has_value());
  CHECK(problem->field == "book_path");
  CHECK(problem->constraint == "must name the book");

  o.book_path = "samples/demo_book.yaml";
  CHECK_FALSE(o.validate().has_value());
  o.threads = 0;  // read as one thread
  o.term_ids = {"GOR-33", "BEL-28"};
  CHECK_FALSE(o.validate().has_value());

  o.term_ids = {"GOR-33", "BEL-28", "GOR-33"};
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "term_ids");
  CHECK(problem->value == "GOR-33");
  CHECK(problem->constraint == "must not name an obligor twice");
  o.term_ids.pop_back();
  o.sheet_ids = {"ALD-01", "GOR-33", "ALD-01"};
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "sheet_ids");
  CHECK(problem->value == "ALD-01");
  CHECK(problem->constraint == "must not name an obligor twice");
  o.sheet_ids.pop_back();
  CHECK_FALSE(o.validate().has_value());

  o.correlation_path = "samples/sector_correlations.yaml";
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "correlation_path");
  CHECK(problem->constraint == "applies to the portfolio section: needs portfolio");
  o.portfolio = true;
  CHECK_FALSE(o.validate().has_value());

  o.store_run = "3";
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "store_run");
  CHECK(problem->constraint == "applies to the monitoring section: needs store_path");
  o.store_run.clear();
  o.against = "2026-11-06";
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "against");
  CHECK(problem->value == "2026-11-06");
  CHECK(problem->constraint == "applies to the monitoring section: needs store_path");
  o.store_path = "weekly.sqlite";
  o.store_run = "3";
  CHECK_FALSE(o.validate().has_value());
  o.validation_against_path = "earlier.csv";
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "validation_against_path");
  CHECK(problem->constraint == "applies to the validation section: needs validation_path");
  o.validation_path = "outcomes.csv";
  CHECK_FALSE(o.validate().has_value());
  o.driving_pd = firmcall::DrivingPd::calibrated;
  problem = o.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "driving_pd");
  o.pd_calibration_path = "calibration.yaml";
  CHECK_FALSE(o.validate().has_value());
}
