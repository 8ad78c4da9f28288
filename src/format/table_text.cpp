#include "firmcall/format/table_text.hpp"

#include <fmt/format.h>

#include <cmath>
#include <cstdint>

#include "firmcall/util/utf8.hpp"

namespace firmcall {

namespace {
bool shown_as_escape(std::int32_t cp) noexcept {
  return cp < 0 || cp < 0x20 || (cp >= 0x7F && cp <= 0x9F) || is_bidi_control(cp);
}
}  // namespace

bool needs_terminal_escape(std::string_view s) noexcept {
  for (const char c : s) {
    const auto b = static_cast<unsigned char>(c);
    if (b < 0x20 || b >= 0x7F) return true;  // then look closer
  }
  return false;
}

std::string terminal_text(std::string_view s) {
  if (!needs_terminal_escape(s)) return std::string(s);
  std::string out;
  out.reserve(s.size() + 8);
  while (!s.empty()) {
    const Utf8Step step = next_utf8(s);
    if (!shown_as_escape(step.code_point)) {
      out.append(s.substr(0, step.bytes));
    } else if (step.code_point < 0) {
      out += fmt::format("\\x{:02x}", static_cast<unsigned char>(s.front()));
    } else if (step.code_point < 0x80) {
      out += fmt::format("\\x{:02x}", step.code_point);
    } else {
      out += fmt::format("\\u{:04x}", step.code_point);
    }
    s.remove_prefix(step.bytes);
  }
  return out;
}

std::string fit_text(std::string_view text, std::size_t width) {
  const std::string shown = terminal_text(text);
  const std::string_view s = shown;
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

std::string left_cell(std::string_view text, std::size_t width) {
  const std::string shown = terminal_text(text);
  const std::string_view s = shown;
  if (s.size() >= width) return fmt::format("{} ", s);
  return fmt::format("{:<{}}", s, width);
}

std::string right_cell(std::string_view text, std::size_t width) {
  const std::string shown = terminal_text(text);
  const std::string_view s = shown;
  if (s.size() >= width) return fmt::format(" {}", s);
  return fmt::format("{:>{}}", s, width);
}

void append_rule(std::string& out, std::size_t width) {
  out.append(width, '-');
  out.push_back('\n');
}

}  // namespace firmcall
