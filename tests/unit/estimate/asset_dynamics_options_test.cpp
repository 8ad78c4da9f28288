// validate() of AssetDynamicsOptions: the defaults pass, and a value outside the enumerations
// (the estimators' documented methods) is caught with the field's name.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/estimate/history.hpp"

using namespace firmcall;

TEST_CASE("AssetDynamicsOptions: the defaults and every listed method validate") {
  CHECK_FALSE(AssetDynamicsOptions{}.validate().has_value());
  for (const HistoryMethod m : {HistoryMethod::iterative, HistoryMethod::mle, HistoryMethod::naive}) {
    for (const VolEstimator v : {VolEstimator::simple, VolEstimator::ewma}) {
      CHECK_FALSE(AssetDynamicsOptions{m, v}.validate().has_value());
    }
  }
}

TEST_CASE("AssetDynamicsOptions: each constraint names its field") {
  AssetDynamicsOptions o;
  o.method = static_cast<HistoryMethod>(7);
  REQUIRE(o.validate().has_value());
  CHECK(o.validate()->field == "method");
  CHECK(o.validate()->constraint == "must be iterative, mle or naive");
  CHECK(o.validate()->value == "7");

  o = {};
  o.equity_vol = static_cast<VolEstimator>(9);
  REQUIRE(o.validate().has_value());
  CHECK(o.validate()->field == "equity_vol");
  CHECK(o.validate()->constraint == "must be simple or ewma");
}
