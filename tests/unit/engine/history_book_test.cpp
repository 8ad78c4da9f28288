// Tests of the history run (src/history_run.cpp): joining book, equity history and balance
// sheets, per-obligor failures, output formats and the daily series.
#include "firmcall/engine/history_book.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <string>
#include <vector>

#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/csv.hpp"
#include "simulated_history.hpp"

using namespace firmcall;
using firmcall::testing::simulate;
using firmcall::testing::SimulatedHistory;

namespace {

constexpr std::int32_t kFirstDay = 20455;  // 2026-01-02

std::string num(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

// Appends rows "date,id,market_cap" for a simulated history, one calendar day apart.
void append_rows(std::string& text, const std::string& id, const SimulatedHistory& s) {
  for (std::size_t i = 0; i < s.equity_value.size(); ++i) {
    text += format_iso_date(kFirstDay + s.day[i]) + "," + id + "," + num(s.equity_value[i]) + "\n";
  }
}

// A parsed CSV output: header names to cells, one map per row.
std::vector<std::map<std::string, std::string>> parse_output(const std::string& text) {
  std::vector<std::map<std::string, std::string>> rows;
  std::vector<std::string_view> fields;
  std::string scratch;
  bool open = false;
  std::string_view rest(text);
  std::size_t used = split_csv_record(rest, fields, scratch, open);
  const std::vector<std::string> header(fields.begin(), fields.end());
  rest.remove_prefix(used);
  while (!rest.empty()) {
    used = split_csv_record(rest, fields, scratch, open);
    rest.remove_prefix(used);
    REQUIRE(fields.size() == header.size());
    auto& row = rows.emplace_back();
    for (std::size_t i = 0; i < header.size(); ++i) row[header[i]] = std::string(fields[i]);
  }
  return rows;
}

double as_double(const std::string& cell) {
  double v = 0.0;
  REQUIRE(parse_number(cell, v));
  return v;
}

struct Fixture {
  SimulatedHistory a = simulate({.seed = 71, .asset_vol = 0.20, .default_point = 500});
  SimulatedHistory b = simulate({.seed = 72, .asset_vol = 0.35, .default_point = 800});
  Book book;
  EquityHistory prices;
  Fixture(const std::string& extra_rows = "", const std::string& extra_book = "") {
    // default_point 500 for A via the debt rule 250 + 0.5 x 500; B gives default_point directly.
    book = parse_yaml_book(
        "defaults: {rate: 0.03}\n"
        "obligors:\n"
        "  - {id: A, name: Alpha, short_term_debt: 250, long_term_debt: 500}\n"
        "  - {id: B, name: Beta, default_point: 800}\n" +
            extra_book,
        "book.yaml");
    std::string text = "date,id,market_cap\n";
    append_rows(text, "A", a);
    append_rows(text, "B", b);
    text += extra_rows;
    prices = parse_equity_history(text, "prices.csv");
  }
  HistorySources sources() const { return {&book, &prices, nullptr}; }
};

std::string run_to_string(const HistorySources& src, const HistoryBookOptions& run,
                          HistorySummary* summary = nullptr, std::string* series = nullptr,
                          const HistorySettings& settings = {}) {
  std::string out;
  const TextSink series_sink = [series](std::string_view s) { series->append(s); };
  const HistorySummary s = run_history(
      src, ScoreSettings{}, settings, run, [&out](std::string_view t) { out.append(t); },
      series != nullptr ? &series_sink : nullptr);
  if (summary != nullptr) *summary = s;
  return out;
}

}  // namespace

TEST_CASE("history run: each obligor's own history reaches the estimator") {
  // Independent path: the estimator called directly on the simulated arrays. The text round
  // trip prints 17 significant digits, so the numbers must agree to the last bit or so.
  const Fixture f;
  for (HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle, HistoryMethod::naive}) {
    CAPTURE(to_string(m));
    HistoryBookOptions run;
    run.estimator.method = m;
    const auto rows = parse_output(run_to_string(f.sources(), run));
    REQUIRE(rows.size() == 2);
    const SimulatedHistory* sims[] = {&f.a, &f.b};
    for (std::size_t i = 0; i < 2; ++i) {
      const SimulatedHistory& s = *sims[i];
      HistoryWorkspace ws;
      const AssetDynamics direct = estimate_asset_dynamics(
          {s.equity_value, s.default_point, s.day, 0.03, 1.0}, {.method = m}, HistorySettings{}, ws);
      REQUIRE(direct.usable());
      const auto& row = rows[i];
      CHECK(row.at("status") == "ok");
      CHECK(row.at("method") == to_string(m));
      CHECK(row.at("observations") == "253");
      CHECK(row.at("as_of") == format_iso_date(kFirstDay + 252));
      CHECK(as_double(row.at("asset_vol")) == doctest::Approx(direct.asset_vol_annual).epsilon(1e-14));
      CHECK(as_double(row.at("distance_to_default")) ==
            doctest::Approx(direct.distance_to_default).epsilon(1e-12));
      CHECK(as_double(row.at("default_point")) == s.default_point.back());
      CHECK(row.at("message").empty());
      if (m == HistoryMethod::mle) {
        CHECK(as_double(row.at("asset_vol_se")) == doctest::Approx(direct.asset_vol_se).epsilon(1e-9));
        CHECK(as_double(row.at("pd_hi")) > as_double(row.at("pd")));
      } else {
        CHECK(row.at("asset_vol_se").empty());
        CHECK(row.at("dd_lo").empty());
      }
    }
  }
}

