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

// Columns a code point takes on a terminal: 0 for combining marks and zero-width characters, 2
// for East Asian wide and fullwidth forms and emoji (the ranges of Unicode's East_Asian_Width W/F
// in outline, as terminals and wcwidth() treat them; common practice), else 1.
int code_point_columns(std::int32_t cp) noexcept {
  if ((cp >= 0x0300 && cp <= 0x036F) || (cp >= 0x1AB0 && cp <= 0x1AFF) || (cp >= 0x1DC0 && cp <= 0x1DFF) ||
      (cp >= 0x20D0 && cp <= 0x20FF) || (cp >= 0xFE20 && cp <= 0xFE2F) || cp == 0x200B || cp == 0x200C ||
      cp == 0x200D || cp == 0xFEFF)
    return 0;
  if ((cp >= 0x1100 && cp <= 0x115F) || (cp >= 0x2E80 && cp <= 0x303E) || (cp >= 0x3041 && cp <= 0x33FF) ||
      (cp >= 0x3400 && cp <= 0x4DBF) || (cp >= 0x4E00 && cp <= 0x9FFF) || (cp >= 0xA000 && cp <= 0xA4CF) ||
      (cp >= 0xAC00 && cp <= 0xD7A3) || (cp >= 0xF900 && cp <= 0xFAFF) || (cp >= 0xFE30 && cp <= 0xFE4F) ||
      (cp >= 0xFF00 && cp <= 0xFF60) || (cp >= 0xFFE0 && cp <= 0xFFE6) || (cp >= 0x1F300 && cp <= 0x1F64F) ||
      (cp >= 0x1F900 && cp <= 0x1F9FF) || (cp >= 0x20000 && cp <= 0x3FFFD))
    return 2;
  return 1;
}
}  // namespace

std::size_t display_width(std::string_view s) noexcept {
  std::size_t w = 0;
  while (!s.empty()) {
    const Utf8Step step = next_utf8(s);
    w += step.code_point < 0 ? 1 : static_cast<std::size_t>(code_point_columns(step.code_point));
    s.remove_prefix(step.bytes);
  }
  return w;
}

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
  std::string_view s = shown;
  if (display_width(s) <= width) return std::string(s);
  if (width == 0) return {};
  // Whole characters up to width - 1 columns, then '~' (never a character cut in half).
  std::string out;
  std::size_t used = 0;
  while (!s.empty()) {
    const Utf8Step step = next_utf8(s);
    const std::size_t w =
        step.code_point < 0 ? 1 : static_cast<std::size_t>(code_point_columns(step.code_point));
    if (used + w > width - 1) break;
    out.append(s.substr(0, step.bytes));
    used += w;
    s.remove_prefix(step.bytes);
  }
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
  std::string s = terminal_text(text);
  const std::size_t w = display_width(s);
  s.append(w >= width ? 1 : width - w, ' ');
  return s;
}

std::string right_cell(std::string_view text, std::size_t width) {
  const std::string s = terminal_text(text);
  const std::size_t w = display_width(s);
  return std::string(w >= width ? 1 : width - w, ' ') + s;
}

void append_rule(std::string& out, std::size_t width) {
  out.append(width, '-');
  out.push_back('\n');
}

}  // namespace firmcall
