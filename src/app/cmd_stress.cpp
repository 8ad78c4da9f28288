// `firmcall stress BOOK`: stress scenarios, quick grids and reverse stress.
#include <cmath>
#include <cstdio>
#include <iostream>
#include <memory>
#include <optional>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/engine/term_stress_book.hpp"
#include "firmcall/io/calibration_io.hpp"
#include "firmcall/io/fx_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/io/scenario.hpp"

namespace firmcall::cli {

namespace {
struct StressCli {
  std::string book;
  std::string scenarios;
  std::vector<double> equity_shocks;
  std::vector<double> vol_multipliers;
  std::optional<double> reverse_pd;
  std::optional<double> pd_threshold;
  bool sensitivities = false;
  OutputOptions out;
  std::string summary_output;
  ScoringOptions scoring;
  unsigned threads = 0;
  TermOptionText term;
  std::string pd_calibration;  // --pd-calibration: calibration file (calibrate --save)
  std::string driving_pd;      // --driving-pd: model or calibrated (default: calibrated with a calibration)
  std::string hold;            // --hold: asset-vol or equity-vol (default: config stress.hold)
  std::string reporting_currency;  // --reporting-currency: the currency of the summaries
  std::string fx;                  // --fx: FX rates to it
  bool grid() const { return !equity_shocks.empty() || !vol_multipliers.empty(); }
};

constexpr std::size_t kMaxGridValues = 50;

void declare_stress_options(CLI::App* cmd, StressCli& o) {
  cmd->add_option("book", o.book, "Obligor book: .yaml/.yml or .csv")->required();
  auto* scen = cmd->add_option("-s,--scenarios", o.scenarios, "Scenario file (YAML; see README, Stress runs)")
                   ->check(CLI::ExistingFile);
  auto* eq_opt =
      list_option(
          cmd->add_option("--equity-shocks", o.equity_shocks,
                          "Quick grid: relative equity changes, e.g. 0,-0.1,-0.3 (-0.3 means a 30% fall)"))
          ->check(finite_number(-1.0, 10.0, RangeEnd::open, RangeEnd::closed, "-0.3 means a 30% fall"));
  auto* vol_opt = list_option(cmd->add_option("--equity-vol-multipliers", o.vol_multipliers,
                                              "Quick grid: equity-volatility multipliers, e.g. 1,1.25,1.5,2"))
                      ->check(finite_number(0.0, 100.0, RangeEnd::open, RangeEnd::closed, "1.5 means +50%"));
  auto* rev =
      cmd->add_option("--reverse-pd", o.reverse_pd,
                      "Reverse stress: per obligor, the equity fall and the equity-volatility multiplier "
                      "at which PD reaches this level (decimal, 0.05 means 5%)")
          ->check(finite_number(0.0, 1.0, RangeEnd::open, RangeEnd::open, "0.05 means 5%"));
  rev->excludes(scen)->excludes(eq_opt)->excludes(vol_opt);
  cmd->add_option(
         "--pd-threshold", o.pd_threshold,
         "Count obligors whose PD is above this level (decimal; default: config stress.pd_threshold)")
      ->check(finite_number(0.0, 1.0, RangeEnd::open, RangeEnd::open, "0.05 means 5%"));
  cmd->add_flag(
      "--sensitivities", o.sensitivities,
      "Add analytic sensitivities at the stressed inputs (DD, PD and spread per +1% equity value, +1 "
      "point equity volatility, +1% default point and +1 bp rate)");
  add_output_options(cmd, o.out);
  cmd->add_option("--summary-output", o.summary_output,
                  "Also write the per-scenario summaries as CSV to this file (all or nothing)");
  add_scoring_options(cmd, o.scoring);
  add_threads_option(cmd, o.threads);
  add_term_options(cmd, o.term);
  cmd->add_option("--pd-calibration", o.pd_calibration,
                  "Calibration file (firmcall calibrate --save): add the one-year calibrated PD of base and "
                  "stressed DD at the end of the rows, and the summaries on it");
  cmd->add_option("--driving-pd", o.driving_pd,
                  "PD of the table's summaries, the PD grid and the closing lines: model or calibrated "
                  "(default: calibrated with --pd-calibration, else model)")
      ->check(CLI::IsMember({"model", "calibrated"}));
  cmd->add_option("--hold", o.hold,
                  "Volatility a stress holds: asset-vol (asset volatility held, V re-solved, equity "
                  "volatility as the model implies; volatility multipliers act on the asset volatility) or "
                  "equity-vol (shocked equity value and volatility re-solved); default: config stress.hold "
                  "(asset-vol)")
      ->check(CLI::IsMember({"asset-vol", "equity-vol"}));
  add_currency_options(
      cmd, o.reporting_currency, o.fx,
      "Currency of the summaries' EAD totals and expected losses (three upper-case letters); needs --fx",
      "FX rates to the reporting currency for the summaries (as for `firmcall portfolio`); the rows stay in "
      "each obligor's currency");
  cmd->footer(
      std::string("\nGive --scenarios FILE, or a quick grid (--equity-shocks and/or "
                  "--equity-vol-multipliers), or --reverse-pd LEVEL.\n"
                  "Exit codes: 0 every row computed; 1 some obligors invalid or not converged (the others "
                  "are stressed); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);
}

void check_grid(const std::vector<double>& values, const char* option, bool multiplier) {
  if (values.size() > kMaxGridValues) {
    throw InputError(std::string(option) + ": at most " + std::to_string(kMaxGridValues) + " values, got " +
                     std::to_string(values.size()));
  }
  for (double v : values) {
    const bool ok = std::isfinite(v) && (multiplier ? v > 0.0 : v > -1.0);
    if (!ok) {
      throw InputError(std::string(option) + ": " +
                       (multiplier ? "multipliers must be positive (1.5 means +50%)"
                                   : "relative changes must be greater than -1 (-0.3 means a 30% fall)") +
                       ", got " + std::to_string(v));
    }
  }
}

// The checks that need no file, in the order they are reported.
void check_stress_options(const StressCli& o) {
  if (o.scenarios.empty() && !o.grid() && !o.reverse_pd) {
    throw InputError(
        "stress: give --scenarios FILE, a quick grid (--equity-shocks, --equity-vol-multipliers) or "
        "--reverse-pd LEVEL");
  }
  if (o.reverse_pd && !(*o.reverse_pd > 0.0 && *o.reverse_pd < 1.0)) {
    throw InputError("--reverse-pd: expected a probability strictly between 0 and 1 (0.05 means 5%)");
  }
  if (o.reverse_pd && (o.sensitivities || !o.summary_output.empty())) {
    throw InputError(
        "--reverse-pd: --sensitivities and --summary-output apply to scenario runs (use `firmcall score "
        "--sensitivities` for sensitivities as the book stands)");
  }
  if (o.pd_threshold && !(*o.pd_threshold > 0.0 && *o.pd_threshold < 1.0)) {
    throw InputError("--pd-threshold: expected a probability strictly between 0 and 1 (0.05 means 5%)");
  }
  if (o.driving_pd == "calibrated" && o.pd_calibration.empty()) {
    throw InputError("--driving-pd calibrated: needs --pd-calibration CAL.yaml");
  }
  if (o.reverse_pd && !o.pd_calibration.empty()) {
    throw InputError("--pd-calibration: not available with --reverse-pd (the search is on the model PD)");
  }
  check_rate(o.scoring);
  check_grid(o.equity_shocks, "--equity-shocks", false);
  check_grid(o.vol_multipliers, "--equity-vol-multipliers", true);
}

void check_term_stress(const StressCli& o) {
  if (o.reverse_pd) {
    throw InputError("--reverse-pd: cannot be combined with term structures (--horizons, --model)");
  }
  if (o.sensitivities || !o.summary_output.empty()) {
    throw InputError(
        "--horizons, --model: --sensitivities and --summary-output apply to single-horizon stress runs");
  }
  if (!o.pd_calibration.empty()) {
    throw InputError("--pd-calibration: not available with term structures (--horizons, --model)");
  }
  if (o.hold == "asset-vol") {
    throw InputError(
        "--hold asset-vol: not available with term structures (--horizons, --model); their stress re-solves "
        "the shocked equity value and volatility (--hold equity-vol)");
  }
}

// The scenarios of the file and of the quick grid, in that order; `origin` says where they come
// from. The file's filters are checked against the book by check_scenario_filters.
std::vector<Scenario> stress_scenarios(const StressCli& o, std::optional<ScenarioSet>& set,
                                       std::string& origin) {
  std::vector<Scenario> scenarios;
  if (!o.scenarios.empty()) {
    set = load_scenarios(o.scenarios);
    scenarios = set->scenarios;
    origin = o.scenarios;
  }
  if (o.grid()) {
    const std::vector<double> eq = o.equity_shocks.empty() ? std::vector<double>{0.0} : o.equity_shocks;
    const std::vector<double> vm = o.vol_multipliers.empty() ? std::vector<double>{1.0} : o.vol_multipliers;
    for (Scenario& s : grid_scenarios(eq, vm)) scenarios.push_back(std::move(s));
    origin += origin.empty() ? "quick grid" : " and a quick grid";
  }
  return scenarios;
}

// True when a shock of the file is limited to obligors named by id.
bool filters_by_id(const std::optional<ScenarioSet>& set) {
  if (!set) return false;
  for (const Scenario& sc : set->scenarios) {
    for (const ScenarioShock& s : sc.shocks) {
      if (s.filter.keys[static_cast<std::size_t>(FilterKey::ids)].used()) return true;
    }
  }
  return false;
}

// Passes over the book file; the first one is the stream opened here, so that the book's own
// errors (its header, or a YAML book's syntax) come before those of the other files.
BookPasses open_book_passes(const std::string& path) {
  auto first = std::make_shared<std::unique_ptr<BookStream>>(BookStream::open(path));
  return [path, first]() -> std::unique_ptr<BookStream> {
    if (*first) return std::move(*first);
    return BookStream::open(path);
  };
}

// What a stress run leaves for standard error.
struct StressOutcome {
  std::size_t failed = 0;
  std::vector<std::string> notes;
  std::vector<std::string> problems;
  std::size_t not_listed = 0;
  std::string closing;
};

template <class Summary>
StressOutcome outcome_of(const Summary& sum, std::string closing) {
  return {sum.failed(), sum.notes, sum.problems, sum.problems_not_listed, std::move(closing)};
}

// Everything a stress run reads, settled before any output is written.
struct StressInputs {
  ScoreSettings settings;
  StressSettings stress;
  StressBookOptions run;
  TermBookOptions term;
  bool term_run = false;
  Book book;  // term-structure runs
  BookPasses passes;
  StressBookScan scan;  // scenario runs: the first pass over the book
  std::vector<Scenario> scenarios;
  std::string origin;
  CalibrationRecord calibration;
  FxTable fx;  // --fx; no rates without it
};

std::string scenario_closing(const StressSummary& sum, const std::vector<Scenario>& scenarios) {
  std::string closing;
  for (std::size_t i = 0; i < sum.scenarios.size(); ++i) {
    const ScenarioSummary& ss = sum.scenarios[i];
    const bool calibrated = sum.driving_pd == DrivingPd::calibrated;
    const ScenarioPdFigures s = driving_figures(ss, sum.driving_pd);
    char buf[256];
    std::snprintf(buf, sizeof buf, "mean %sPD %s -> %s, above %g: %zu -> %zu, expected loss %s -> %s",
                  calibrated ? "calibrated one-year " : "", brief(s.mean_pd).c_str(),
                  brief(s.mean_pd_stressed).c_str(), ss.pd_threshold, s.above_threshold,
                  s.above_threshold_stressed, brief(s.expected_loss).c_str(),
                  brief(s.expected_loss_stressed).c_str());
    closing += "\nfirmcall: scenario '" + scenarios[i].name + "': " + buf;
  }
  return closing;
}

StressOutcome run_stress_kind(const StressCli& o, const StressInputs& in, const TextSink& sink,
                              OutputFile* summary_file, bool quiet) {
  if (in.term_run) {
    const TermStressSummary sum =
        run_stress_term(in.book, in.scenarios, in.origin, in.settings, in.term, sink);
    return outcome_of(sum, "stressed the term structures of " + std::to_string(sum.obligors) +
                               " obligors under " + std::to_string(sum.scenarios) +
                               " scenarios: " + std::to_string(sum.rows) + " rows, " +
                               std::to_string(sum.failed_rows) + " failed");
  }
  if (o.reverse_pd) {
    ReverseStressOptions options;
    options.hold = in.stress.hold;
    const ReverseStressSummary sum =
        run_reverse_stress(in.passes, *o.reverse_pd, in.settings, in.run, sink, options);
    return outcome_of(sum, "reverse-stressed " + std::to_string(sum.base_ok) + " of " +
                               std::to_string(sum.obligors) + " obligors (hold " +
                               std::string(to_string(options.hold)) + ")");
  }
  StressBookOptions run = in.run;
  if (!o.pd_calibration.empty()) run.pd_calibration = &in.calibration.calibration;
  if (!o.fx.empty()) run.fx = &in.fx;
  const StressSummary sum =
      run_stress(in.passes, in.scan, in.scenarios, in.origin, in.settings, in.stress, run, sink);
  if (summary_file) summary_file->write(scenario_summary_csv(sum, in.scenarios));
  std::string closing = "stressed " + std::to_string(sum.obligors) + " obligors under " +
                        std::to_string(sum.scenarios.size()) + " scenarios (hold " +
                        std::string(to_string(in.stress.hold)) + "): " + std::to_string(sum.rows) +
                        " rows, " + std::to_string(sum.failed_rows) + " failed";
  if (in.run.format != OutputFormat::table && !quiet) closing += scenario_closing(sum, in.scenarios);
  return outcome_of(sum, std::move(closing));
}

StressInputs stress_inputs(const StressCli& o, const GlobalOptions& global) {
  StressInputs in;
  Config config = global.config();
  in.term = term_book_options(config.term, o.term);  // checks the term options
  in.term_run = wants_term_structure(o.term);
  if (in.term_run) check_term_stress(o);
  in.settings = scoring_settings(config.score, o.scoring);
  in.stress = config.stress;
  if (o.pd_threshold) in.stress.pd_threshold = *o.pd_threshold;
  if (const auto hold = parse_stress_hold(o.hold)) in.stress.hold = *hold;
  if (in.term_run) in.stress.hold = StressHold::equity_vol;  // term-structure stress re-solves (sE held)
  in.run.format = o.out.format;
  in.run.threads = thread_count(o.threads);
  in.run.sensitivities = o.sensitivities;
  if (!o.pd_calibration.empty() && !in.term_run) {
    in.calibration = read_calibration(o.pd_calibration);  // run_stress_kind points the run at it
    in.run.pd_calibration_origin = o.pd_calibration;
    if (o.driving_pd != "model") in.run.driving_pd = DrivingPd::calibrated;
  }
  if (!o.fx.empty()) {
    if (in.term_run || o.reverse_pd) {
      throw InputError(
          "--fx: applies to the summaries of scenario and grid runs, not to term structures or "
          "--reverse-pd");
    }
    in.fx = load_fx_rates(o.fx);
    in.run.reporting_currency = o.reporting_currency;
  }
  in.term.format = in.run.format;
  in.term.threads = in.run.threads;
  // Everything that can be wrong with the files is found before any output is written.
  std::optional<ScenarioSet> set;
  if (in.term_run) {
    in.book = load_book(o.book);
    in.scenarios = stress_scenarios(o, set, in.origin);
    if (set) check_filters(*set, in.book);
    return in;
  }
  in.passes = open_book_passes(o.book);
  in.scenarios = stress_scenarios(o, set, in.origin);
  if (o.reverse_pd) return in;  // read in one pass
  in.scan = scan_stress_book(in.passes, in.settings, in.run, filters_by_id(set));
  if (set) check_filters(*set, in.scan.book.filter_book);
  in.scan.book.filter_book = Book{};
  return in;
}

ExitCode run_stress_command(const StressCli& o, const GlobalOptions& global) {
  check_stress_options(o);
  const StressInputs in = stress_inputs(o, global);
  StressOutcome outcome;
  {
    // Every output goes to its temporary file first; they replace their targets together.
    OutputSet outputs;
    OutputFile& out = outputs.add("-o", o.out.output);
    OutputFile* summary_file =
        o.summary_output.empty() ? nullptr : &outputs.add("--summary-output", o.summary_output);
    const TextSink sink = [&out](std::string_view s) { out.write(s); };
    outcome = run_stress_kind(o, in, sink, summary_file, global.quiet);
    outputs.commit();
  }
  if (!global.quiet)
    print_run_notes(outcome.notes, outcome.problems, outcome.not_listed, o.out, outcome.closing);
  return rows_exit_code(outcome.failed);
}
}  // namespace

void add_stress_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<StressCli>();
  CLI::App* cmd = app.add_subcommand(
      "stress",
      "Stress a book under scenarios (file or quick grid), or find the shock that moves PD to a level");
  declare_stress_options(cmd, *opts);
  set_action(cmd, run, [opts, &global] { return run_stress_command(*opts, global); });
}

}  // namespace firmcall::cli
