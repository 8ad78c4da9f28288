// `firmcall track ID`: one obligor's distance to default, PD and grade over the recorded runs.
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

namespace {
struct TrackCli {
  StoreReadOptions store;
  std::string id;
};
}  // namespace

void add_track_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<TrackCli>();
  CLI::App* cmd =
      app.add_subcommand("track", "One obligor's distance to default, PD and grade in every recorded run");
  cmd->add_option("id", opts->id, "Obligor id")->required();
  add_store_read_options(cmd, opts->store, false);
  cmd->footer(std::string("\n") + kCaution);
  set_action(cmd, run, [opts, &global] {
    const Config config = global.config();
    const RunStore store = open_store(opts->store.db, config);
    const auto series = store.series(opts->id);
    if (series.empty()) {
      throw InputError("history store '" + store.path() + "': obligor '" + opts->id +
                       "' is in no recorded run");
    }
    std::string text;
    write_track_report(opts->id, series, config.grades, opts->store.out.format, text);
    write_output(opts->store.out.output, text);
    return kExitOk;
  });
}

}  // namespace firmcall::cli
