// Small helpers for reading YAML files with errors that name the file, line and key.
#pragma once

#include <yaml-cpp/yaml.h>

#include <initializer_list>
#include <string>
#include <string_view>
#include <vector>

namespace firmcall::detail {

/// Line (1-based) of a node, or 0 when yaml-cpp has no mark for it.
std::size_t yaml_line(const YAML::Node& node);

/// Parses a YAML document; syntax errors become InputError("file:line: ..."), and so does a
/// second document (after `---`), which would otherwise be ignored silently.
YAML::Node yaml_load(const std::string& text, const std::string& origin);

/// Reads a file into a string; InputError when it cannot be read.
std::string read_text_file(const std::string& path);

/// The same, refusing (before reading) a file larger than `max_bytes` with an InputError naming
/// the file, its size and the cap; `what` names the kind of file ("scenario file").
std::string read_text_file(const std::string& path, std::size_t max_bytes, std::string_view what);

/// Scalar as a finite double; InputError naming origin, line and key otherwise.
double yaml_number(const YAML::Node& node, const std::string& origin, std::string_view key);

/// Scalar as a string; InputError unless the node is a scalar.
std::string yaml_string(const YAML::Node& node, const std::string& origin, std::string_view key);

/// Throws InputError for the first key of a map not in `allowed` (with a suggestion when one
/// allowed key is close), or when `node` is not a map.
void yaml_check_keys(const YAML::Node& node, std::initializer_list<std::string_view> allowed,
                     const std::string& origin, std::string_view where);

/// The closest candidate by edit distance when it is within 2 edits, else empty.
std::string closest_name(std::string_view name, std::initializer_list<std::string_view> candidates);
/// The same for a run-time list of candidates (e.g. the sector names of a book).
std::string closest_name(std::string_view name, const std::vector<std::string>& candidates);

}  // namespace firmcall::detail
