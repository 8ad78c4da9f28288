// Dates and times as the outputs write them: the local date of a run (YYYY-MM-DD) and the UTC
// time of recording (YYYY-MM-DDTHH:MM:SSZ, ISO 8601). The one place that reads the clock and
// formats calendar time.
//
// **Example**:
//   std::string as_of = firmcall::local_date_today();           // "2026-12-03"
//   std::string at = firmcall::utc_timestamp(std::time_t{0});   // "1970-01-01T00:00:00Z"
#pragma once

#include <ctime>
#include <string>

namespace firmcall {

/// `t` as a date in the local time zone (TZ), YYYY-MM-DD.
std::string local_date(std::time_t t);

/// `t` in UTC, YYYY-MM-DDTHH:MM:SSZ.
std::string utc_timestamp(std::time_t t);

/// Today's date in the local time zone, YYYY-MM-DD.
std::string local_date_today();

/// The time now in UTC, YYYY-MM-DDTHH:MM:SSZ.
std::string utc_timestamp_now();

}  // namespace firmcall
