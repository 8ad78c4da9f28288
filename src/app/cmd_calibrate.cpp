// `firmcall calibrate HISTORY`: fits a map from distance to default to one-year PD on a default
// history (docs/calibration.md) and writes the fit; --save writes the calibration file that
// `score --pd-calibration` applies.
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/calibration_book.hpp"
#include "firmcall/io/output_file.hpp"

namespace firmcall::cli {

namespace {
struct CalibrateCli {
  std::string history;
  std::string method = "logistic";
  std::string save;
  OutputOptions out;
  CalibrationOptions fit;
  ScoringOptions scoring;  // --rate, --horizon, --default-point-weight, --measure: as for score
};

bool any_scoring_option(const ScoringOptions& o) {
  return o.rate || o.horizon || o.weight || !o.measure.empty();
}

ExitCode run_calibrate(const CalibrateCli& opts, const GlobalOptions& global) {
  CalibrationOptions fit = opts.fit;
  if (!parse_calibration_method(opts.method, fit.method)) {
    throw InputError("--method: expected logistic, isotonic or binned, got '" + opts.method + "'");
  }
  if (const OptionCheck bad = fit.validate()) {
    throw InputError((bad->field == "bins" ? "--bins" : "--level") + std::string(": ") + bad->constraint +
                     ", got " + bad->value);
  }
  const DefaultHistory history = read_default_history(opts.history);
  if (!history.dd_from_book_fields() && any_scoring_option(opts.scoring)) {
    throw InputError(
        "--rate, --horizon, --default-point-weight, --measure: apply only to a history of book fields "
        "(without a distance_to_default column)");
  }
  // A history of book fields is scored with the settings file and these options, as score would.
  const CalibrationRecord rec =
      history.dd_from_book_fields()
          ? calibrate_history(history, fit, scoring_settings(global.config().score, opts.scoring))
          : calibrate_history(history, fit);
  // Both files are complete before either is committed.
  std::unique_ptr<OutputFile> saved;
  if (!opts.save.empty()) {
    saved = std::make_unique<OutputFile>(opts.save);
    saved->write(calibration_yaml(rec));
  }
  OutputFile out(opts.out.output);
  out.write(calibration_report(rec, opts.out.format, opts.history));
  if (saved) saved->commit();
  out.commit();
  if (!global.quiet) {
    print_lines(history.notes);
    if (opts.out.wants_closing_line() || !opts.save.empty()) {
      std::cerr << "firmcall: " << to_string(fit.method) << " calibration of " << rec.calibration.observations
                << " obligor-years (" << rec.calibration.defaults << " defaults): one-year calibrated PD"
                << (opts.save.empty() ? std::string() : "; saved to " + opts.save) << "\n";
    }
  }
  return kExitOk;
}
}  // namespace

void add_calibrate_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<CalibrateCli>();
  CLI::App* cmd = app.add_subcommand(
      "calibrate", "Calibrate distance to default to observed defaults (one-year PD) from a default history");
  cmd->add_option("history", opts->history,
                  "Default history CSV: id, as_of, distance_to_default (or the book columns of a score "
                  "book, from which the DD is computed), defaulted (0/1 within one year), optional weight")
      ->required();
  cmd->add_option("--method", opts->method, "logistic (default), isotonic or binned")
      ->check(CLI::IsMember({"logistic", "isotonic", "binned"}));
  cmd->add_option("--bins", opts->fit.bins, "binned: number of DD bands of about equal counts (default 10)");
  cmd->add_option("--level", opts->fit.confidence_level,
                  "Two-sided confidence level of the intervals (default 0.95)");
  cmd->add_option("--save", opts->save, "Write the calibration file (YAML) for score --pd-calibration");
  add_scoring_options(cmd, opts->scoring, "History of book fields: horizon in years for every row");
  add_output_options(cmd, opts->out);
  cmd->footer(
      "\nExit codes: 0 calibrated; 2 unreadable or malformed history, unusable fit or bad command line.\n\n" +
      std::string(kCaution));
  set_action(cmd, run, [opts, &global] { return run_calibrate(*opts, global); });
}

}  // namespace firmcall::cli
