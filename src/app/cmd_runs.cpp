// `firmcall runs`: the runs recorded in the history store.
#include <memory>

#include "commands.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

void add_runs_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<StoreReadOptions>();
  CLI::App* cmd = app.add_subcommand("runs", "List the runs recorded in the history store (score --record)");
  add_store_read_options(cmd, *opts, false);
  set_action(cmd, run, [opts, &global] {
    const RunStore store = open_store(opts->db, global.config());
    std::string text;
    write_runs_report(store.path(), store.runs(), opts->out.format, text);
    write_output(opts->out.output, text);
    return kExitOk;
  });
}

}  // namespace firmcall::cli
