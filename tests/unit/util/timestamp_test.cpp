// Dates and times of the run store. Expected values from GNU date (`date -u -d @SECONDS +%FT%TZ`,
// an independent implementation), and the POSIX TZ rule "EST5" (five hours behind UTC).
#include "firmcall/util/timestamp.hpp"

#include <doctest/doctest.h>

#include <cstdlib>
#include <optional>
#include <string>

namespace {

// Sets TZ for one test and puts the old value back.
class ZoneForTest {
 public:
  explicit ZoneForTest(const char* zone) {
    if (const char* old = std::getenv("TZ")) old_ = old;
    setenv("TZ", zone, 1);
    tzset();
  }
  ~ZoneForTest() {
    if (old_) {
      setenv("TZ", old_->c_str(), 1);
    } else {
      unsetenv("TZ");
    }
    tzset();
  }
  ZoneForTest(const ZoneForTest&) = delete;
  ZoneForTest& operator=(const ZoneForTest&) = delete;

 private:
  std::optional<std::string> old_;
};

}  // namespace

TEST_CASE("utc_timestamp writes ISO 8601 in UTC") {
  CHECK(firmcall::utc_timestamp(0) == "1970-01-01T00:00:00Z");
  CHECK(firmcall::utc_timestamp(951782400) == "2000-02-29T00:00:00Z");  // a leap day
  CHECK(firmcall::utc_timestamp(1700000000) == "2023-11-14T22:13:20Z");
  CHECK(firmcall::utc_timestamp(4102444799) == "2099-12-31T23:59:59Z");
}

TEST_CASE("local_date follows the time zone") {
  {
    const ZoneForTest zone("UTC0");
    CHECK(firmcall::local_date(0) == "1970-01-01");
    CHECK(firmcall::local_date(951782400) == "2000-02-29");
  }
  {
    const ZoneForTest zone("EST5");
    CHECK(firmcall::local_date(0) == "1969-12-31");
    CHECK(firmcall::local_date(951782400) == "2000-02-28");
  }
}

TEST_CASE("the clock-reading forms have the written shapes") {
  const std::string now = firmcall::utc_timestamp_now();
  REQUIRE(now.size() == 20);
  CHECK(now[4] == '-');
  CHECK(now[10] == 'T');
  CHECK(now[19] == 'Z');
  CHECK(now.compare(0, 2, "20") == 0);
  const std::string today = firmcall::local_date_today();
  REQUIRE(today.size() == 10);
  CHECK(today[4] == '-');
  CHECK(today[7] == '-');
}
