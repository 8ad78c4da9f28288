// Fields of a JSON object written in order onto one line: `"key": value` pairs separated by ", ",
// with numbers at 17 significant digits (null when not finite). The caller writes the braces and
// whatever stands around the object, so that every output keeps its own layout.
//
// **Example**:
//   std::string out = "{";
//   firmcall::JsonFields(out).text("id", "ALD-01").number("pd", 0.0123).count("iterations", 7);
//   out += "}";  // {"id": "ALD-01", "pd": 0.0123, "iterations": 7}
#pragma once

#include <cstddef>
#include <span>
#include <string>
#include <string_view>

namespace firmcall {

class JsonFields {
 public:
  /// Appends to `out`; `first` false when fields already stand before (the next one gets ", ").
  explicit JsonFields(std::string& out, bool first = true) : out_(out), first_(first) {}
  /// A number, or null when not finite.
  JsonFields& number(std::string_view key, double v);
  /// Numbers under keys[i] for values[i] (both the same length).
  JsonFields& numbers(std::span<const std::string_view> keys, std::span<const double> values);
  /// A list of numbers, `[a, b, ...]` (null for each that is not finite).
  JsonFields& number_list(std::string_view key, std::span<const double> values);
  /// A whole count.
  JsonFields& count(std::string_view key, std::size_t n);
  /// A string literal, escaped.
  JsonFields& text(std::string_view key, std::string_view s);
  /// A string literal when `present`, else null.
  JsonFields& text_or_null(std::string_view key, std::string_view s, bool present);
  JsonFields& boolean(std::string_view key, bool b);
  JsonFields& null(std::string_view key);
  /// JSON text written as is (a list, a nested object).
  JsonFields& raw(std::string_view key, std::string_view json);
  /// Writes the key and its separator only; the caller appends the value.
  std::string& key(std::string_view key);

 private:
  std::string& out_;
  bool first_;
};

}  // namespace firmcall
