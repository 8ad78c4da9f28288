// `firmcall movers`: what changed between two recorded runs.
#include <memory>

#include "commands.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/movers.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

namespace {
struct MoversCli {
  StoreReadOptions store;
  std::size_t top = 0;
};
}  // namespace

ExitCode run_movers(const Config& config, const StoreReadOptions& store_options, std::size_t top,
                    bool watchlist) {
  const RunStore store = open_store(store_options.db, config);
  const RunPair pair = select_runs(store, store_options.run, store_options.against);
  const auto before = store.obligors(pair.before.run_id, false);
  const auto now = store.obligors(pair.now.run_id, false);
  const Comparison c = compare_runs(before, now, config.grades, config.monitor.alerts,
                                    comparison_basis(pair.before, pair.now));
  std::string text;
  write_movers_report(pair, c, config.grades, config.monitor.alerts, {.watchlist = watchlist, .top = top},
                      store_options.out.format, text);
  write_output(store_options.out.output, text);
  return kExitOk;
}

void add_movers_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<MoversCli>();
  CLI::App* cmd = app.add_subcommand(
      "movers",
      "Compare a recorded run with an earlier one: DD, PD and grade changes, new and dropped obligors");
  add_store_read_options(cmd, opts->store, true);
  cmd->add_option("--top", opts->top, "Show at most N obligors, most severe first (default: all)")
      ->check(whole_number(0, 1000000000));
  cmd->footer(std::string("\n") + kCaution);
  set_action(cmd, run,
             [opts, &global] { return run_movers(global.config(), opts->store, opts->top, false); });
}

}  // namespace firmcall::cli
