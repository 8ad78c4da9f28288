// Command-line wiring: each command adds itself to the CLI11 app and returns an exit code when run.
#pragma once

#include <CLI/CLI.hpp>

#include <cstddef>
#include <functional>
#include <string>
#include <utility>

#include "common_options.hpp"
#include "exit_codes.hpp"
#include "firmcall/io/settings_io.hpp"
#include "firmcall/portfolio/scenario_exchange.hpp"

#ifndef FIRMCALL_VERSION
#define FIRMCALL_VERSION "dev"
#endif

namespace firmcall::cli {

/// Options shared by every command.
struct GlobalOptions {
  std::string config_path;  ///< --config; empty: built-in defaults (equal to config/firmcall.yaml)
  bool quiet = false;       ///< --quiet: no notes or progress on stderr
  /// The processes a portfolio simulation is shared with (mpirun); nullptr: this one alone.
  ScenarioExchange* exchange = nullptr;
  bool writes_outputs = true;  ///< false on every process of an mpirun but the root
  /// Loads the configuration named by --config (or the built-in defaults).
  Config config() const;
};

/// A command's body, run after parsing; returns the process exit code.
using CommandAction = std::function<ExitCode()>;

/// Makes `action` the body to run when `cmd` is the command given.
inline void set_action(CLI::App* cmd, CommandAction& run, CommandAction action) {
  cmd->callback([&run, action = std::move(action)]() { run = action; });
}

/// The caution printed in --help and the README.
inline constexpr const char* kCaution =
    "Caution: firmcall's figures are model estimates under stated assumptions (Merton 1974 and its\n"
    "extensions), not a credit decision on their own. Use them within your institution's model-risk\n"
    "policy and the regulation that applies to you.";

void add_score_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_history_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_stress_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_runs_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_movers_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_watchlist_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_attribute_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_track_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_portfolio_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_report_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_validate_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_calibrate_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);

/// `firmcall movers` and `firmcall watchlist` (only obligors with an alert): compares the runs the
/// options select and writes the report; returns the exit code.
ExitCode run_movers(const Config& config, const StoreReadOptions& store, std::size_t top, bool watchlist);

}  // namespace firmcall::cli
