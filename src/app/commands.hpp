// Command-line wiring: each command adds itself to the CLI11 app and returns an exit code when run.
#pragma once

#include <CLI/CLI.hpp>

#include <functional>
#include <string>

#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/io/settings_io.hpp"

#ifndef FIRMCALL_VERSION
#define FIRMCALL_VERSION "dev"
#endif

namespace firmcall::cli {

/// Options shared by every command.
struct GlobalOptions {
  std::string config_path;  ///< --config; empty: built-in defaults (equal to config/firmcall.yaml)
  bool quiet = false;       ///< --quiet: no notes or progress on stderr
  /// Loads the configuration named by --config (or the built-in defaults).
  Config config() const;
};

/// Output format from its --format word.
inline OutputFormat output_format(const std::string& word) {
  return word == "csv" ? OutputFormat::csv : word == "json" ? OutputFormat::json : OutputFormat::table;
}

/// A command's body, run after parsing; returns the process exit code.
using CommandAction = std::function<int()>;

/// The caution printed in --help and the README.
inline constexpr const char* kCaution =
    "Caution: firmcall's figures are model estimates under stated assumptions (Merton 1974 and its\n"
    "extensions), not a credit decision on their own. Use them within your institution's model-risk\n"
    "policy and the regulation that applies to you.";

/// Worker threads when -j is not given: all cores (cmd_score.cpp).
unsigned default_threads();
/// Adds the PD term-structure options (shared by score and stress) to a command.
inline void add_term_options(CLI::App* cmd, TermOptionText& c) {
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

void add_score_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_history_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_stress_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_runs_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_movers_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_watchlist_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_attribute_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_track_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);

/// Options shared by the commands that read the history store.
struct StoreReadOptions {
  std::string db;  ///< --db
  std::string format = "table";
  std::string output;   ///< -o
  std::string run;      ///< --run (comparisons)
  std::string against;  ///< --against (comparisons)
};

/// Adds --db, --format and --output to a command reading the store; with `runs`, also --run and
/// --against.
inline void add_store_read_options(CLI::App* cmd, StoreReadOptions& o, bool runs) {
  cmd->add_option("--db", o.db,
                  "History store file (default: monitoring.store, else the user's data folder)");
  cmd->add_option("-f,--format", o.format, "Output format: table (for people), csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  cmd->add_option("-o,--output", o.output, "Write here instead of standard output (all or nothing)");
  if (!runs) return;
  const auto selector = CLI::Validator(
      [](std::string& s) -> std::string {
        if (s.find_first_not_of("0123456789") == std::string::npos && !s.empty() && s.size() <= 18) return {};
        if (s.size() == 10 && s[4] == '-' && s[7] == '-') return {};  // dates are checked by the store
        return "expected a run id or an as-of date YYYY-MM-DD, got '" + s + "'";
      },
      "ID|DATE");
  cmd->add_option("--run", o.run,
                  "The run to look at: a run id or an as-of date YYYY-MM-DD (default: the latest)")
      ->check(selector);
  cmd->add_option("--against", o.against,
                  "The run to compare with: a run id or an as-of date (default: the run before --run)")
      ->check(selector);
}

/// `firmcall movers` and `firmcall watchlist` (only obligors with an alert): compares the runs the
/// options select and writes the report; returns the exit code.
int run_movers(const Config& config, const StoreReadOptions& store, std::size_t top, bool watchlist);
void add_portfolio_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);
void add_report_command(CLI::App& app, const GlobalOptions& global, CommandAction& run);

}  // namespace firmcall::cli
