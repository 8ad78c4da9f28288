// Command-line wiring: each command adds itself to the CLI11 app and returns an exit code when run.
#pragma once

#include <CLI/CLI.hpp>

#include <functional>
#include <string>

#include "firmcall/settings.hpp"

namespace firmcall::cli {

/// Options shared by every command.
struct GlobalOptions {
  std::string config_path;  ///< --config; empty: built-in defaults (equal to config/firmcall.yaml)
  bool quiet = false;       ///< --quiet: no notes or progress on stderr
  /// Loads the configuration named by --config (or the built-in defaults).
  Config config() const;
};

/// A command's body, run after parsing; returns the process exit code.
using CommandRun = std::function<int()>;

/// The caution printed in --help and the README.
inline constexpr const char* kCaution =
    "Caution: firmcall's figures are model estimates under stated assumptions (Merton 1974 and its\n"
    "extensions), not a credit decision on their own. Use them within your institution's model-risk\n"
    "policy and the regulation that applies to you.";

void add_score_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);
void add_history_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);
void add_stress_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);
void add_portfolio_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);

}  // namespace firmcall::cli
