#include "firmcall/util/utf8.hpp"

namespace firmcall {

bool valid_utf8(std::string_view s) noexcept {
  // ASCII bytes are stepped over here (the common case in books); a lead byte goes through
  // next_utf8, the one decoder of a sequence.
  std::size_t i = 0;
  while (i < s.size()) {
    if (static_cast<unsigned char>(s[i]) < 0x80) {
      ++i;
      continue;
    }
    const Utf8Step step = next_utf8(s.substr(i));
    if (step.code_point < 0) return false;
    i += step.bytes;
  }
  return true;
}

Utf8Step next_utf8(std::string_view s) noexcept {
  const auto* p = reinterpret_cast<const unsigned char*>(s.data());
  const unsigned c = p[0];
  if (c < 0x80) return {static_cast<std::int32_t>(c), 1};
  std::size_t n;
  unsigned cp;
  if ((c & 0xE0) == 0xC0) {
    n = 1;
    cp = c & 0x1F;
  } else if ((c & 0xF0) == 0xE0) {
    n = 2;
    cp = c & 0x0F;
  } else if ((c & 0xF8) == 0xF0) {
    n = 3;
    cp = c & 0x07;
  } else {
    return {-1, 1};
  }
  if (s.size() <= n) return {-1, 1};
  for (std::size_t i = 1; i <= n; ++i) {
    if ((p[i] & 0xC0) != 0x80) return {-1, 1};
    cp = (cp << 6) | (p[i] & 0x3F);
  }
  constexpr unsigned kMinCodePoint[] = {0, 0x80, 0x800, 0x10000};
  if (cp < kMinCodePoint[n] || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF)) return {-1, 1};
  return {static_cast<std::int32_t>(cp), n + 1};
}

std::string valid_utf8_text(std::string_view s) {
  if (valid_utf8(s)) return std::string(s);
  std::string out;
  out.reserve(s.size() + 8);
  while (!s.empty()) {
    const Utf8Step step = next_utf8(s);
    if (step.code_point < 0) {
      append_replacement_char(out);
    } else {
      out.append(s.substr(0, step.bytes));
    }
    s.remove_prefix(step.bytes);
  }
  return out;
}

}  // namespace firmcall
