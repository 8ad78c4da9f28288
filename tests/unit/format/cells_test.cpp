// Tests of output formatting: numbers must be exactly what printf("%.17g") prints (the C
// library is the independent reference), so that every value round-trips.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <random>
#include <string>

#include "firmcall/engine/score_output.hpp"

using firmcall::append_number;

namespace {
std::string printf17(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}
std::string ours(double v) {
  std::string s;
  append_number(s, v);
  return s;
}
}  // namespace

TEST_CASE("numbers print as %.17g over many magnitudes, ties and edges") {
  std::mt19937_64 rng(17);
  std::uniform_real_distribution<double> expo(-40.0, 40.0);
  std::uniform_int_distribution<std::uint64_t> bits(0, ~0ULL);
  long mismatches = 0;
  long tested = 0;
  const auto check = [&](double v) {
    ++tested;
    if (ours(v) != printf17(v)) {
      if (++mismatches <= 5) {
        CAPTURE(v);
        CHECK(ours(v) == printf17(v));
      }
    }
    // Round trip.
    double back = 0;
    std::sscanf(ours(v).c_str(), "%lf", &back);
    if (back != v) ++mismatches;
  };
  for (int i = 0; i < 300000; ++i) {
    const double v = std::pow(10.0, expo(rng)) * (i % 2 ? 1 : -1);
    check(v);
  }
  for (int i = 0; i < 100000; ++i) {  // random bit patterns: every exponent, subnormals included
    double v;
    const std::uint64_t b = bits(rng);
    std::memcpy(&v, &b, sizeof v);
    if (std::isfinite(v)) check(v);
  }
  // Decimal inputs of the kind books hold, powers of ten and two, integers, range edges.
  const double edges[] = {0.0,
                          -0.0,
                          1.0,
                          0.5,
                          0.1,
                          0.0265,
                          1e-16,
                          9.9999999999999998e-17,
                          1e17,
                          99999999999999999.0,
                          1e16,
                          123456.789,
                          1e-5,
                          1e-4,
                          0.0001234,
                          1e22,
                          4503599627370496.0,
                          9007199254740993.0,
                          2.5e-300,
                          5e-324,
                          std::numeric_limits<double>::max(),
                          std::numeric_limits<double>::min()};
  for (double v : edges) {
    check(v);
    check(-v);
  }
  for (int i = -30; i <= 30; ++i) {
    check(std::pow(10.0, i));
    check(std::ldexp(1.0, i * 3));
    check(std::nextafter(std::pow(10.0, i), 0.0));
    check(std::nextafter(std::pow(10.0, i), 1e300));
  }
  for (int i = 0; i < 20000; ++i) check(static_cast<double>(i) / 1000.0);
  MESSAGE("append_number vs printf %.17g: " << tested << " values, " << mismatches << " mismatches");
  CHECK(mismatches == 0);
  CHECK(ours(std::nan("")).empty());
  CHECK(ours(std::numeric_limits<double>::infinity()).empty());
}

TEST_CASE("CSV and JSON text escaping") {
  std::string s;
  firmcall::append_csv_text(s, "plain");
  firmcall::append_csv_text(s, "a,b");
  firmcall::append_csv_text(s, "say \"hi\"");
  CHECK(s == "plain\"a,b\"\"say \"\"hi\"\"\"");
  std::string j;
  firmcall::append_json_string(j, "q\"b\\n\nt\t\x01");
  CHECK(j == "\"q\\\"b\\\\n\\nt\\t\\u0001\"");
  std::string n;
  firmcall::append_json_number(n, std::nan(""));
  CHECK(n == "null");
}
