// Tests of the outcomes reader (src/io/outcomes_io.cpp): columns, grading from the PD on the master
// scale, and the errors that name the file, the line and the field.
#include "firmcall/io/outcomes_io.hpp"

#include <doctest/doctest.h>

#include <string>

#include "firmcall/book/errors.hpp"

using namespace firmcall;

namespace {

OutcomeSample parse(const std::string& text, const OutcomeReadOptions& options = {}) {
  return parse_outcomes(text, "t.csv", options, default_grade_scale());
}

std::string error_of(const std::string& text, const OutcomeReadOptions& options = {}) {
  try {
    parse(text, options);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

}  // namespace

TEST_CASE("outcomes: columns, grades from the PD and from the file") {
  const OutcomeSample s = parse("id,pd,defaulted,segment\nA,0.003,0,x\nB,0.2,1,y\n\nC,0.00005,0,z\n");
  REQUIRE(s.pd.size() == 3);
  CHECK(s.defaults == 1);
  CHECK(s.graded_from_pd);
  // Default scale: 0.0025 < 0.003 <= 0.005 is FC6 (config/firmcall.yaml), 0.2 is FC10, 0.00005 is FC1.
  CHECK(s.grade_labels[static_cast<std::size_t>(s.grade[0])] == "FC6");
  CHECK(s.grade_labels[static_cast<std::size_t>(s.grade[1])] == "FC10");
  CHECK(s.grade_labels[static_cast<std::size_t>(s.grade[2])] == "FC1");
  OutcomeReadOptions o;
  o.pd_column = "pd_model";
  o.compare_column = "pd";
  const OutcomeSample g = parse("id,pd,pd_model,defaulted,grade\nA,0.1,0.2,1,R1\nB,0.01,0.02,0,FC2\n", o);
  CHECK_FALSE(g.graded_from_pd);
  CHECK(g.pd[0] == 0.2);
  CHECK(g.compare_pd[0] == 0.1);
  CHECK(g.grade_labels[static_cast<std::size_t>(g.grade[0])] == "R1");  // a label of the file's own
  CHECK(g.grade[1] == 1);                                               // FC2: the scale's second grade
}

TEST_CASE("outcomes: bad input names the file, the line and the field") {
  CHECK(error_of("id,pd\nA,0.1\n") == "t.csv:1: header: required column 'defaulted' is missing");
  CHECK(error_of("id,defaulted\nA,1\n") == "t.csv:1: header: required column 'pd' is missing");
  CHECK(error_of("id,pd,defaulted\nA,0.1,1\nB,1.5,0\n") ==
        "t.csv:3: field 'pd': expected a probability in [0, 1] such as 0.012 (not percent), got '1.5'");
  CHECK(error_of("id,pd,defaulted\nA,nan,1\n").find("t.csv:2: field 'pd'") == 0);
  CHECK(error_of("id,pd,defaulted\nA,0.1,1\nB,0.2,yes\n") ==
        "t.csv:3: field 'defaulted': expected 0 or 1, got 'yes'");
  CHECK(error_of("id,pd,defaulted\nA,0.1,0\nB,0.2,0\n")
            .find("t.csv: field 'defaulted': no defaults in 2 rows") == 0);
  CHECK(
      error_of("id,pd,defaulted\nA,0.1,1\nB,0.2,1\n").find("t.csv: field 'defaulted': every row defaulted") ==
      0);
  CHECK(error_of("id,pd,defaulted\n") == "t.csv: no rows: a validation needs observations");
  CHECK(error_of("") == "t.csv: empty file: a header row is required");
  CHECK(error_of("id,pd,defaulted\nA,0.1\n") == "t.csv:2: row has 2 fields, the header has 3");
  CHECK(error_of("id,pd,defaulted\n,0.1,1\n") ==
        "t.csv:2: field 'id': missing (every row needs an obligor id)");
  OutcomeReadOptions ids;
  ids.keep_ids = true;
  CHECK(error_of("id,pd,defaulted\nA,0.1,1\nA,0.2,0\n", ids) ==
        "t.csv:3: field 'id': appears twice (each obligor once per sample), got 'A'");
  OutcomeReadOptions same;
  same.compare_column = "pd";
  CHECK(error_of("id,pd,defaulted\nA,0.1,1\n", same).find("field 'compare_column'") == 0);
}

TEST_CASE("outcome read options: the defaults validate and each constraint is caught") {
  CHECK_FALSE(OutcomeReadOptions{}.validate());
  OutcomeReadOptions o;
  o.pd_column = "";
  REQUIRE(o.validate());
  CHECK(o.validate()->field == "pd_column");
  o.pd_column = "defaulted";
  CHECK(o.validate()->field == "pd_column");
  o.pd_column = "pd";
  o.compare_column = "grade";
  REQUIRE(o.validate());
  CHECK(o.validate()->field == "compare_column");
  o.compare_column = "pd_alt";
  CHECK_FALSE(o.validate());
}
