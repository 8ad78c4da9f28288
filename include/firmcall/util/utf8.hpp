// Text checks shared by the readers and the writers.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

namespace firmcall {

/// True when s is well-formed UTF-8 (RFC 3629: no overlongs, surrogates or values past U+10FFFF).
bool valid_utf8(std::string_view s) noexcept;

/// The code point of the well-formed UTF-8 sequence at the start of `s` and its length in bytes;
/// {-1, 1} when the first byte does not start one (a stray byte, an overlong or truncated sequence,
/// a surrogate or a value past U+10FFFF). `s` must not be empty.
struct Utf8Step {
  std::int32_t code_point;
  std::size_t bytes;
};
Utf8Step next_utf8(std::string_view s) noexcept;

/// True for the bidirectional embedding, override and isolate controls (U+202A..U+202E,
/// U+2066..U+2069), which reorder the text after them on screen.
constexpr bool is_bidi_control(std::int32_t cp) noexcept {
  return (cp >= 0x202A && cp <= 0x202E) || (cp >= 0x2066 && cp <= 0x2069);
}

/// `s` as well-formed UTF-8: each byte that does not start a well-formed sequence becomes U+FFFD.
std::string valid_utf8_text(std::string_view s);

/// Appends U+FFFD (the replacement character) as UTF-8.
inline void append_replacement_char(std::string& out) {
  out += "\xEF\xBF\xBD";
}

}  // namespace firmcall
