#include "firmcall/normal.hpp"
#include <doctest/doctest.h>
TEST_CASE("placeholder") {
  CHECK(firmcall::norm_cdf(0.0) == 0.5);
}
