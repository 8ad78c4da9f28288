#include "io/yaml_util.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <unordered_set>
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

namespace {
// Lines (1-based) of the `---` document markers of a YAML text.
std::vector<std::size_t> document_marker_lines(const std::string& text) {
  std::vector<std::size_t> lines;
  std::size_t line = 1;
  for (std::size_t at = 0; at < text.size(); ++line) {
    if (text.compare(at, 3, "---") == 0 &&
        (at + 3 == text.size() || text[at + 3] == ' ' || text[at + 3] == '\t' || text[at + 3] == '\n' ||
         text[at + 3] == '\r')) {
      lines.push_back(line);
    }
    const std::size_t nl = text.find('\n', at);
    if (nl == std::string::npos) break;
    at = nl + 1;
  }
  return lines;
}

// Line of the marker that starts the second of `docs`: the last one before its first node, else
// the first one after the first document's first node.
std::size_t second_document_line(const std::string& text, const std::vector<YAML::Node>& docs) {
  const std::vector<std::size_t> markers = document_marker_lines(text);
  const std::size_t second = yaml_line(docs[1]);
  std::size_t found = 0;
  if (second != 0) {
    for (std::size_t m : markers) {
      if (m <= second) found = m;
    }
  }
  if (found == 0) {
    const std::size_t first = yaml_line(docs[0]);
    for (std::size_t m : markers) {
      if (m > first) return m;
    }
    return second;
  }
  return found;
}
}  // namespace

YAML::Node yaml_load(const std::string& text, const std::string& origin) {
  std::vector<YAML::Node> docs;
  try {
    docs = YAML::LoadAll(text);
  } catch (const YAML::Exception& e) {
    const std::size_t line = e.mark.line >= 0 ? static_cast<std::size_t>(e.mark.line) + 1 : 0;
    throw InputError(located(origin, line, "not valid YAML: " + e.msg));
  }
  if (docs.size() > 1) {
    throw InputError(located(origin, second_document_line(text, docs),
                             "a second YAML document starts here; a file holds one document (remove "
                             "the '---' line, or split the file)"));
  }
  return docs.empty() ? YAML::Node() : docs[0];
}

std::string read_text_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError("cannot open file '" + path + "'");
  std::ostringstream ss;
  ss << in.rdbuf();
  if (in.bad()) throw InputError("cannot read file '" + path + "'");
  return ss.str();
}

std::string read_text_file(const std::string& path, std::size_t max_bytes, std::string_view what) {
  std::error_code ec;
  const auto size = std::filesystem::file_size(path, ec);
  if (!ec && size > max_bytes) {
    throw InputError("'" + path + "': " + std::string(what) + " of " + std::to_string(size) +
                     " bytes, larger than the cap of " + std::to_string(max_bytes) + " bytes (" +
                     std::to_string(max_bytes >> 20) + " MiB)");
  }
  std::string text = read_text_file(path);
  if (text.size() > max_bytes) {  // e.g. a pipe, whose size is not known in advance
    throw InputError("'" + path + "': " + std::string(what) + " larger than the cap of " +
                     std::to_string(max_bytes) + " bytes (" + std::to_string(max_bytes >> 20) + " MiB)");
  }
  return text;
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
  std::unordered_set<std::string_view> seen;  // views into the node's keys, alive with `node`
  for (const auto& kv : node) {
    const std::string& key = kv.first.Scalar();
    if (!seen.insert(key).second) {
      throw InputError(
          located(origin, yaml_line(kv.first), std::string(where) + ": key '" + key + "' is given twice"));
    }
    if (std::find(allowed.begin(), allowed.end(), key) != allowed.end()) continue;
    std::string msg = std::string(where) + ": unknown key '" + key + "'";
    const std::string hint = closest_name(key, allowed);
    if (!hint.empty()) msg += " (did you mean '" + hint + "'?)";
    throw InputError(located(origin, yaml_line(kv.first), msg));
  }
}

}  // namespace detail
}  // namespace firmcall
