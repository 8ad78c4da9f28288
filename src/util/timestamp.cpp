#include "firmcall/util/timestamp.hpp"

namespace firmcall {

namespace {

std::string formatted(const std::tm& tm, const char* format) {
  char buf[32];
  const std::size_t n = std::strftime(buf, sizeof buf, format, &tm);
  return std::string(buf, n);
}

}  // namespace

std::string local_date(std::time_t t) {
  std::tm tm{};
  localtime_r(&t, &tm);
  return formatted(tm, "%Y-%m-%d");
}

std::string utc_timestamp(std::time_t t) {
  std::tm tm{};
  gmtime_r(&t, &tm);
  return formatted(tm, "%Y-%m-%dT%H:%M:%SZ");
}

std::string local_date_today() {
  return local_date(std::time(nullptr));
}

std::string utc_timestamp_now() {
  return utc_timestamp(std::time(nullptr));
}

}  // namespace firmcall
