// Tests of the streamed CSV reader's record handling: over-long records (quoted ones with line
// breaks included), stray quotes and a last row without a line break.
#include <doctest/doctest.h>

#include <cstdio>
#include <string>

#include "firmcall/engine/score_book.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/obligor_io.hpp"

using namespace firmcall;

namespace {
const char* const kHeader = "id,name,market_cap,equity_vol,default_point,rate\n";

std::string valid_row(const std::string& id) {
  return id + ",Cedar Holdings,100,0.3,50,0.02\n";
}

// Scores `csv` as a streamed file; the output is CSV.
ScoreSummary stream(const std::string& csv, std::string& out, unsigned threads = 1,
                    std::size_t chunk_bytes = std::size_t{1} << 18) {
  std::FILE* f = ::fmemopen(const_cast<char*>(csv.data()), csv.size(), "r");
  REQUIRE(f != nullptr);
  ScoreBookOptions run;
  run.threads = threads;
  run.chunk_bytes = chunk_bytes;
  const ScoreSummary s =
      score_csv_stream(f, "s.csv", ScoreSettings{}, run, [&](std::string_view t) { out += t; });
  std::fclose(f);
  return s;
}

// A quoted cell of `lines` lines of 99 letters each (about 100 bytes a line).
std::string quoted_lines(std::size_t lines) {
  std::string s = "\"";
  for (std::size_t i = 0; i < lines; ++i) s += std::string(99, 'x') + "\n";
  s += "\"";
  return s;
}
}  // namespace

TEST_CASE("streaming: an over-long quoted field with line breaks is skipped whole") {
  // 60,000 lines of 100 bytes: 6 MB inside quotes, past the 4 MiB limit. Before the fix the
  // reader resumed inside the field and its closing quote opened a field that never closed.
  const std::size_t inner_lines = 60000;
  const std::string csv = std::string(kHeader) + valid_row("A") + "B," + quoted_lines(inner_lines) +
                          ",100,0.3,50,0.02\n" + valid_row("C") + valid_row("D");
  for (unsigned threads : {1U, 3U}) {
    CAPTURE(threads);
    std::string out;
    const ScoreSummary s = stream(csv, out, threads);
    CHECK(s.total == 4);
    CHECK(s.scored == 3);
    CHECK(s.invalid == 1);
    REQUIRE(s.problems.size() == 1);
    CHECK(s.problems[0] == "s.csv:3: obligor '?': " + record_too_long_problem());
    CHECK(out.find("\nC,Cedar Holdings,ok,") != std::string::npos);
    CHECK(out.find("\nD,Cedar Holdings,ok,") != std::string::npos);
  }
}

TEST_CASE("streaming: the row limit is exact even when a chunk is larger than the limit") {
  // With 8 MiB chunks a 4 MiB + 100 byte row arrives whole inside one chunk.
  const std::string long_name(kMaxCsvRecordBytes + 100, 'n');
  const std::string csv =
      std::string(kHeader) + valid_row("A") + "B," + long_name + ",100,0.3,50,0.02\n" + valid_row("C");
  std::string out;
  const ScoreSummary s = stream(csv, out, 1, std::size_t{8} << 20);
  CHECK(s.total == 3);
  CHECK(s.invalid == 1);
  REQUIRE(s.problems.size() == 1);
  CHECK(s.problems[0] == "s.csv:3: obligor '?': " + record_too_long_problem());
}

