// Tests of the outcomes reader's segment and as_of columns (src/io/outcomes_io.cpp): segment
// indices in the order the labels first appear, as_of as days since 1970-01-01, and the errors
// that name the file, the line and the field.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/outcomes_io.hpp"

using namespace firmcall;

namespace {

OutcomeSample parse(const std::string& text) {
  return parse_outcomes(text, "t.csv", {}, default_grade_scale());
}

std::string error_of(const std::string& text) {
  try {
    parse(text);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

}  // namespace

TEST_CASE("outcomes: segment and as_of columns") {
  const OutcomeSample s = parse(
      "id,pd,defaulted,as_of,segment\nA,0.01,1,2024-01-01,sme\nB,0.02,0,2024-01-01,corp\n"
      "C,0.03,0,2000-03-01,sme\nD,0.04,1,1970-01-01,\"real estate\"\n");
  REQUIRE(s.segment.size() == 4);
  CHECK(s.segment_labels == std::vector<std::string>{"sme", "corp", "real estate"});
  CHECK(s.segment == std::vector<int>{0, 1, 0, 2});
  // Days since 1970-01-01: 2024-01-01 is 19723, 2000-03-01 is 11017 (Python's datetime,
  // date(2024, 1, 1) - date(1970, 1, 1)).
  CHECK(s.as_of == std::vector<std::int32_t>{19723, 19723, 11017, 0});
  const OutcomeSample plain = parse("id,pd,defaulted\nA,0.01,1\nB,0.02,0\n");
  CHECK(plain.segment.empty());
  CHECK(plain.segment_labels.empty());
  CHECK(plain.as_of.empty());
}

TEST_CASE("outcomes: bad as_of and empty segment name the line and the field") {
  CHECK(error_of("id,pd,defaulted,as_of\nA,0.01,1,2024-01-01\nB,0.02,0,2023-02-29\n") ==
        "t.csv:3: field 'as_of': expected a calendar date YYYY-MM-DD, got '2023-02-29'");
  CHECK(error_of("id,pd,defaulted,as_of\nA,0.01,1,2024-01-01\nB,0.02,0,2024-01-01\nC,0.02,0,\n") ==
        "t.csv:4: field 'as_of': expected a calendar date YYYY-MM-DD, got ''");
  CHECK(error_of("id,pd,defaulted,as_of\nA,0.01,1,01/02/2024\nB,0.02,0,2024-01-01\n")
            .find("t.csv:2: field 'as_of'") == 0);
  CHECK(error_of("id,pd,defaulted,segment\nA,0.01,1,sme\nB,0.02,0, \n") ==
        "t.csv:3: field 'segment': missing (give a segment on every row, or leave out the column), got ''");
}
