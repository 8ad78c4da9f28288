// `firmcall runs`: the runs recorded in the history store.
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

void add_runs_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<StoreReadOptions>();
  CLI::App* cmd = app.add_subcommand("runs", "List the runs recorded in the history store (score --record)");
  add_store_read_options(cmd, *opts, false);
  cmd->callback([opts, &global, &run]() {
    run = [opts, &global]() -> int {
      const Config config = global.config();
      const RunStore store(resolve_store_path(opts->db, config.monitor), StoreOpen::existing,
                           config.monitor.busy_timeout_seconds);
      std::string text;
      write_runs_report(store.path(), store.runs(), output_format(opts->format), text);
      OutputFile out(opts->output);
      out.write(text);
      out.commit();
      return kExitOk;
    };
  });
}

}  // namespace firmcall::cli