TEST_CASE("history run: bad obligors get a message naming file, line and field, and the rest still run") {
  // C: a non-positive value; D: 40 rows (short); E: in the book, not in the history;
  // F: no debt anywhere; G: no rate; X: in the history, not in the book (a note).
  std::string extra;
  for (int i = 0; i < 130; ++i) {
    extra += format_iso_date(kFirstDay + i) + ",C," + (i == 77 ? "0" : std::to_string(100 + i % 7)) + "\n";
  }
  for (int i = 0; i < 40; ++i)
    extra += format_iso_date(kFirstDay + i) + ",D," + std::to_string(100 + i % 5) + "\n";
  for (int i = 0; i < 130; ++i) {
    extra += format_iso_date(kFirstDay + i) + ",F," + std::to_string(100 + i % 7) + "\n";
    extra += format_iso_date(kFirstDay + i) + ",G," + std::to_string(100 + i % 7) + "\n";
    extra += format_iso_date(kFirstDay + i) + ",X," + std::to_string(100 + i % 7) + "\n";
  }
  const Fixture f(extra,
                  "  - {id: C, default_point: 90}\n"
                  "  - {id: D, default_point: 90}\n"
                  "  - {id: E, default_point: 90}\n"
                  "  - {id: F}\n"
                  "  - {id: G, default_point: 90}\n");
  Book book = f.book;
  book.defaults.rate.reset();
  book.obligors[0].set(NumField::rate, 0.03);
  book.obligors[1].set(NumField::rate, 0.03);
  for (std::size_t i = 2; i < 6; ++i) book.obligors[i].set(NumField::rate, 0.03);
  HistorySummary summary;
  HistoryBookOptions run;
  const auto rows = parse_output(run_to_string({&book, &f.prices, nullptr}, run, &summary));
  REQUIRE(rows.size() == 7);
  CHECK(rows[0].at("status") == "ok");
  CHECK(rows[1].at("status") == "ok");
  const std::size_t c_line = 2 + 2 * 253 + 77;  // header, A and B rows, then C's 78th row
  CHECK(rows[2].at("status") == "invalid_input");
  CHECK(rows[2].at("message") == "prices.csv:" + std::to_string(c_line) +
                                     ": obligor 'C': field 'market_cap': must be positive, got '0'");
  CHECK(rows[3].at("message") ==
        "prices.csv: obligor 'D': 40 observations, at least 120 needed (history.min_observations)");
  CHECK(rows[3].at("observations") == "40");  // what is known is still reported
  CHECK(rows[4].at("message") == "prices.csv: obligor 'E': no rows for this obligor in the equity history");
  CHECK(rows[5].at("message") ==
        "book.yaml:8: obligor 'F': the book gives no debt (short_term_debt and long_term_debt, or "
        "default_point)");
  CHECK(rows[6].at("message") ==
        "book.yaml:9: obligor 'G': field 'rate': missing (give a rate, a book default or --rate)");
  CHECK(summary.total == 7);
  CHECK(summary.estimated == 2);
  CHECK(summary.invalid == 5);
  CHECK(summary.problems.size() == 5);
  REQUIRE_FALSE(summary.notes.empty());
  CHECK(summary.notes.back() == "prices.csv: note: 1 obligor not in the book (first 'X') ignored");
}

