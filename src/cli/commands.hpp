// Command-line wiring: each command adds itself to the CLI11 app and returns an exit code when run.
#pragma once

#include <CLI/CLI.hpp>

#include <functional>
#include <string>

#include "firmcall/settings.hpp"
#include "firmcall/term_run.hpp"

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

/// Adds the PD term-structure options (shared by score and stress) to a command.
inline void add_term_options(CLI::App* cmd, TermChoices& c) {
  cmd->add_option("--horizons", c.horizons,
                  "PD term structure at these horizons in years, e.g. 0.5,1,2,3,5,7,10 (one row per obligor, "
                  "model and horizon)");
  cmd->add_option("--model", c.model,
                  "merton (default), first-passage (Black-Cox barrier) or both, side by side");
  cmd->add_option("--calibration", c.calibration,
                  "once (default: solve at each obligor's horizon, project the others) or per-horizon (solve "
                  "again at every horizon)");
  cmd->add_option("--barrier-ratio", c.barrier_ratio,
                  "First-passage barrier as a multiple of the default point (default 1)");
  cmd->add_option("--barrier-growth", c.barrier_growth,
                  "Growth of the first-passage barrier, continuously compounded decimal a year (default 0)");
}

void add_score_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);
void add_history_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);
void add_stress_command(CLI::App& app, const GlobalOptions& global, CommandRun& run);

}  // namespace firmcall::cli
