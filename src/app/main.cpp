// firmcall command-line entry point: parses the command line and maps each class of failure to its
// exit code (exit_codes.hpp and README.md): a bad command line or an InputError from the library
// to 2 (option and store errors worded as on the command line, command_line_errors.hpp), any other
// exception to 3, except running out of memory, which says which command on which input ran out
// (exit 2); a command that ran returns 0 or 1 from its row statuses. SIGINT, SIGTERM and SIGHUP
// remove the run's temporary output files (io/output_file.hpp). Under mpirun (a build with
// FIRMCALL_MPI, cluster/process_group.hpp) only the root writes and reports; the other processes
// take part in the portfolio simulation, and the run's outcome is the first failure by rank.
#include <sys/stat.h>

#include <cstdio>
#include <exception>
#include <iostream>
#include <new>

#include "cluster/process_group.hpp"
#include "command_line_errors.hpp"
#include "commands.hpp"
#include "exit_codes.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/io/output_file.hpp"

#include "build_commit.hpp"  // FIRMCALL_COMMIT, written at build time

#ifndef FIRMCALL_VERSION
#define FIRMCALL_VERSION "dev"
#endif

namespace firmcall::cli {

Config GlobalOptions::config() const {
  return config_path.empty() ? Config{} : load_config(config_path);
}

namespace {
// How a run ended: its exit code and, when it failed, what to say after "firmcall: ".
struct Ended {
  int code = kExitOk;
  std::string message;
};

Ended failed(const char* kind, const std::string& message, ExitCode code) {
  return {code, kind + terminal_lines(message)};  // ids from files may hold controls
}

// Says why the run failed, after what it wrote to standard output.
void report(const std::string& message) {
  if (message.empty()) return;
  std::fflush(stdout);
  std::cerr << "firmcall: " << message << "\n";
}

// "firmcall: error: out of memory in 'score' on big.csv (2.1 GB) ...": the command, its input (the
// first positional argument) and the input's size, and what to try.
Ended out_of_memory(const CLI::App& app) {
  std::string command = "firmcall";
  std::string input;
  for (const CLI::App* sub : app.get_subcommands()) {
    command = sub->get_name();
    for (const CLI::Option* opt : sub->get_options()) {
      if (opt->get_positional() && !opt->results().empty()) {
        input = opt->results().front();
        break;
      }
    }
  }
  std::string message = "out of memory in '" + command + "'";
  if (!input.empty()) {
    message += " on " + input;
    struct stat st {};
    if (::stat(input.c_str(), &st) == 0 && S_ISREG(st.st_mode)) {
      char size[48];
      std::snprintf(size, sizeof size, " (%.3g MB)", static_cast<double>(st.st_size) / 1e6);
      message += size;
    }
  }
  message +=
      "; no output file was replaced. Try a smaller input (split the book), fewer threads (-j 1), or "
      "more memory (ulimit -v, the container's limit)";
  return failed("error: ", message, kExitInputError);
}
}  // namespace

}  // namespace firmcall::cli

namespace firmcall::cli {
namespace {
// Parses the command line and runs the command; `root`: the process that prints and writes.
Ended parse_and_run(CLI::App& app, GlobalOptions& global, const CommandAction& run, int argc, char** argv,
                    bool root) {
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    if (!root) return {e.get_exit_code() == 0 ? kExitOk : kExitInputError, {}};
    const int code = app.exit(e);
    return {code == 0 ? kExitOk : kExitInputError, {}};
  }
  if (!root) {
    global.quiet = true;
    // Only the portfolio simulation is shared; every other command runs on the root alone.
    if (!app.got_subcommand("portfolio")) return {kExitOk, {}};
  }
  firmcall::remove_partial_outputs_on_signal();
  try {
    const int code = run ? run() : kExitInputError;
    if (!global.quiet) cli::print_csv_formula_note();
    return {code, {}};
  } catch (const StoreError& e) {
    return failed("error: ", command_line_message(e), kExitInputError);
  } catch (const OptionError& e) {
    return failed("error: ", command_line_message(e), kExitInputError);
  } catch (const InputError& e) {
    return failed("error: ", e.what(), kExitInputError);
  } catch (const std::bad_alloc&) {
    return out_of_memory(app);
  } catch (const std::exception& e) {
    return failed("internal error: ", e.what(), kExitInternal);
  }
}
}  // namespace
}  // namespace firmcall::cli

int main(int argc, char** argv) {
  using namespace firmcall;
  using namespace firmcall::cli;
  cluster::ProcessGroup group(argc, argv);
  CLI::App app{
      "firmcall: structural credit risk from equity markets (Merton model).\n"
      "Backs out asset value and asset volatility from equity value and volatility, then reports\n"
      "distance to default, default probability, credit spread and debt value per obligor."};
  app.footer(std::string("\n") + cli::kCaution);
  app.set_version_flag("--version",
                       std::string("firmcall ") + FIRMCALL_VERSION + " (commit " + FIRMCALL_COMMIT + ")");
  app.require_subcommand(1);
  app.fallthrough();  // --config and -q are accepted after the command's name too
  cli::GlobalOptions global;
  app.add_option("--config", global.config_path, "Settings file (default: built-in, as config/firmcall.yaml)")
      ->check(CLI::ExistingFile);
  app.add_flag("-q,--quiet", global.quiet, "No notes or progress on standard error");

  cli::CommandAction run;
  cli::add_score_command(app, global, run);
  cli::add_history_command(app, global, run);
  cli::add_stress_command(app, global, run);
  cli::add_runs_command(app, global, run);
  cli::add_movers_command(app, global, run);
  cli::add_watchlist_command(app, global, run);
  cli::add_attribute_command(app, global, run);
  cli::add_track_command(app, global, run);
  cli::add_portfolio_command(app, global, run);
  cli::add_report_command(app, global, run);
  cli::add_validate_command(app, global, run);
  cli::add_calibrate_command(app, global, run);

  global.exchange = group.exchange();
  global.writes_outputs = group.root();
  const Ended ended = parse_and_run(app, global, run, argc, argv, group.root());
  if (group.size() == 1) {
    report(ended.message);
    return ended.code;
  }
  const cluster::ProcessGroup::Outcome outcome = group.finish(ended.code, ended.message);
  if (group.root()) report(outcome.message);
  return outcome.code;
}
