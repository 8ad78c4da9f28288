// `firmcall validate OUTCOMES`: discrimination, calibration and stability of PDs against observed
// defaults (docs/validation.md).
#include <memory>

#include "commands.hpp"
#include "firmcall/engine/validate_book.hpp"
#include "firmcall/io/outcomes_io.hpp"
#include "firmcall/io/output_file.hpp"

namespace firmcall::cli {

namespace {

struct ValidateCli {
  std::string outcomes;
  std::string pd_column = "pd";
  std::string compare_column;
  std::string against;
  OutputOptions out;
};

ExitCode run_validate_command(const ValidateCli& o, const GlobalOptions& global) {
  const Config config = global.config();
  OutcomeReadOptions read;
  read.pd_column = o.pd_column;
  read.compare_column = o.compare_column;
  read.keep_ids = !o.against.empty();
  // Both files are read and every statistic computed before any output is written.
  const OutcomeSample sample = load_outcomes(o.outcomes, read, config.grades);
  std::unique_ptr<OutcomeSample> earlier;
  if (!o.against.empty()) {
    OutcomeReadOptions other = read;
    other.compare_column.clear();
    earlier = std::make_unique<OutcomeSample>(load_outcomes(o.against, other, config.grades));
  }
  const ValidationRun run = run_validation(sample, earlier.get());
  OutputFile out(o.out.output);
  write_validation(run, o.out.format, [&out](std::string_view s) { out.write(s); });
  out.commit();
  if (!global.quiet) {
    std::vector<std::string> notes = sample.notes;
    if (earlier) notes.insert(notes.end(), earlier->notes.begin(), earlier->notes.end());
    print_run_notes(notes, {}, 0, o.out,
                    "validated PD column '" + run.pd_column + "' on " + std::to_string(sample.pd.size()) +
                        " observations: AUC " + brief(run.discrimination.auc) + " [" +
                        brief(run.discrimination.auc_lower) + ", " + brief(run.discrimination.auc_upper) +
                        "]");
  }
  return kExitOk;
}

}  // namespace

void add_validate_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto o = std::make_shared<ValidateCli>();
  CLI::App* cmd = app.add_subcommand(
      "validate",
      "Validation and backtesting of PDs against observed defaults: AUC, calibration tests, stability");
  cmd->add_option("outcomes", o->outcomes,
                  "Outcomes CSV: id, pd, defaulted (0/1), optional grade, as_of, segment")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--pd-column", o->pd_column, "Column of the PD under test (default: pd)");
  cmd->add_option("--compare-column", o->compare_column,
                  "A second PD column on the same rows: DeLong's test of the two AUCs");
  cmd->add_option("--against", o->against,
                  "An earlier outcomes file: population stability index and grade migration (matched on id)")
      ->check(CLI::ExistingFile);
  add_output_options(cmd, o->out);
  cmd->footer(
      std::string("\nExit codes: 0 validated; 2 unreadable or malformed file (nothing written) or bad "
                  "command line.\n\n") +
      kCaution);
  set_action(cmd, run, [o, &global] { return run_validate_command(*o, global); });
}

}  // namespace firmcall::cli
