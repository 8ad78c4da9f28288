// Tests of output formatting: numbers print as the shortest decimal that reads back to the same
// double. Reference: libstdc++'s std::to_chars shortest scientific form (an independent Ryu
// implementation) for the digits, laid out as Python's repr() does (positional for decimal
// exponents -4..15, else scientific with two exponent digits at least; from Python's docs of
// float.__repr__, from memory), without repr's ".0" on integers.
#include <doctest/doctest.h>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <random>
#include <string>

#include "firmcall/engine/score_output.hpp"

using firmcall::append_number;

namespace {
std::string shortest_reference(double v) {
  char buf[64];
  const std::string sci(buf, std::to_chars(buf, buf + sizeof buf, v, std::chars_format::scientific).ptr);
  const std::size_t e = sci.find('e');
  std::string digits;
  for (char c : sci.substr(0, e))
    if (c >= '0' && c <= '9') digits.push_back(c);
  const int x = std::stoi(sci.substr(e + 1));
  std::string out(sci[0] == '-' ? 1 : 0, '-');
  if (digits == "0") return out.append("0");
  if (x >= 16 || x < -4) {
    out.push_back(digits[0]);
    if (digits.size() > 1) out.append(".").append(digits, 1);
    const int ax = x < 0 ? -x : x;
    out.append(x < 0 ? "e-" : "e+");
    if (ax < 10) out.push_back('0');
    return out.append(std::to_string(ax));
  }
  if (x < 0) return out.append("0.").append(static_cast<std::size_t>(-x - 1), '0').append(digits);
  const auto ints = static_cast<std::size_t>(x + 1);
  if (digits.size() <= ints) return out.append(digits).append(ints - digits.size(), '0');
  return out.append(digits, 0, ints).append(".").append(digits, ints);
}
std::string ours(double v) {
  std::string s;
  append_number(s, v);
  return s;
}
}  // namespace

TEST_CASE("numbers print as the shortest round-trip decimal over many magnitudes, ties and edges") {
  std::mt19937_64 rng(17);
  std::uniform_real_distribution<double> expo(-40.0, 40.0);
  std::uniform_int_distribution<std::uint64_t> bits(0, ~0ULL);
  long mismatches = 0;
  long tested = 0;
  const auto check = [&](double v) {
    ++tested;
    if (ours(v) != shortest_reference(v)) {
      if (++mismatches <= 5) {
        CAPTURE(v);
        CHECK(ours(v) == shortest_reference(v));
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
  for (int i = 0; i < 100000; ++i) {  // integers (the fast path below 2^53) and just past it
    check(static_cast<double>(bits(rng) >> (11 + i % 40)));
    check(9007199254740992.0 + 2.0 * (i % 1000));
  }
  CHECK(ours(0.4) == "0.4");  // not 0.40000000000000002 (17 digits)
  CHECK(ours(1e16) == "1e+16");
  CHECK(ours(1234567890123456.0) == "1234567890123456");
  CHECK(ours(1e-5) == "1e-05");
  CHECK(ours(0.0001) == "0.0001");
  CHECK(ours(-0.0) == "-0");
  CHECK(ours(5e-324) == "5e-324");
  MESSAGE("append_number vs shortest reference: " << tested << " values, " << mismatches << " mismatches");
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
