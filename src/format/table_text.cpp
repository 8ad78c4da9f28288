#include "firmcall/format/table_text.hpp"

#include <fmt/format.h>

#include <cmath>

namespace firmcall {

std::string fit_text(std::string_view s, std::size_t width) {
  if (s.size() <= width) return std::string(s);
  if (width == 0) return {};
  std::string out(s.substr(0, width - 1));
  out.push_back('~');
  return out;
}

std::string table_number(double v, int decimals, bool sign) {
  if (!std::isfinite(v)) return "-";
  if (v == 0.0) return sign ? "+0" : "0";
  if (std::fabs(v) >= std::pow(10.0, -decimals + 1) && std::fabs(v) < 1e7)
    return fixed_number(v, decimals, sign);
  return sign ? fmt::format("{:+.2e}", v) : fmt::format("{:.2e}", v);
}

std::string fixed_number(double v, int decimals, bool sign) {
  if (!std::isfinite(v)) return "-";
  return sign ? fmt::format("{:+.{}f}", v, decimals) : fmt::format("{:.{}f}", v, decimals);
}

std::string general_number(double v) {
  return fmt::format("{:g}", v);
}

std::string percent_text(double fraction) {
  return general_number(100.0 * fraction) + "%";
}

std::string left_cell(std::string_view s, std::size_t width) {
  if (s.size() >= width) return fmt::format("{} ", s);
  return fmt::format("{:<{}}", s, width);
}

std::string right_cell(std::string_view s, std::size_t width) {
  if (s.size() >= width) return fmt::format(" {}", s);
  return fmt::format("{:>{}}", s, width);
}

void append_rule(std::string& out, std::size_t width) {
  out.append(width, '-');
  out.push_back('\n');
}

}  // namespace firmcall
