#include "firmcall/util/option_check.hpp"

#include <charconv>
#include <cmath>

namespace firmcall {

std::string option_value_text(double v) {
  if (std::isnan(v)) return "nan";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);  // shortest round-trip form
  return std::string(buf, r.ptr);
}

}  // namespace firmcall
