// `firmcall watchlist`: the obligors that meet an alert rule between two recorded runs.
#include <memory>

#include "commands.hpp"

namespace firmcall::cli {

namespace {
struct WatchlistCli {
  StoreReadOptions store;
  std::size_t top = 0;
};
}  // namespace

void add_watchlist_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<WatchlistCli>();
  CLI::App* cmd = app.add_subcommand(
      "watchlist", "Obligors that meet an alert rule (settings: monitoring.alerts), most severe first");
  add_store_read_options(cmd, opts->store, true);
  cmd->add_option("--top", opts->top, "Show at most N obligors (default: all)")
      ->check(whole_number(0, 1000000000));
  cmd->footer(
      "\nAlerts: dd_drop (DD fell by more than dd_drop), pd_jump (PD grew more than pd_ratio times, to at\n"
      "least pd_ratio_min_pd), downgrade (grade worse by downgrade_notches or more), pd_ceiling (PD above\n"
      "pd_ceiling), not_scored (in the run but not scored). Severity: how many fire.\n\n" +
      std::string(kCaution));
  set_action(cmd, run, [opts, &global] { return run_movers(global.config(), opts->store, opts->top, true); });
}

}  // namespace firmcall::cli
