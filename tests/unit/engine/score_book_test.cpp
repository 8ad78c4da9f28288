// Tests of the scoring engine: streaming, chunking and threads change nothing; the streamed,
// threaded results agree with the independent long-double reference.
#include <doctest/doctest.h>

#include <cstdio>
#include <stdexcept>
#include <string>

#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "reference_solver.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {
// A CSV book from generated obligors (DP given directly), with a few bad rows mixed in.
std::string generated_csv(std::size_t n, std::uint64_t seed) {
  std::string s = "id,name,market_cap,equity_vol,default_point,rate,horizon,drift\n";
  const auto book = testing::generated_obligors(n, seed);
  for (std::size_t i = 0; i < book.size(); ++i) {
    const MertonInputs& in = book[i];
    const std::string num = std::to_string(i);
    s += 'G';
    s += num;
    s += ",\"Gen, ";
    s += num;
    s += "\",";
    append_number(s, in.equity_value);
    s += ',';
    append_number(s, in.equity_vol_annual);
    s += ',';
    append_number(s, in.default_point);
    s += ',';
    append_number(s, in.risk_free_rate_cc);
    s += ',';
    append_number(s, in.horizon_years);
    s += ',';
    append_number(s, in.drift_annual);
    s += '\n';
    if (i % 97 == 5) {
      s += "BAD";
      s += num;
      s += ",bad,-1,0.3,1,0.01,1,0.01\n";
    }
  }
  return s;
}

std::string score_text(const std::string& csv, OutputFormat fmt, unsigned threads, std::size_t chunk,
                       ScoreSummary* summary = nullptr) {
  std::FILE* f = ::fmemopen(const_cast<char*>(csv.data()), csv.size(), "r");
  REQUIRE(f != nullptr);
  std::string out;
  ScoreBookOptions run;
  run.format = fmt;
  run.threads = threads;
  run.chunk_bytes = chunk;
  const ScoreSummary s =
      score_csv_stream(f, "gen.csv", ScoreSettings{}, run, [&](std::string_view t) { out += t; });
  std::fclose(f);
  if (summary) *summary = s;
  return out;
}
}  // namespace

TEST_CASE("streaming output does not depend on chunk size or thread count") {
  const std::string csv = generated_csv(1500, 99);
  for (OutputFormat fmt : {OutputFormat::csv, OutputFormat::json, OutputFormat::table}) {
    const std::string ref = score_text(csv, fmt, 1, 4 << 20);
    CHECK(score_text(csv, fmt, 2, 4 << 20) == ref);
    CHECK(score_text(csv, fmt, 3, 1000) == ref);
    CHECK(score_text(csv, fmt, 2, 64) == ref);
  }
  // The in-memory path (used for YAML books) writes the same bytes.
  const Book book = parse_csv_book(csv, "gen.csv");
  std::string mem;
  ScoreBookOptions run;
  run.threads = 2;
  score_book(book, ScoreSettings{}, run, [&](std::string_view t) { mem += t; });
  CHECK(mem == score_text(csv, OutputFormat::csv, 1, 4 << 20));
}

TEST_CASE("streamed, threaded results agree with the long-double reference (cross-check, 1,500 obligors)") {
  const std::string csv = generated_csv(1500, 7);
  ScoreSummary summary;
  const std::string out = score_text(csv, OutputFormat::csv, 2, 4096, &summary);
  const auto rows = testing::split_simple_csv(out);
  // Names hold a quoted comma, so read from the right: id is first, numbers are fixed offsets.
  const auto book = testing::generated_obligors(1500, 7);
  std::size_t checked = 0;
  double worst = 0.0;
  for (std::size_t r = 1; r < rows.size(); ++r) {
    const auto& cells = rows[r];
    if (cells[0].rfind("BAD", 0) == 0) {
      CHECK(cells[2] == "invalid_input");  // name "bad" has no comma
      continue;
    }
    const std::size_t i = std::stoul(cells[0].substr(1));
    REQUIRE(cells[3] == "ok");             // id, "Gen, i" (two cells), status
    const double v = std::stod(cells[6]);  // asset_value, after id, name (two cells), status, E, DP
    const double sv = std::stod(cells[7]);
    const MertonInputs& in = book[i];
    const auto ref = testing::reference_solve(in.equity_value, in.equity_vol_annual, in.default_point,
                                              in.risk_free_rate_cc, in.horizon_years);
    const double e = std::max(std::fabs(static_cast<double>((v - ref.asset_value) / ref.asset_value)),
                              std::fabs(static_cast<double>((sv - ref.asset_vol) / ref.asset_vol)));
    worst = std::max(worst, e);
    CHECK(e <= 1e-9);
    ++checked;
  }
  MESSAGE("streamed threaded path: " << checked << " obligors, worst relative error vs reference " << worst);
  CHECK(checked == 1500);
  CHECK(summary.scored == 1500);
  CHECK(summary.invalid == 16);  // i % 97 == 5 for i < 1500
  CHECK(summary.total == 1516);
}

