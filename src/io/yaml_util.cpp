#include "io/yaml_util.hpp"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <sstream>
#include <vector>

#include "firmcall/book/errors.hpp"

namespace firmcall {

std::string located(const std::string& file, std::size_t line, const std::string& message) {
  if (line == 0) return file + ": " + message;
  return file + ":" + std::to_string(line) + ": " + message;
}

namespace detail {

std::size_t yaml_line(const YAML::Node& node) {
  const auto mark = node.Mark();
  return mark.line >= 0 ? static_cast<std::size_t>(mark.line) + 1 : 0;
}

YAML::Node yaml_load(const std::string& text, const std::string& origin) {
  try {
    return YAML::Load(text);
  } catch (const YAML::Exception& e) {
    const std::size_t line = e.mark.line >= 0 ? static_cast<std::size_t>(e.mark.line) + 1 : 0;
    throw InputError(located(origin, line, "not valid YAML: " + e.msg));
  }
}

std::string read_text_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError("cannot open file '" + path + "'");
  std::ostringstream ss;
  ss << in.rdbuf();
  if (in.bad()) throw InputError("cannot read file '" + path + "'");
  return ss.str();
}

std::string yaml_string(const YAML::Node& node, const std::string& origin, std::string_view key) {
  if (!node.IsScalar()) {
    throw InputError(
        located(origin, yaml_line(node), "key '" + std::string(key) + "': expected a single value"));
  }
  return node.Scalar();
}

double yaml_number(const YAML::Node& node, const std::string& origin, std::string_view key) {
  const std::string text = yaml_string(node, origin, key);
  double value = 0.0;
  bool ok = false;
  try {
    value = node.as<double>();
    ok = std::isfinite(value);
  } catch (const YAML::Exception&) {
    ok = false;
  }
  if (!ok) {
    throw InputError(located(origin, yaml_line(node),
                             "key '" + std::string(key) + "': expected a finite number, got '" + text + "'"));
  }
  return value;
}

namespace {
template <class Range>
std::string closest_in(std::string_view name, const Range& candidates) {
  std::string best;
  std::size_t best_d = 3;
  for (std::string_view c : candidates) {
    // Levenshtein distance, small strings only.
    std::vector<std::size_t> prev(c.size() + 1), cur(c.size() + 1);
    for (std::size_t j = 0; j <= c.size(); ++j) prev[j] = j;
    for (std::size_t i = 1; i <= name.size(); ++i) {
      cur[0] = i;
      for (std::size_t j = 1; j <= c.size(); ++j) {
        const std::size_t sub = prev[j - 1] + (name[i - 1] == c[j - 1] ? 0 : 1);
        cur[j] = std::min({prev[j] + 1, cur[j - 1] + 1, sub});
      }
      std::swap(prev, cur);
    }
    if (prev[c.size()] < best_d) {
      best_d = prev[c.size()];
      best = std::string(c);
    }
  }
  return best;
}
}  // namespace

std::string closest_name(std::string_view name, std::initializer_list<std::string_view> candidates) {
  return closest_in(name, candidates);
}

std::string closest_name(std::string_view name, const std::vector<std::string>& candidates) {
  return closest_in(name, candidates);
}

void yaml_check_keys(const YAML::Node& node, std::initializer_list<std::string_view> allowed,
                     const std::string& origin, std::string_view where) {
  if (!node.IsMap()) {
    throw InputError(located(origin, yaml_line(node), std::string(where) + ": expected a map of key: value"));
  }
  std::vector<std::string> seen;
  for (const auto& kv : node) {
    const std::string key = kv.first.Scalar();
    if (std::find(seen.begin(), seen.end(), key) != seen.end()) {
      throw InputError(
          located(origin, yaml_line(kv.first), std::string(where) + ": key '" + key + "' is given twice"));
    }
    seen.push_back(key);
    if (std::find(allowed.begin(), allowed.end(), key) != allowed.end()) continue;
    std::string msg = std::string(where) + ": unknown key '" + key + "'";
    const std::string hint = closest_name(key, allowed);
    if (!hint.empty()) msg += " (did you mean '" + hint + "'?)";
    throw InputError(located(origin, yaml_line(kv.first), msg));
  }
}

}  // namespace detail
}  // namespace firmcall
