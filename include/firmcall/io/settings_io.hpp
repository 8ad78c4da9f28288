// The settings reader: config/firmcall.yaml and files given with --config.
#pragma once

#include <string>

#include "firmcall/book/settings.hpp"

namespace firmcall {

/// Reads a configuration file; unknown keys and bad values are errors (InputError naming the
/// file and key). Keys not present keep the built-in defaults.
Config load_config(const std::string& path);

/// Parses configuration text (the same rules); `origin` names it in messages.
Config parse_config(const std::string& yaml_text, const std::string& origin);

}  // namespace firmcall
