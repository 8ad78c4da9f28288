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

namespace firmcall {

namespace {

__extension__ typedef unsigned __int128 u128;  // GCC/Clang 128-bit integer

// 5^k for k = 0..32 (5^32 < 2^75, so f * 5^k < 2^128 for a 53-bit f).
constexpr std::array<u128, 33> kPow5 = [] {
  std::array<u128, 33> p{};
  p[0] = 1;
  for (std::size_t i = 1; i < p.size(); ++i) p[i] = p[i - 1] * 5;
  return p;
}();

// 10^j for j = -16..17 as doubles (exact for j >= 0), at index j + 16.
constexpr std::array<double, 34> kPow10 = {1e-16, 1e-15, 1e-14, 1e-13, 1e-12, 1e-11, 1e-10, 1e-9, 1e-8,
                                           1e-7,  1e-6,  1e-5,  1e-4,  1e-3,  1e-2,  1e-1,  1e0,  1e1,
                                           1e2,   1e3,   1e4,   1e5,   1e6,   1e7,   1e8,   1e9,  1e10,
                                           1e11,  1e12,  1e13,  1e14,  1e15,  1e16,  1e17};

// Exact 17-significant-digit decimal of |v| for 1e-16 <= |v| < 1e17: returns the 17 digits as an
// integer n in [1e16, 1e17) and the decimal exponent of the first digit, or false outside the
// range. Exact because v * 10^k = f * 5^k * 2^(e+k) is formed in 128-bit integers (k <= 32) and
// rounded half-to-even on the exact remainder -- the same digits as printf("%.17g").
bool exact_17_digits(double v, std::uint64_t& n_out, int& exp10_out) noexcept {
  if (!(v >= 1e-16 && v < 1e17)) return false;
  // v is a normal double here: v = f 2^e exactly with f = 1.mantissa as a 53-bit integer.
  const auto bits = std::bit_cast<std::uint64_t>(v);
  const std::uint64_t f = (bits & ((1ULL << 52) - 1)) | (1ULL << 52);
  const int e = static_cast<int>((bits >> 52) & 0x7ff) - 1075;
  // floor(log10 v) is about floor((e + 52) log10 2), with log10 2 ~ 78913 / 2^18 (an arithmetic
  // shift floors); the loop below corrects the guess when it is one off.
  const int e10 = ((e + 52) * 78913) >> 18;  // floor(log10 v) or one less, in -17..16
  int k = 16 - e10;
  // The mantissa may carry v past the next power of ten: compare with it (as a double, which may
  // be rounded for negative powers; the loop still corrects a wrong guess).
  if (v >= kPow10[static_cast<std::size_t>(e10 + 17)]) --k;
  for (int attempt = 0; attempt < 3; ++attempt) {
    if (k < 0 || k > 32) return false;
    const u128 x = static_cast<u128>(f) * kPow5[static_cast<std::size_t>(k)];
    const int t = e + k;  // value = x 2^t
    u128 n;
    bool round_up = false;
    if (t >= 0) {
      if (t > 10) return false;  // cannot happen for v < 1e17, k >= 0; stay safe
      n = x << t;
    } else {
      const int sh = -t;
      if (sh >= 128) return false;
      n = x >> sh;
      const u128 rem = x - (n << sh);
      const u128 half = static_cast<u128>(1) << (sh - 1);
      round_up = rem > half || (rem == half && (n & 1) != 0);
    }
    // Choose the scale on the unrounded value: floor(v 10^k) must have exactly 17 digits.
    if (n < static_cast<u128>(10000000000000000ULL)) {
      ++k;
      continue;
    }
    if (n >= static_cast<u128>(100000000000000000ULL)) {
      --k;
      continue;
    }
    if (round_up) ++n;
    exp10_out = 16 - k;
    if (n == static_cast<u128>(100000000000000000ULL)) {  // rounding carried into an 18th digit
      n = 10000000000000000ULL;
      ++exp10_out;
    }
    n_out = static_cast<std::uint64_t>(n);
    return true;
  }
  return false;
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

// Writes n (17 digits) as ASCII into d[0..16] and returns the number of significant digits left
// after dropping trailing zeros (as %g does), at least 1.
inline int seventeen_digits(std::uint64_t n, char* d) noexcept {
  static_assert(std::endian::native == std::endian::little, "digit bytes are laid out little-endian");
  const auto first = static_cast<std::uint32_t>(n / 10000000000000000ULL);
  const std::uint64_t rest = n % 10000000000000000ULL;
  const std::uint64_t hi = eight_digit_bytes(static_cast<std::uint32_t>(rest / 100000000ULL));
  const std::uint64_t lo = eight_digit_bytes(static_cast<std::uint32_t>(rest % 100000000ULL));
  d[0] = static_cast<char>('0' + first);
  const std::uint64_t ascii = 0x3030303030303030ULL;
  const std::uint64_t hi_ascii = hi | ascii, lo_ascii = lo | ascii;
  std::memcpy(d + 1, &hi_ascii, 8);
  std::memcpy(d + 9, &lo_ascii, 8);
  // Trailing zero digits are the zero bytes at the high end of each word.
  if (lo != 0) return 17 - std::countl_zero(lo) / 8;
  if (hi != 0) return 9 - std::countl_zero(hi) / 8;
  return 1;
}

}  // namespace

char* write_number(char* p, double v) noexcept {
  if (!std::isfinite(v)) return p;
  if (v == 0.0) {
    if (std::signbit(v)) *p++ = '-';
    *p++ = '0';
    return p;
  }
  std::uint64_t n = 0;
  int x = 0;
  const double a = std::fabs(v);
  if (!exact_17_digits(a, n, x)) {
    return std::to_chars(p, p + kMaxNumberChars, v, std::chars_format::general, 17).ptr;
  }
  // Every copy below has a fixed size (so it compiles to a few moves) and may write past the
  // end of the number, within the caller's kMaxNumberChars.
  char d[40];
  const int len = seventeen_digits(n, d);  // significant digits
  if (v < 0) *p++ = '-';
  if (x >= 0 && x < 17) {
    // Integer part: digits 0..x; fraction: digits x+1..len-1.
    std::memcpy(p, d, 17);
    if (len <= x + 1) return p + x + 1;
    std::memcpy(p + x + 2, d + x + 1, 16);
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
