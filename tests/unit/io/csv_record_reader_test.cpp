// Tests of CsvRecordReader (src/io/csv.cpp), the record loop of the default-history, outcomes and
// default-dates readers.
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/book/grades.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/outcomes_io.hpp"
#include "firmcall/monitor/store_outcomes.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {

struct Seen {
  std::size_t line;
  std::vector<std::string> fields;
  bool operator==(const Seen&) const = default;
};

std::vector<Seen> read_all(CsvRecordReader& records) {
  std::vector<Seen> out;
  while (records.next()) {
    Seen s{records.line(), {}};
    for (std::string_view f : records.fields()) s.fields.emplace_back(f);
    out.push_back(std::move(s));
  }
  return out;
}

// A byte-order mark, CRLF and LF line ends, a blank line, a quoted line break and "" (RFC 4180),
// and a last row without a line break.
const std::string kText = "\xEF\xBB\xBFid,note\r\nA,plain\n\n   \nB,\"two\nlines, \"\"quoted\"\"\"\nC,end";

}  // namespace

TEST_CASE("csv records: byte-order mark, blank lines, quoted line breaks and line numbers") {
  const std::string origin = "r.csv";
  CsvRecordReader records(origin);
  records.start(kText);
  const std::vector<Seen> seen = read_all(records);
  // Lines counted by hand: the quoted cell of B spans lines 5 and 6, C is on line 7.
  const std::vector<Seen> want = {
      {1, {"id", "note"}}, {2, {"A", "plain"}}, {5, {"B", "two\nlines, \"quoted\""}}, {7, {"C", "end"}}};
  CHECK(seen == want);
  CHECK(records.ended_without_line_break());
  CHECK(records.consumed() == kText.size());
  CHECK(records.next_line() == 7);

  const std::string ended = kText + "\n";  // the reader keeps a view: the text must outlive it
  records.start(ended);
  read_all(records);
  CHECK_FALSE(records.ended_without_line_break());
}

TEST_CASE("csv records: blocks cut anywhere read the same records as the whole text") {
  const std::string origin = "r.csv";
  CsvRecordReader whole(origin);
  whole.start(kText);
  const std::vector<Seen> want = read_all(whole);
  for (std::size_t block = 1; block <= kText.size(); ++block) {
    CAPTURE(block);
    CsvRecordReader records(origin);
    std::vector<Seen> seen;
    std::string buffer;
    std::size_t line = 1, at = 0;
    while (true) {  // as a streaming reader does: read a block, keep what is not consumed
      buffer.append(kText, at, block);
      at += block;
      const bool at_end = at >= kText.size();
      records.start(buffer, line, at_end);
      for (const Seen& s : read_all(records)) seen.push_back(s);
      line = records.next_line();
      buffer.erase(0, records.consumed());
      if (at_end) break;
    }
    CHECK(seen == want);
  }
}

TEST_CASE("csv records: an open quote names file and line, a long record is flagged") {
  const std::string origin = "r.csv";
  CsvRecordReader records(origin);
  records.start("id\nA\n\"B,\nC\n");
  CHECK(records.next());
  CHECK(records.next());
  CHECK_THROWS_WITH_AS(records.next(), "r.csv:3: a quoted field is never closed", InputError);

  CsvRecordReader limited(origin, 6);
  limited.start("id\n12345\n123456\n");
  REQUIRE(limited.next());
  CHECK_FALSE(limited.too_long());
  REQUIRE(limited.next());
  CHECK_FALSE(limited.too_long());  // 6 bytes with its line end
  REQUIRE(limited.next());
  CHECK(limited.too_long());

  // Only the start of a file has a byte-order mark.
  records.start("\xEF\xBB\xBFx\n", 4);
  REQUIRE(records.next());
  CHECK(records.fields()[0] == "\xEF\xBB\xBFx");
  CHECK(records.line() == 4);
}

TEST_CASE("csv records: the outcomes and default-dates readers built on it") {
  const GradeScale scale = default_grade_scale();
  // A byte-order mark and blank lines are skipped; a quote left open is named with its line.
  const OutcomeSample s =
      parse_outcomes("\xEF\xBB\xBFid,pd,defaulted\n\nA,0.01,1\n  \nB,0.02,0\n", "o.csv", {}, scale);
  CHECK(s.pd == std::vector<double>{0.01, 0.02});
  CHECK_THROWS_WITH_AS(parse_outcomes("id,pd,defaulted\nA,0.01,1\n\n\"B,0.02,0\n", "o.csv", {}, scale),
                       "o.csv:4: a quoted field is never closed", InputError);
  const DefaultDates d = parse_default_dates("\xEF\xBB\xBFid,default_date\n\nA,2022-03-31\n", "d.csv");
  REQUIRE(d.day_of.count("A") == 1);
  CHECK(d.day_of.at("A") == 19082);  // days from 1970-01-01 to 2022-03-31 (Python's datetime.date)
  CHECK_THROWS_WITH_AS(parse_default_dates("id,default_date\n\"A,2022-03-31\n", "d.csv"),
                       "d.csv:2: a quoted field is never closed", InputError);

  // The file reader streams 1 MiB blocks: line numbers run on across them, and a quoted cell
  // with a line break may straddle a block's end.
  firmcall::testing::TempDir dir;
  std::string text = "\xEF\xBB\xBFid,pd,defaulted,grade\n";
  std::size_t rows = 0;
  while (text.size() < (std::size_t{3} << 20)) {
    text += 'O';
    text += std::to_string(rows);
    text += rows % 2 ? ",0.01,1,\"G\n" : ",0.01,0,\"G\n";
    text += std::to_string(rows % 7);
    text += "\"\n";
    std::to_string(rows % 7) + "\"\n";
    ++rows;
  }
  const std::string path = dir.write("o.csv", text + "X,0.01,2,G\n");
  // Each row takes two lines: the bad one is on line 2 + 2 x rows.
  CHECK_THROWS_WITH_AS(
      load_outcomes(path, {}, scale),
      (path + ":" + std::to_string(2 + 2 * rows) + ": field 'defaulted': expected 0 or 1, got '2'").c_str(),
      InputError);
  const OutcomeSample big = load_outcomes(dir.write("p.csv", text), {}, scale);
  CHECK(big.pd.size() == rows);
  CHECK(big.grade_labels.size() == scale.bands.size() + 7);  // the seven labels "G\n0" ... "G\n6"
}