TEST_CASE("duplicate ids are caught across chunk boundaries") {
  std::string csv = "id,market_cap,equity_vol,default_point,rate\n";
  for (int i = 0; i < 300; ++i) {
    csv += 'X';
    csv += std::to_string(i % 250);
    csv += ",100,0.3,50,0.02\n";
  }
  ScoreSummary summary;
  score_text(csv, OutputFormat::csv, 2, 128, &summary);
  CHECK(summary.invalid == 50);
  CHECK(summary.scored == 250);
  REQUIRE(!summary.problems.empty());
  CHECK(summary.problems[0] == "gen.csv:252: obligor 'X0': field 'id': duplicate of the obligor at line 2");
}

TEST_CASE("a duplicate row is written as invalid in place, and the problems stay in input order") {
  // Rows 2..5 are fine, row 6 repeats row 3's id, row 7 is a bad value: with two threads and small
  // chunks the duplicate is found while its chunk is written, after it was scored as fine.
  const std::string csv =
      "id,market_cap,equity_vol,default_point,rate\n"
      "A,100,0.3,50,0.02\nB,100,0.3,50,0.02\nC,100,0.3,50,0.02\nD,100,0.3,50,0.02\n"
      "B,100,0.3,50,0.02\nE,-5,0.3,50,0.02\nF,100,0.3,50,0.02\n";
  for (std::size_t chunk : {16, 40, 4096}) {
    CAPTURE(chunk);
    ScoreSummary summary;
    const std::string out = score_text(csv, OutputFormat::csv, 2, chunk, &summary);
    const auto rows = testing::split_simple_csv(out);
    REQUIRE(rows.size() == 8);
    CHECK(rows[5][0] == "B");
    CHECK(rows[5][2] == "invalid_input");
    REQUIRE(rows[5].size() >= 2);  // message, then currency (empty: the book gives none)
    CHECK(rows[5][rows[5].size() - 2] == "line 6: field 'id': duplicate of the obligor at line 3");
    CHECK(rows[2][2] == "ok");
    CHECK(summary.scored == 5);
    CHECK(summary.invalid == 2);
    REQUIRE(summary.problems.size() == 2);
    CHECK(summary.problems[0].rfind("gen.csv:6: obligor 'B'", 0) == 0);
    CHECK(summary.problems[1].rfind("gen.csv:7: obligor 'E'", 0) == 0);
    CHECK(out == score_text(csv, OutputFormat::csv, 1, 4096));
  }
}

TEST_CASE("a write error stops the streamed run with the error, whatever the threads are doing") {
  const std::string csv = generated_csv(3000, 11);
  for (unsigned threads : {1U, 2U, 4U}) {
    CAPTURE(threads);
    std::FILE* f = ::fmemopen(const_cast<char*>(csv.data()), csv.size(), "r");
    REQUIRE(f != nullptr);
    ScoreBookOptions run;
    run.threads = threads;
    run.chunk_bytes = 2048;
    int writes = 0;
    const TextSink failing = [&](std::string_view) {
      if (++writes == 5) throw std::runtime_error("disk full");
    };
    CHECK_THROWS_WITH(score_csv_stream(f, "gen.csv", ScoreSettings{}, run, failing), "disk full");
    std::fclose(f);
  }
}