TEST_CASE("whole-book reading applies the same row limit as streaming") {
  // stress, portfolio, report and score --horizons read the book whole (parse_csv_book).
  const std::string long_name(kMaxCsvRecordBytes + 1, 'n');
  const std::string csv =
      std::string(kHeader) + valid_row("A") + "B," + long_name + ",100,0.3,50,0.02\n" + valid_row("C");
  const Book book = parse_csv_book(csv, "b.csv");
  REQUIRE(book.obligors.size() == 3);
  CHECK(book.obligors[0].read_error.empty());
  CHECK(book.obligors[1].read_error == record_too_long_problem());
  CHECK(book.obligors[1].line == 3);
  CHECK(book.obligors[2].read_error.empty());
  CHECK(book.obligors[2].line == 4);
  // A quoted over-long field with line breaks: skipped whole, the next row keeps its line.
  const std::string quoted =
      std::string(kHeader) + "B," + quoted_lines(45000) + ",100,0.3,50,0.02\n" + valid_row("C");
  const Book q = parse_csv_book(quoted, "q.csv");
  REQUIRE(q.obligors.size() == 2);
  CHECK(q.obligors[0].read_error == record_too_long_problem());
  CHECK(q.obligors[1].get(TextField::id) == "C");
  CHECK(q.obligors[1].line == 2 + 45000 + 1);
}

TEST_CASE("streaming: a stray quote refuses the row, naming the field") {
  const std::string csv = std::string(kHeader) + "A,Bir\"ch\",100,0.3,50,0.02\n" +
                          "B,\"Bir\"ch\",100,0.3,50,0.02\n" + valid_row("C");
  std::string out;
  const ScoreSummary s = stream(csv, out);
  CHECK(s.total == 3);
  CHECK(s.invalid == 2);
  REQUIRE(s.problems.size() == 2);
  CHECK(s.problems[0] == "s.csv:2: obligor 'A': " + stray_quote_problem("name", "Bir\"ch\""));
  CHECK(s.problems[1] == "s.csv:3: obligor 'B': " + stray_quote_problem("name", "\"Bir\"ch\""));
}

TEST_CASE("streaming: a last row without a line break is read, with a note") {
  std::string out;
  const ScoreSummary s = stream(std::string(kHeader) + valid_row("A") + "B,Cedar,100,0.3,50,0.0", out);
  CHECK(s.total == 2);
  CHECK(s.scored == 2);
  REQUIRE(s.notes.size() == 1);
  CHECK(s.notes[0] == "s.csv:3: " + no_final_line_break_note());
  std::string out2;
  const ScoreSummary ended = stream(std::string(kHeader) + valid_row("A"), out2);
  CHECK(ended.notes.empty());
}

TEST_CASE("record ends follow the reader's quote grammar: a stray quote opens nothing") {
  // RFC 4180, section 2: only a field that starts with '"' is quoted.
  // Whole texts of complete records end at their last byte; an open quote ends nothing.
  for (const std::string whole :
       {"A,O\"Brien,1\nB,2\n", "A,\"Bir\"ch\",1\nB,2\n", "A,\"say \"\"hi\"\"\n\",1\n"}) {
    CAPTURE(whole);
    CHECK(last_record_end(whole) == whole.size());
  }
  const std::string first = "A,\"x\ny\",1\n";
  CHECK(last_record_end(first + "B,\"open\n") == first.size());
  std::size_t lines = 0;
  CsvScanState scan;
  CHECK(scan.find_record_end("\"a\nb", lines) == std::string_view::npos);
  CHECK(scan.find_record_end("c\",1\nnext\n", lines) == 5);
  CHECK(lines == 2);
}

TEST_CASE("streaming: one stray quote in a large file costs its row only") {
  // More than 4 MiB after the stray quote: the old quote toggling cut no record end after it.
  std::string csv = std::string(kHeader) + "A,O\"Brien,100,0.3,50,0.02\n";
  const std::size_t rows = 150000;
  for (std::size_t i = 0; i < rows; ++i) {
    csv += 'C';
    csv += std::to_string(i);
    csv += ",Cedar Holdings,100,0.3,50,0.02\n";
  }
  REQUIRE(csv.size() > kMaxCsvRecordBytes);
  std::string out;
  const ScoreSummary s = stream(csv, out);
  CHECK(s.total == rows + 1);
  CHECK(s.scored == rows);
  REQUIRE(s.problems.size() == 1);
  CHECK(s.problems[0] == "s.csv:2: obligor 'A': " + stray_quote_problem("name", "O\"Brien"));
}
