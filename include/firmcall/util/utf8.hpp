// Text checks shared by the readers and the writers.
#pragma once

#include <string_view>

namespace firmcall {

/// True when s is well-formed UTF-8 (RFC 3629: no overlongs, surrogates or values past U+10FFFF).
bool valid_utf8(std::string_view s) noexcept;

}  // namespace firmcall
