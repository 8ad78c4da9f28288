// `firmcall runs`: the runs recorded in the history store; `runs --remove ID` takes one out.
#include <algorithm>
#include <iostream>
#include <memory>
#include <vector>

#include "commands.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

namespace {

struct RunsCli {
  StoreReadOptions store;
  std::string remove;  // --remove: the id of the run to delete
};

// `runs --remove ID`: deletes the run and its obligors in one transaction and says what went.
ExitCode remove_run(const RunsCli& opts, const GlobalOptions& global) {
  const Config config = global.config();
  const std::string path = resolve_store_path(opts.store.db, config.monitor);
  // Checked as the reading commands check it first: an empty or foreign file is refused untouched
  // (opening for writing would make an empty file a store).
  // and an unknown id leaves an older store un-upgraded.
  const std::int64_t run_id = std::stoll(opts.remove);
  {
    const RunStore check(path, StoreOpen::read_only, config.monitor.busy_timeout_seconds);
    const std::vector<RunInfo> runs = check.runs();
    if (std::none_of(runs.begin(), runs.end(), [run_id](const RunInfo& r) { return r.run_id == run_id; })) {
      throw InputError("history store '" + path + "': no run with id " + opts.remove +
                       "; nothing was removed");
    }
  }
  // Opened for writing, as recording does (an older schema is upgraded first).
  RunStore store(path, StoreOpen::existing, config.monitor.busy_timeout_seconds);
  const RemovedRun removed = store.remove_run(run_id);
  const RunInfo& r = removed.run;
  const std::size_t remaining = store.runs().size();
  std::cout << "removed run " << r.run_id << " as of " << r.as_of << " (recorded " << r.recorded_at
            << " from " << r.book_path << ", input SHA-256 " << r.input_sha256.substr(0, 12) << "..., "
            << removed.obligor_rows << " obligors) from " << store.path() << "; " << remaining
            << (remaining == 1 ? " run remains\n" : " runs remain\n");
  return kExitOk;
}

}  // namespace

void add_runs_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<RunsCli>();
  CLI::App* cmd = app.add_subcommand("runs", "List the runs recorded in the history store (score --record)");
  add_store_read_options(cmd, opts->store, false);
  cmd->add_option("--remove", opts->remove,
                  "Delete this run (a run id) and its obligors from the store, in one transaction; the "
                  "other runs stay as they were")
      ->check(CLI::Validator(
          [](std::string& s) -> std::string {
            if (!s.empty() && s.size() <= 18 && s.find_first_not_of("0123456789") == std::string::npos)
              return {};
            return "expected a run id (digits, as listed by firmcall runs), got '" + s + "'";
          },
          "ID"));
  set_action(cmd, run, [opts, cmd, &global] {
    if (!opts->remove.empty()) {
      if (cmd->count("--format") > 0 || cmd->count("--output") > 0) {
        throw InputError("--remove: writes no listing, so it takes no --format or --output");
      }
      return remove_run(*opts, global);
    }
    const RunStore store = open_store(opts->store.db, global.config());
    std::string text;
    write_runs_report(store.path(), store.runs(), opts->store.out.format, text);
    write_output(opts->store.out.output, text);
    return kExitOk;
  });
}

}  // namespace firmcall::cli