TEST_CASE("history run: the default point follows the latest balance sheet on or before each day") {
  // Book debt (DP 500) applies before the first sheet; sheets on day 50 (DP 600) and day 120
  // (default_point 700) take over from their dates on.
  const Fixture f;
  const BalanceSheets sheets = parse_balance_sheets(
      "id,as_of,short_term_debt,long_term_debt,default_point\n"
      "A," +
          format_iso_date(kFirstDay + 120) +
          ",,,700\n"
          "A," +
          format_iso_date(kFirstDay + 50) + ",300,600,\n",
      "sheets.csv");
  JoinedHistory j;
  join_history(f.book.obligors[0], {&f.book, &f.prices, &sheets}, ScoreSettings{}, j);
  REQUIRE(j.ok());
  CHECK(j.default_point[49] == 500.0);
  CHECK(j.default_point[50] == 600.0);
  CHECK(j.default_point[119] == 600.0);
  CHECK(j.default_point[120] == 700.0);
  CHECK(j.default_point.back() == 700.0);
  CHECK(j.last_default_point_from_sheet);
  // --default-point-weight applies to sheets too: 300 + 0.25 x 600.
  ScoreSettings w;
  w.weight_override = 0.25;
  join_history(f.book.obligors[0], {&f.book, &f.prices, &sheets}, w, j);
  CHECK(j.default_point[60] == 450.0);

  // Without book debt, days before the first sheet have no default point.
  Book nodebt = parse_yaml_book("defaults: {rate: 0.03}\nobligors:\n  - {id: A}\n", "nodebt.yaml");
  join_history(nodebt.obligors[0], {&nodebt, &f.prices, &sheets}, ScoreSettings{}, j);
  CHECK_FALSE(j.ok());
  CHECK(j.message("A") ==
        "nodebt.yaml:3: obligor 'A': no balance sheet dated on or before 2026-01-02 and the "
        "book gives no debt (short_term_debt and long_term_debt, or default_point)");
  // A bad sheet fails that obligor with the sheet file's line.
  const BalanceSheets bad =
      parse_balance_sheets("id,as_of,short_term_debt,long_term_debt\nA,2026-02-30,1,2\n", "bad.csv");
  join_history(f.book.obligors[0], {&f.book, &f.prices, &bad}, ScoreSettings{}, j);
  CHECK(j.message("A") ==
        "bad.csv:2: obligor 'A': field 'as_of': expected an ISO 8601 date such as 2026-03-31, got "
        "'2026-02-30'");
}

TEST_CASE("history run: rate and horizon precedence") {
  const Fixture f;
  JoinedHistory j;
  join_history(f.book.obligors[0], f.sources(), ScoreSettings{}, j);
  CHECK(j.rate == 0.03);    // book default
  CHECK(j.horizon == 1.0);  // configuration
  ScoreSettings s;
  s.rate_override = 0.05;
  s.horizon_override = 2.0;
  join_history(f.book.obligors[0], f.sources(), s, j);
  CHECK(j.rate == 0.05);
  CHECK(j.horizon == 2.0);
}

