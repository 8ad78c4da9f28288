// Tests of the grade master scale.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "firmcall/book/grades.hpp"

using firmcall::GradeScale;

TEST_CASE("a PD falls in the first grade whose upper bound reaches it") {
  // Band convention (common practice for master scales): PD in (previous bound, own bound].
  const GradeScale s{{{"A", 0.001}, {"B", 0.01}, {"C", 1.0}}};
  CHECK(s.problem().empty());
  CHECK(s.index_of(0.0) == 0);
  CHECK(s.index_of(1e-300) == 0);
  CHECK(s.index_of(0.001) == 0);  // the bound itself belongs to the band
  CHECK(s.index_of(std::nextafter(0.001, 1.0)) == 1);
  CHECK(s.index_of(0.01) == 1);
  CHECK(s.index_of(0.5) == 2);
  CHECK(s.index_of(1.0) == 2);
  CHECK(s.label_of(0.005) == "B");
  // Not a probability: no grade.
  CHECK(s.index_of(-1e-9) == -1);
  CHECK(s.index_of(1.0000001) == -1);
  CHECK(s.index_of(std::numeric_limits<double>::quiet_NaN()) == -1);
  CHECK(s.label_of(std::numeric_limits<double>::quiet_NaN()).empty());
  CHECK(s.label_at(3).empty());
}

TEST_CASE("the default scale has ten ordered notches from FC1 to FC10") {
  const GradeScale s = firmcall::default_grade_scale();
  CHECK(s.problem().empty());
  REQUIRE(s.bands.size() == 10);
  CHECK(s.bands.front().label == "FC1");
  CHECK(s.bands.back().label == "FC10");
  CHECK(s.label_of(0.003) == "FC6");  // 0.0025 < 0.003 <= 0.005 by the bands written in the scale
  CHECK(s.label_of(0.2) == "FC10");
}

TEST_CASE("unusable scales are refused with the reason") {
  CHECK(GradeScale{}.problem() == "the scale has no grades");
  CHECK(GradeScale{{{"A", 0.01}, {"B", 0.01}, {"C", 1.0}}}.problem() ==
        "grade 2 ('B'): max_pd must be above the previous grade's and at most 1");
  CHECK(GradeScale{{{"A", 0.01}, {"A", 1.0}}}.problem() == "grade 2 ('A'): the label is used twice");
  CHECK(GradeScale{{{"A", 0.01}, {"B", 0.5}}}.problem() ==
        "the last grade must have max_pd 1 (it holds every PD up to 1)");
  CHECK(GradeScale{{{"", 1.0}}}.problem() == "grade 1: the label is empty");
}

TEST_CASE("grades depend on the one-year PD alone, whatever the horizon") {
  const GradeScale s = firmcall::default_grade_scale();
  // Two obligors with the same one-year PD q: a horizon-T PD of 1 - (1 - q)^T (constant annual
  // intensity, common practice), computed here in long double as an independent route.
  for (double q : {2e-5, 3e-4, 0.003, 0.0102, 0.05, 0.4}) {
    const int at_one_year = s.index_of(q);
    for (double horizon : {0.25, 1.0, 2.0, 5.0, 10.0}) {
      const auto pd_t = static_cast<double>(1.0L - std::pow(1.0L - static_cast<long double>(q), horizon));
      CAPTURE(q);
      CAPTURE(horizon);
      CHECK(s.index_of_pd_at(pd_t, horizon) == at_one_year);
    }
  }
  // A five-year PD of 5% is 1.02% a year (1 - 0.95^0.2, arithmetic): FC8, not the FC9 of 5%.
  CHECK(s.label_of_pd_at(0.05, 5.0) == "FC8");
  CHECK(s.label_of(0.05) == "FC9");
  CHECK(s.index_of_pd_at(0.05, 0.0) == -1);
  CHECK(s.label_of_pd_at(std::numeric_limits<double>::quiet_NaN(), 1.0).empty());
}
