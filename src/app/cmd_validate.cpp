// `firmcall validate OUTCOMES`: discrimination, calibration and stability of PDs against observed
// defaults (docs/validation.md).
#include <memory>

#include "commands.hpp"
#include "firmcall/engine/validate_book.hpp"
#include "firmcall/io/outcomes_io.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/monitor/monitor_output.hpp"
#include "firmcall/monitor/store_outcomes.hpp"

namespace firmcall::cli {

namespace {

struct ValidateCli {
  std::string outcomes;
  std::string pd_column = "pd";
  std::string compare_column;
  std::string against;
  std::string curves;
  std::string db;
  std::string defaults;
  double horizon_years = 1.0;
  std::string migration;  // --migration FROM,TO: grade migration between two runs of the store
  OutputOptions out;
};

// `validate --migration FROM,TO`: the grade migration and PSI of two runs of the store.
ExitCode run_migration_command(const ValidateCli& o, const Config& config) {
  if (!o.outcomes.empty() || !o.defaults.empty() || !o.against.empty() || !o.curves.empty() ||
      o.pd_column != "pd" || !o.compare_column.empty()) {
    throw InputError(
        "validate --migration: compares two runs of the history store on their driving PDs; give no "
        "OUTCOMES file, --defaults, --against, --curves, --pd-column or --compare-column");
  }
  const std::size_t comma = o.migration.find(',');
  if (comma == std::string::npos || o.migration.find(',', comma + 1) != std::string::npos) {
    throw InputError("--migration: expected two runs FROM,TO (run ids or as-of dates), got '" + o.migration +
                     "'");
  }
  const RunStore store = open_store(o.db, config);
  const RunMigration m =
      run_grade_migration(store, o.migration.substr(0, comma), o.migration.substr(comma + 1), config.grades);
  std::string text;
  write_run_migration_report(store.path(), m, o.out.format, text);
  write_output(o.out.output, text);
  return kExitOk;
}

ExitCode run_validate_command(const ValidateCli& o, const GlobalOptions& global) {
  const Config config = global.config();
  if (!o.migration.empty()) return run_migration_command(o, config);
  OutcomeReadOptions read;
  read.pd_column = o.pd_column;
  read.compare_column = o.compare_column;
  read.keep_ids = !o.against.empty();
  if (o.outcomes.empty() == o.defaults.empty()) {
    throw InputError("validate: give either an OUTCOMES file or --defaults FILE (with --db STORE)");
  }
  if (!o.defaults.empty() &&
      ((o.pd_column != "pd" && o.pd_column != "pd_calibrated") || !o.compare_column.empty())) {
    throw InputError(
        "validate: with --defaults, --pd-column is pd or pd_calibrated; --compare-column applies to an "
        "OUTCOMES file");
  }
  // Every input is read and every statistic computed before any output is written.
  std::vector<std::string> store_notes;
  const OutcomeSample sample = [&] {
    if (o.defaults.empty()) return load_outcomes(o.outcomes, read, config.grades);
    const DefaultDates dates = load_default_dates(o.defaults);
    const RunStore store = open_store(o.db, config);
    StoreOutcomeCounts counts;
    OutcomeSample s = outcomes_from_store(
        store, dates, StoreOutcomeOptions{.horizon_years = o.horizon_years, .pd_column = o.pd_column},
        config.grades, &counts);
    store_notes.push_back(store.path() + ": " + std::to_string(counts.runs) + " runs; left out " +
                          std::to_string(counts.defaulted_before) +
                          " obligor entries defaulted on or before "
                          "the as-of date, " +
                          std::to_string(counts.not_scored) + " not scored");
    return s;
  }();
  std::unique_ptr<OutcomeSample> earlier;
  if (!o.against.empty()) {
    OutcomeReadOptions other = read;
    other.compare_column.clear();
    earlier = std::make_unique<OutcomeSample>(load_outcomes(o.against, other, config.grades));
  }
  const ValidationRun run = run_validation(sample, earlier.get(), !o.curves.empty());
  OutputSet outputs;
  OutputFile& out = outputs.add("-o", o.out.output);
  write_validation(run, o.out.format, [&out](std::string_view s) { out.write(s); });
  if (!o.curves.empty()) {
    OutputFile& curves = outputs.add("--curves", o.curves);
    write_validation_curves(run, [&curves](std::string_view s) { curves.write(s); });
  }
  outputs.commit();
  if (!global.quiet) {
    std::vector<std::string> notes = sample.notes;
    notes.insert(notes.end(), store_notes.begin(), store_notes.end());
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
                  "Outcomes CSV: id, pd, defaulted (0/1), optional grade, as_of, segment (or use --defaults)")
      ->check(CLI::ExistingFile);
  add_db_option(cmd, o->db);
  cmd->add_option("--defaults", o->defaults,
                  "Defaults CSV (id, default_date YYYY-MM-DD): build the outcomes from every run recorded "
                  "in the history store instead of an OUTCOMES file")
      ->check(CLI::ExistingFile);
  cmd->add_option("--horizon", o->horizon_years,
                  "With --defaults: years after each run's as-of date in which a default counts "
                  "(365.25 days a year; default 1)");
  cmd->add_option("--pd-column", o->pd_column, "Column of the PD under test (default: pd)");
  cmd->add_option("--compare-column", o->compare_column,
                  "A second PD column on the same rows: DeLong's test of the two AUCs");
  cmd->add_option("--against", o->against,
                  "An earlier outcomes file: population stability index and grade migration (matched on id)")
      ->check(CLI::ExistingFile);
  cmd->add_option("--curves", o->curves,
                  "Write the ROC and CAP points to this CSV file (pd_threshold, false_positive_rate, "
                  "true_positive_rate, population_fraction, defaults_fraction)");
  cmd->add_option("--migration", o->migration,
                  "FROM,TO: grade migration matrix and PSI between two runs of the history store (run ids "
                  "or as-of dates, as firmcall runs lists them)");
  add_output_options(cmd, o->out);
  cmd->footer(
      std::string("\nExit codes: 0 validated; 2 unreadable or malformed file (nothing written) or bad "
                  "command line.\n\n") +
      kCaution);
  set_action(cmd, run, [o, &global] { return run_validate_command(*o, global); });
}

}  // namespace firmcall::cli