TEST_CASE("history run: the daily series ends at the reported last day") {
  const Fixture f;
  HistoryBookOptions run;
  run.estimator.method = HistoryMethod::mle;
  std::string series;
  const auto rows = parse_output(run_to_string(f.sources(), run, nullptr, &series));
  const auto daily = parse_output(series);
  REQUIRE(daily.size() == 2 * 253);
  CHECK(daily.front().at("id") == "A");
  CHECK(daily.front().at("date") == "2026-01-02");
  const auto& last_a = daily[252];
  CHECK(last_a.at("date") == rows[0].at("as_of"));
  CHECK(last_a.at("distance_to_default") == rows[0].at("distance_to_default"));
  CHECK(last_a.at("asset_value") == rows[0].at("asset_value"));
  CHECK(as_double(daily[100].at("asset_value")) == doctest::Approx(f.a.asset_value[100]).epsilon(0.02));
}

TEST_CASE("history run: output is identical whatever the threads and batch size") {
  const Fixture f;
  HistoryBookOptions one;
  one.format = OutputFormat::json;
  HistoryBookOptions many = one;
  many.threads = 3;
  many.batch_obligors = 1;
  std::size_t calls = 0;
  many.progress = [&calls](std::size_t done, std::size_t total) {
    ++calls;
    CHECK(done <= total);
  };
  CHECK(run_to_string(f.sources(), one) == run_to_string(f.sources(), many));
  CHECK(calls == 2);
}

TEST_CASE("history run: no NaN or infinity is ever printed") {
  // A failed estimate (budget of one pass) leaves estimates unknown: empty CSV cells, JSON null.
  const Fixture f;
  HistorySettings tight;
  tight.max_iterations = 1;
  for (OutputFormat fmt : {OutputFormat::csv, OutputFormat::json, OutputFormat::table}) {
    HistoryBookOptions run;
    run.format = fmt;
    HistorySummary summary;
    const std::string out = run_to_string(f.sources(), run, &summary, nullptr, tight);
    CHECK(summary.not_converged == 2);
    CHECK(out.find("nan") == std::string::npos);
    CHECK(out.find("inf") == std::string::npos);
    if (fmt == OutputFormat::json) CHECK(out.find("\"asset_vol\": null") != std::string::npos);
    if (fmt == OutputFormat::csv) {
      const auto rows = parse_output(out);
      CHECK(rows[0].at("status") == "not_converged");
      CHECK(rows[0].at("asset_vol").empty());
      CHECK(rows[0].at("iterations") == "1");
      CHECK(rows[0].at("message").rfind("prices.csv: obligor 'A': iterative: the iteration did not settle "
                                        "within history.max_iterations "
                                        "passes (1; last change in sV ",
                                        0) == 0);
    }
  }
}

TEST_CASE("history run: --score scores with the history's last equity value and volatility") {
  // Independent path: the same book scored by score_book after setting market_cap to the last
  // equity value and equity_vol to estimate_equity_vol's EWMA figure by hand.
  const Fixture f;
  ScoreBookOptions run;
  std::string via_history;
  score_with_history(f.sources(), ScoreSettings{}, HistorySettings{}, VolEstimator::ewma, run,
                     [&](std::string_view s) { via_history.append(s); });
  Book manual = f.book;
  const SimulatedHistory* sims[] = {&f.a, &f.b};
  for (std::size_t i = 0; i < 2; ++i) {
    const SimulatedHistory& s = *sims[i];
    const EquityVolEstimate v =
        estimate_equity_vol({s.equity_value, s.default_point, s.day, 0.03, 1.0}, HistorySettings{});
    manual.obligors[i].set(NumField::market_cap, s.equity_value.back());
    manual.obligors[i].set(NumField::equity_vol, v.ewma_annual);
  }
  std::string direct;
  score_book(manual, ScoreSettings{}, run, [&](std::string_view s) { direct.append(s); });
  CHECK(via_history == direct);
  CHECK(parse_output(direct).at(0).at("status") == "ok");
}

