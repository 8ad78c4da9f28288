#include "firmcall/format/cells.hpp"

#include "firmcall/format/table_text.hpp"
#include "firmcall/util/utf8.hpp"

#include <algorithm>
#include <array>
#include <atomic>
#include <bit>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <mutex>

#include <fmt/format.h>

namespace firmcall {

namespace {

// 10^k for k = 0..19.
constexpr std::array<std::uint64_t, 20> kPow10 = [] {
  std::array<std::uint64_t, 20> p{};
  p[0] = 1;
  for (std::size_t i = 1; i < p.size(); ++i) p[i] = p[i - 1] * 10;
  return p;
}();

// Number of decimal digits of n > 0.
inline int decimal_digits(std::uint64_t n) noexcept {
  const int t =
      (static_cast<int>(std::bit_width(n)) * 1233) >> 12;  // floor(log10 2^bits), one too many at most
  return t + 1 - static_cast<int>(n < kPow10[static_cast<std::size_t>(t)]);
}

// The eight decimal digits of v < 10^8 as eight bytes 0..9, first digit in the lowest byte (read
// as a little-endian word): each step splits every lane into its high and low half at once.
inline std::uint64_t eight_digit_bytes(std::uint32_t v) noexcept {
  const std::uint64_t x = (v / 10000) | (static_cast<std::uint64_t>(v % 10000) << 32);
  const std::uint64_t hundreds = ((x * 10486) >> 20) & 0x0000007F0000007FULL;  // lane / 100 (lane < 10^4)
  const std::uint64_t y = hundreds | ((x - hundreds * 100) << 16);
  const std::uint64_t tens = ((y * 103) >> 10) & 0x000F000F000F000FULL;  // lane / 10 (lane < 100)
  return tens | ((y - tens * 10) << 8);
}

// Writes n < 10^17 as exactly 17 ASCII digits (leading zeros included) into d[0..16].
inline void seventeen_digits(std::uint64_t n, char* d) noexcept {
  static_assert(std::endian::native == std::endian::little, "digit bytes are laid out little-endian");
  const auto first = static_cast<std::uint32_t>(n / 10000000000000000ULL);
  const std::uint64_t rest = n % 10000000000000000ULL;
  const std::uint64_t ascii = 0x3030303030303030ULL;
  const std::uint64_t hi = eight_digit_bytes(static_cast<std::uint32_t>(rest / 100000000ULL)) | ascii;
  const std::uint64_t lo = eight_digit_bytes(static_cast<std::uint32_t>(rest % 100000000ULL)) | ascii;
  d[0] = static_cast<char>('0' + first);
  std::memcpy(d + 1, &hi, 8);
  std::memcpy(d + 9, &lo, 8);
}

}  // namespace

char* write_number(char* p, double v) noexcept {
  if (!std::isfinite(v)) return p;
  if (std::signbit(v)) *p++ = '-';
  const double a = std::fabs(v);
  if (a == 0.0) {
    *p++ = '0';
    return p;
  }
  std::uint64_t s = 0;  // significant digits, no trailing zeros
  int x = 0;            // decimal exponent of the first digit
  int len = 0;          // number of digits of s
  if (a < 9007199254740992.0 && static_cast<double>(static_cast<std::uint64_t>(a)) == a) {
    // An integer below 2^53: its digits are its shortest form (amounts, counts, horizons), and
    // skipping the general conversion makes these cells several times cheaper.
    s = static_cast<std::uint64_t>(a);
    len = decimal_digits(s);
    x = len - 1;
  } else {
    // Shortest digits that read back to the same double: Dragonbox (Jeon 2020), as libfmt ships
    // it. Faster here than std::to_chars or fmt::format_to, whose layout code we replace below.
    const auto dec = fmt::detail::dragonbox::to_decimal(a);
    s = dec.significand;
    len = decimal_digits(s);
    x = dec.exponent + len - 1;
  }
  // s as 17 digits, left-aligned: d[0..len-1] are its digits and d[len..16] are '0'.
  char d[40];
  seventeen_digits(s * kPow10[static_cast<std::size_t>(17 - len)], d);
  // Every copy below has a fixed size (so it compiles to a few moves) and may write past the end
  // of the number, within the caller's kMaxNumberChars. Layout as Python's repr(): positional for
  // exponents -4..15, else scientific with at least two exponent digits; no ".0" on integers.
  if (x >= 0 && x < 16) {
    std::memcpy(p, d, 17);  // integer part: digits 0..x (zeros past len)
    if (len <= x + 1) return p + x + 1;
    std::memcpy(p + x + 2, d + x + 1, 16);  // fraction: digits x+1..len-1
    p[x + 1] = '.';
    return p + len + 1;
  }
  if (x < 0 && x >= -4) {
    std::memcpy(p, "0.0000", 6);  // "0." and -x-1 zeros
    std::memcpy(p + 1 - x, d, 17);
    return p + 1 - x + len;
  }
  p[0] = d[0];
  p[1] = '.';
  std::memcpy(p + 2, d + 1, 16);
  p += len > 1 ? len + 1 : 1;
  *p++ = 'e';
  *p++ = x < 0 ? '-' : '+';
  const int ax = x < 0 ? -x : x;
  if (ax >= 100) *p++ = static_cast<char>('0' + ax / 100);
  *p++ = static_cast<char>('0' + (ax / 10) % 10);
  *p++ = static_cast<char>('0' + ax % 10);
  return p;
}

void append_number(std::string& out, double v) {
  char buf[kMaxNumberChars];
  out.append(buf, write_number(buf, v));
}

namespace detail {

std::string wrapped(const std::string& text, std::size_t indent, std::size_t width) {
  std::string out;
  std::string line(indent, ' ');
  std::size_t pos = 0;
  while (pos < text.size()) {
    std::size_t end = text.find(' ', pos);
    if (end == std::string::npos) end = text.size();
    const std::string word = text.substr(pos, end - pos);
    const bool fresh = line.find_first_not_of(' ') == std::string::npos;
    if (!fresh && line.size() + 1 + word.size() > width) {
      out += line + "\n";
      line.assign(2 * indent, ' ');
    } else if (!fresh) {
      line.push_back(' ');
    }
    line += word;
    pos = end + 1;
  }
  return out + line + "\n";
}

}  // namespace detail

void append_table_problems(std::string& out, const std::vector<std::string>& problems, std::size_t not_listed,
                           std::size_t wrap_width) {
  for (const auto& problem : problems) {
    const std::string p = terminal_text(problem);  // ids and names from the file may hold controls
    out += wrap_width > 0 ? detail::wrapped(p, 2, wrap_width) : "  " + p + "\n";
  }
  if (not_listed > 0)
    out += "  ... and " + std::to_string(not_listed) + " more (see --format csv, column message)\n";
}

void append_csv_names(std::string& out, const std::vector<std::string_view>& names) {
  for (std::size_t i = 0; i < names.size(); ++i) {
    if (i > 0) out.push_back(',');
    out.append(names[i]);
  }
}

void append_csv_texts(std::string& out, std::initializer_list<std::string_view> cells) {
  for (std::string_view c : cells) {
    append_csv_text(out, c);
    out.push_back(',');
  }
}

void append_csv_numbers(std::string& out, std::span<const double> values) {
  for (double v : values) {
    out.push_back(',');
    append_number(out, v);
  }
}

std::vector<std::string_view> split_names(std::string_view list) {
  std::vector<std::string_view> names;
  std::size_t start = 0;
  while (start <= list.size()) {
    const std::size_t comma = std::min(list.find(',', start), list.size());
    names.push_back(list.substr(start, comma - start));
    start = comma + 1;
  }
  return names;
}

namespace {
std::atomic<bool> g_csv_guard{false};
std::atomic<std::size_t> g_formula_cells{0};
std::mutex g_formula_mutex;
std::vector<std::string> g_formula_first;  // guarded by g_formula_mutex
constexpr std::size_t kFormulaCellsNamed = 3;

// Counts a formula-like cell; true when it is to be neutralised.
bool note_formula_cell(std::string_view s) {
  if (g_formula_cells.fetch_add(1, std::memory_order_relaxed) < kFormulaCellsNamed) {
    const std::lock_guard<std::mutex> lock(g_formula_mutex);
    if (g_formula_first.size() < kFormulaCellsNamed) g_formula_first.emplace_back(s.substr(0, 40));
  }
  return g_csv_guard.load(std::memory_order_relaxed);
}
}  // namespace

bool csv_formula_like(std::string_view s) noexcept {
  if (s.empty()) return false;
  const char c = s.front();
  if (c != '=' && c != '+' && c != '-' && c != '@' && c != '\t' && c != '\r') return false;
  if (c == '+' || c == '-') {
    // A signed number ("-0.25", "+3e-05") is data, not a formula.
    double v = 0.0;
    const char* first = s.data() + (c == '+' ? 1 : 0);
    const auto [ptr, ec] = std::from_chars(first, s.data() + s.size(), v);
    if (ec == std::errc() && ptr == s.data() + s.size() && first != ptr) return false;
  }
  return true;
}

void set_csv_text_guard(bool neutralise) noexcept {
  g_csv_guard.store(neutralise, std::memory_order_relaxed);
}

CsvFormulaCells take_csv_formula_cells() {
  CsvFormulaCells cells;
  const std::lock_guard<std::mutex> lock(g_formula_mutex);
  cells.count = g_formula_cells.exchange(0, std::memory_order_relaxed);
  cells.first.swap(g_formula_first);
  cells.guarded = g_csv_guard.load(std::memory_order_relaxed);
  return cells;
}

void append_csv_text(std::string& out, std::string_view s) {
  const bool guard = csv_formula_like(s) && note_formula_cell(s);
  if (s.find_first_of(",\"\r\n") == std::string_view::npos) {
    if (guard) out.push_back('\'');
    out.append(s);
    return;
  }
  out.push_back('"');
  if (guard) out.push_back('\'');
  for (char c : s) {
    if (c == '"') out.push_back('"');
    out.push_back(c);
  }
  out.push_back('"');
}

void append_json_string(std::string& out, std::string_view s) {
  if (!valid_utf8(s)) {
    // Keep the JSON well-formed: each byte that does not start a UTF-8 sequence becomes U+FFFD.
    append_json_string(out, valid_utf8_text(s));
    return;
  }
  out.push_back('"');
  for (char c : s) {
    const auto u = static_cast<unsigned char>(c);
    switch (c) {
      case '"':
        out += "\\\"";
        break;
      case '\\':
        out += "\\\\";
        break;
      case '\n':
        out += "\\n";
        break;
      case '\r':
        out += "\\r";
        break;
      case '\t':
        out += "\\t";
        break;
      default:
        if (u < 0x20) {
          char buf[8];
          std::snprintf(buf, sizeof buf, "\\u%04x", u);
          out += buf;
        } else {
          out.push_back(c);
        }
    }
  }
  out.push_back('"');
}

void append_json_number(std::string& out, double v) {
  if (!std::isfinite(v)) {
    out += "null";
    return;
  }
  append_number(out, v);
}

}  // namespace firmcall
