#include "firmcall/format/json_writer.hpp"

#include "firmcall/format/cells.hpp"

namespace firmcall {

std::string& JsonFields::key(std::string_view key) {
  if (!first_) out_ += ", ";
  first_ = false;
  out_ += '"';
  out_ += key;
  out_ += "\": ";
  return out_;
}

JsonFields& JsonFields::number(std::string_view k, double v) {
  append_json_number(key(k), v);
  return *this;
}

JsonFields& JsonFields::numbers(std::span<const std::string_view> keys, std::span<const double> values) {
  for (std::size_t i = 0; i < keys.size() && i < values.size(); ++i) number(keys[i], values[i]);
  return *this;
}

JsonFields& JsonFields::number_list(std::string_view k, std::span<const double> values) {
  std::string& out = key(k);
  out += '[';
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (i > 0) out += ", ";
    append_json_number(out, values[i]);
  }
  out += ']';
  return *this;
}

JsonFields& JsonFields::count(std::string_view k, std::size_t n) {
  key(k) += std::to_string(n);
  return *this;
}

JsonFields& JsonFields::text(std::string_view k, std::string_view s) {
  append_json_string(key(k), s);
  return *this;
}

JsonFields& JsonFields::text_or_null(std::string_view k, std::string_view s, bool present) {
  if (present) return text(k, s);
  return null(k);
}

JsonFields& JsonFields::boolean(std::string_view k, bool b) {
  key(k) += b ? "true" : "false";
  return *this;
}

JsonFields& JsonFields::null(std::string_view k) {
  key(k) += "null";
  return *this;
}

JsonFields& JsonFields::raw(std::string_view k, std::string_view json) {
  key(k) += json;
  return *this;
}

}  // namespace firmcall