TEST_CASE("HistoryBookOptions::validate: the defaults, and each enumerator checked") {
  HistoryBookOptions run;
  CHECK_FALSE(run.validate().has_value());
  run.threads = 0;  // read as one thread, as run_history always did
  run.batch_obligors = 0;
  CHECK_FALSE(run.validate().has_value());

  HistoryBookOptions bad_method;
  bad_method.estimator.method = static_cast<HistoryMethod>(7);
  auto problem = bad_method.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "estimator.method");
  CHECK(problem->value == "7");
  CHECK(problem->constraint == "must be iterative, mle or naive");

  HistoryBookOptions bad_vol;
  bad_vol.estimator.equity_vol = static_cast<VolEstimator>(2);
  problem = bad_vol.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "estimator.equity_vol");
  CHECK(problem->constraint == "must be simple or ewma");

  HistoryBookOptions bad_format;
  bad_format.format = static_cast<OutputFormat>(3);
  problem = bad_format.validate();
  REQUIRE(problem.has_value());
  CHECK(problem->field == "format");
  CHECK(problem->value == "3");
  CHECK(problem->constraint == "must be table, csv or json");
}

TEST_CASE("history run: every output says which drift DD and PD used") {
  // Independent check of DD: the Merton (1974) formula written out here from the row's own
  // asset_value, default_point, asset_vol, horizon and drift_used; PD = erfc(DD / sqrt 2) / 2.
  const Fixture f;
  for (bool risk_neutral : {false, true}) {
    CAPTURE(risk_neutral);
    HistoryBookOptions run;
    run.estimator.risk_neutral = risk_neutral;
    const auto rows = parse_output(run_to_string(f.sources(), run));
    REQUIRE(rows.size() == 2);
    for (const auto& row : rows) {
      CHECK(row.at("measure") == (risk_neutral ? "risk-neutral" : "physical"));
      const double mu = as_double(row.at("drift"));
      const double used = as_double(row.at("drift_used"));
      if (risk_neutral) {
        CHECK(row.at("drift_source") == "rate");
        CHECK(used == 0.03);
      } else {
        // The rule of history.hpp with the defaults 0.5 and 0.10, written out.
        const double excess = 0.5 * (mu - 0.03);
        CHECK(row.at("drift_source") == (std::fabs(excess) > 0.10 ? "capped" : "shrunk"));
        CHECK(used == doctest::Approx(0.03 + std::clamp(excess, -0.10, 0.10)).epsilon(1e-15));
      }
      const double sv = as_double(row.at("asset_vol"));
      const double t = as_double(row.at("horizon"));
      const double dd = (std::log(as_double(row.at("asset_value")) / as_double(row.at("default_point"))) +
                         (used - 0.5 * sv * sv) * t) /
                        (sv * std::sqrt(t));
      CHECK(as_double(row.at("distance_to_default")) == doctest::Approx(dd).epsilon(1e-12));
      CHECK(as_double(row.at("pd")) == doctest::Approx(0.5 * std::erfc(dd / std::sqrt(2.0))).epsilon(1e-12));
    }
    run.format = OutputFormat::json;
    const std::string json = run_to_string(f.sources(), run);
    CHECK(json.find(risk_neutral
                        ? "\"measure\": \"risk-neutral\", \"drift_shrinkage\": 0.5, \"drift_cap\": 0.1"
                        : "\"measure\": \"physical\", \"drift_shrinkage\": 0.5, \"drift_cap\": 0.1") !=
          std::string::npos);
    CHECK(json.find("\"drift_source\": ") != std::string::npos);
    run.format = OutputFormat::table;
    const std::string table = run_to_string(f.sources(), run);
    CHECK(table.find(risk_neutral
                         ? "measure: risk-neutral; drift in DD: the rate\n"
                         : "measure: physical; drift in DD: the estimate shrunk 50% towards the rate, "
                           "capped at rate +- 10% (* the cap bound)\n") != std::string::npos);
    CHECK(table.find("drift used %") != std::string::npos);
  }
}
