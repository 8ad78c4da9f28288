// `firmcall attribute`: why each PD moved between two recorded runs (exact Shapley values).
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/movers.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

namespace {
struct AttributeCli {
  StoreReadOptions store;
  std::vector<std::string> obligors;
  unsigned threads = 0;
};
}  // namespace

void add_attribute_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<AttributeCli>();
  CLI::App* cmd = app.add_subcommand("attribute",
                                     "Why PDs moved between two runs: each change split over equity value, "
                                     "equity volatility, default point, "
                                     "rate and horizon");
  add_store_read_options(cmd, opts->store, true);
  cmd->add_option("--obligor", opts->obligors, "Only this obligor id (repeat for more)");
  cmd->add_option("-j,--threads", opts->threads, "Worker threads (default: all cores)")
      ->check(CLI::Range(1, 1024));
  cmd->footer(
      "\nThe shares are exact Shapley values: each driver's effect averaged over every order of moving the\n"
      "drivers from their old to their new values, re-solving the Merton model for each mix. They add up\n"
      "to the PD change. The drift moves with the rate when it equals the rate in both runs; a drift that\n"
      "changed on its own is a sixth driver.\n\n" +
      std::string(kCaution));
  cmd->callback([opts, &global, &run]() {
    run = [opts, &global]() -> int {
      const Config config = global.config();
      const RunStore store(resolve_store_path(opts->store.db, config.monitor), StoreOpen::existing,
                           config.monitor.busy_timeout_seconds);
      const RunPair pair = select_runs(store, opts->store.run, opts->store.against);
      const auto before = store.obligors(pair.before.run_id, false);
      const auto now = store.obligors(pair.now.run_id, false);
      const Comparison c = compare_runs(before, now, config.grades, config.monitor.alerts);
      for (const std::string& id : opts->obligors) {
        bool found = false;
        for (const Mover& m : c.movers) found = found || m.id == id;
        if (!found) {
          throw InputError("--obligor: '" + id + "' is in neither run " + std::to_string(pair.before.run_id) +
                           " nor run " + std::to_string(pair.now.run_id));
        }
      }
      const unsigned threads = opts->threads > 0 ? opts->threads : default_threads();
      const auto rows = attribute_movers(c, opts->obligors, config.score.solver, threads);
      std::size_t attributable = 0;
      for (const Mover& m : c.movers) {
        if (m.kind != MoveKind::continuing) continue;
        bool wanted = opts->obligors.empty();
        for (const std::string& id : opts->obligors) wanted = wanted || id == m.id;
        if (wanted) ++attributable;
      }
      const std::size_t left_out = attributable - rows.size();
      std::string text;
      write_attribution_report(pair, rows, left_out, config.grades, output_format(opts->store.format), text);
      OutputFile out(opts->store.output);
      out.write(text);
      out.commit();
      if (!global.quiet && left_out > 0 && opts->store.format != "table") {
        std::cerr << "firmcall: " << left_out << " obligors in both runs were not scored in both; left out\n";
      }
      return kExitOk;
    };
  });
}

}  // namespace firmcall::cli
