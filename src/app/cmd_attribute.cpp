// `firmcall attribute`: why each PD moved between two recorded runs (exact Shapley values).
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
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

bool is_wanted(const std::vector<std::string>& obligors, const std::string& id) {
  if (obligors.empty()) return true;
  for (const std::string& wanted : obligors) {
    if (wanted == id) return true;
  }
  return false;
}

// InputError for an --obligor id that is in neither run.
void check_obligors(const std::vector<std::string>& obligors, const Comparison& c, const RunPair& pair) {
  for (const std::string& id : obligors) {
    bool found = false;
    for (const Mover& m : c.movers) found = found || m.id == id;
    if (!found) {
      throw InputError("--obligor: '" + id + "' is in neither run " + std::to_string(pair.before.run_id) +
                       " nor run " + std::to_string(pair.now.run_id));
    }
  }
}

ExitCode run_attribute(const AttributeCli& opts, const GlobalOptions& global) {
  const Config config = global.config();
  const RunStore store = open_store(opts.store.db, config);
  const RunPair pair = select_runs(store, opts.store.run, opts.store.against);
  const auto before = store.obligors(pair.before.run_id, false);
  const auto now = store.obligors(pair.now.run_id, false);
  const Comparison c = compare_runs(before, now, config.grades, config.monitor.alerts);
  check_obligors(opts.obligors, c, pair);
  const auto rows = attribute_movers(c, opts.obligors, config.score.solver, thread_count(opts.threads));
  std::size_t attributable = 0;
  for (const Mover& m : c.movers) {
    if (m.kind == MoveKind::continuing && is_wanted(opts.obligors, m.id)) ++attributable;
  }
  const std::size_t left_out = attributable - rows.size();
  std::string text;
  write_attribution_report(pair, rows, left_out, config.grades, opts.store.out.format, text);
  write_output(opts.store.out.output, text);
  if (!global.quiet && left_out > 0 && opts.store.out.format != OutputFormat::table) {
    std::cerr << "firmcall: " << left_out << " obligors in both runs were not scored in both; left out\n";
  }
  return kExitOk;
}
}  // namespace

void add_attribute_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<AttributeCli>();
  CLI::App* cmd = app.add_subcommand("attribute",
                                     "Why PDs moved between two runs: each change split over equity value, "
                                     "equity volatility, default point, "
                                     "rate and horizon");
  add_store_read_options(cmd, opts->store, true);
  cmd->add_option("--obligor", opts->obligors, "Only this obligor id (repeat for more)")
      ->allow_extra_args(false);
  add_threads_option(cmd, opts->threads);
  cmd->footer(
      "\nThe shares are exact Shapley values: each driver's effect averaged over every order of moving the\n"
      "drivers from their old to their new values, re-solving the Merton model for each mix. They add up\n"
      "to the PD change. The drift moves with the rate when it equals the rate in both runs; a drift that\n"
      "changed on its own is a sixth driver.\n\n" +
      std::string(kCaution));
  set_action(cmd, run, [opts, &global] { return run_attribute(*opts, global); });
}

}  // namespace firmcall::cli
