// firmcall command-line entry point: parses the command line and maps each class of failure to its
// exit code (exit_codes.hpp and README.md): a bad command line or an InputError from the library
// to 2 (option and store errors worded as on the command line, command_line_errors.hpp), any other
// exception to 3; a command that ran returns 0 or 1 from its row statuses.
#include <cstdio>
#include <exception>
#include <iostream>

#include "command_line_errors.hpp"
#include "commands.hpp"
#include "exit_codes.hpp"
#include "firmcall/book/errors.hpp"

#ifndef FIRMCALL_VERSION
#define FIRMCALL_VERSION "dev"
#endif

namespace firmcall::cli {

Config GlobalOptions::config() const {
  return config_path.empty() ? Config{} : load_config(config_path);
}

namespace {
// Says why the command failed, after what it wrote to standard output; returns `code`.
int failed(const char* kind, const std::string& message, ExitCode code) {
  std::fflush(stdout);
  std::cerr << "firmcall: " << kind << message << "\n";
  return code;
}
}  // namespace

}  // namespace firmcall::cli

int main(int argc, char** argv) {
  using namespace firmcall;
  using namespace firmcall::cli;
  CLI::App app{
      "firmcall: structural credit risk from equity markets (Merton model).\n"
      "Backs out asset value and asset volatility from equity value and volatility, then reports\n"
      "distance to default, default probability, credit spread and debt value per obligor."};
  app.footer(std::string("\n") + cli::kCaution);
  app.set_version_flag("--version", std::string("firmcall ") + FIRMCALL_VERSION);
  app.require_subcommand(1);
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
  cli::add_calibrate_command(app, global, run);

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? kExitOk : kExitInputError;
  }
  try {
    return run ? run() : kExitInputError;
  } catch (const StoreError& e) {
    return cli::failed("error: ", command_line_message(e), kExitInputError);
  } catch (const OptionError& e) {
    return cli::failed("error: ", command_line_message(e), kExitInputError);
  } catch (const InputError& e) {
    return cli::failed("error: ", e.what(), kExitInputError);
  } catch (const std::exception& e) {
    return cli::failed("internal error: ", e.what(), kExitInternal);
  }
}
