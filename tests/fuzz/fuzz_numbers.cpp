// libFuzzer target: the number parser accepts only finite decimals, and every double it returns
// prints (the shortest round-trip decimal) and parses back to itself.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <string>

#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/csv.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  double v = 0.0;
  if (firmcall::parse_number(text, v)) {
    if (!std::isfinite(v)) std::abort();
    std::string printed;
    firmcall::append_number(printed, v);
    double back = 0.0;
    if (!firmcall::parse_number(printed, back) || back != v) std::abort();
  }
  // Any 8 bytes as a double: the formatter must round-trip it too.
  if (size >= 8) {
    double d;
    std::memcpy(&d, data, sizeof d);
    if (std::isfinite(d)) {
      std::string printed;
      firmcall::append_number(printed, d);
      double back = 0.0;
      if (!firmcall::parse_number(printed, back) || back != d) std::abort();
    }
  }
  (void)firmcall::valid_utf8(text);
  return 0;
}
