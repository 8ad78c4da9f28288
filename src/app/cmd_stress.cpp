// `firmcall stress BOOK`: stress scenarios, quick grids and reverse stress.
#include <algorithm>
#include <cmath>
#include <iostream>
#include <memory>
#include <thread>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/engine/term_stress_book.hpp"
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
  std::string format = "table";
  std::string output;
  std::string summary_output;
  std::optional<double> rate;
  std::optional<double> horizon;
  std::optional<double> weight;
  std::string measure;
  unsigned threads = 0;
  TermOptionText term;
};

constexpr std::size_t kMaxGridValues = 50;

// Six significant digits for the closing notes; "-" where there is no value (never "nan").
std::string brief(double v) {
  if (!std::isfinite(v)) return "-";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
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
}  // namespace

void add_stress_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<StressCli>();
  CLI::App* cmd = app.add_subcommand(
      "stress",
      "Stress a book under scenarios (file or quick grid), or find the shock that moves PD to a level");
  cmd->add_option("book", opts->book, "Obligor book: .yaml/.yml or .csv")->required();
  auto* scen =
      cmd->add_option("-s,--scenarios", opts->scenarios, "Scenario file (YAML; see README, Stress runs)")
          ->check(CLI::ExistingFile);
  auto* eq_opt =
      cmd->add_option("--equity-shocks", opts->equity_shocks,
                      "Quick grid: relative equity changes, e.g. 0,-0.1,-0.3 (-0.3 means a 30% fall)")
          ->delimiter(',');
  auto* vol_opt = cmd->add_option("--equity-vol-multipliers", opts->vol_multipliers,
                                  "Quick grid: equity-volatility multipliers, e.g. 1,1.25,1.5,2")
                      ->delimiter(',');
  auto* rev =
      cmd->add_option("--reverse-pd", opts->reverse_pd,
                      "Reverse stress: per obligor, the equity fall and the equity-volatility multiplier at "
                      "which PD reaches this level (decimal, 0.05 means 5%)")
          ->check(CLI::Range(0.0, 1.0));
  rev->excludes(scen)->excludes(eq_opt)->excludes(vol_opt);
  cmd->add_option(
         "--pd-threshold", opts->pd_threshold,
         "Count obligors whose PD is above this level (decimal; default: config stress.pd_threshold)")
      ->check(CLI::Range(0.0, 1.0));
  cmd->add_flag(
      "--sensitivities", opts->sensitivities,
      "Add analytic sensitivities at the stressed inputs (DD, PD and spread per +1% equity value, +1 "
      "point equity volatility, +1% default point and +1 bp rate)");
  cmd->add_option("-f,--format", opts->format, "Output format: table (for people), csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  cmd->add_option("-o,--output", opts->output, "Write here instead of standard output (all or nothing)");
  cmd->add_option("--summary-output", opts->summary_output,
                  "Also write the per-scenario summaries as CSV to this file (all or nothing)");
  cmd->add_option("--rate", opts->rate, "Risk-free rate for every obligor, continuously compounded decimal");
  cmd->add_option("--horizon", opts->horizon, "Horizon in years for every obligor")
      ->check(CLI::PositiveNumber);
  cmd->add_option("--default-point-weight", opts->weight,
                  "Weight of long-term debt in the default point (default 0.5, common practice)")
      ->check(CLI::Range(0.0, 1.0));
  cmd->add_option("--measure", opts->measure,
                  "physical (drift from the book, default the rate) or risk-neutral")
      ->check(CLI::IsMember({"physical", "risk-neutral"}));
  cmd->add_option("-j,--threads", opts->threads, "Worker threads (default: all cores)")
      ->check(CLI::Range(1, 1024));
  add_term_options(cmd, opts->term);
  cmd->footer(
      std::string("\nGive --scenarios FILE, or a quick grid (--equity-shocks and/or "
                  "--equity-vol-multipliers), or --reverse-pd LEVEL.\n"
                  "Exit codes: 0 every row computed; 1 some obligors invalid or not converged (the others "
                  "are stressed); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);

  cmd->callback([opts, &global, &run]() {
    run = [opts, &global]() -> int {
      const bool grid = !opts->equity_shocks.empty() || !opts->vol_multipliers.empty();
      if (opts->scenarios.empty() && !grid && !opts->reverse_pd) {
        throw InputError(
            "stress: give --scenarios FILE, a quick grid (--equity-shocks, --equity-vol-multipliers) or "
            "--reverse-pd LEVEL");
      }
      if (opts->reverse_pd && !(*opts->reverse_pd > 0.0 && *opts->reverse_pd < 1.0)) {
        throw InputError("--reverse-pd: expected a probability strictly between 0 and 1 (0.05 means 5%)");
      }
      if (opts->reverse_pd && (opts->sensitivities || !opts->summary_output.empty())) {
        throw InputError(
            "--reverse-pd: --sensitivities and --summary-output apply to scenario runs (use `firmcall score "
            "--sensitivities` for sensitivities as the book stands)");
      }
      if (opts->pd_threshold && !(*opts->pd_threshold > 0.0 && *opts->pd_threshold < 1.0)) {
        throw InputError("--pd-threshold: expected a probability strictly between 0 and 1 (0.05 means 5%)");
      }
      if (opts->rate && (*opts->rate < -1.0 || *opts->rate > 1.0)) {
        throw InputError("--rate: expected a continuously compounded decimal in [-1, 1] (0.03 means 3%)");
      }
      check_grid(opts->equity_shocks, "--equity-shocks", false);
      check_grid(opts->vol_multipliers, "--equity-vol-multipliers", true);

      Config config = global.config();
      TermBookOptions term = term_book_options(config.term, opts->term);  // checks the term options
      const bool term_run = wants_term_structure(opts->term);
      if (term_run && opts->reverse_pd) {
        throw InputError("--reverse-pd: cannot be combined with term structures (--horizons, --model)");
      }
      if (term_run && (opts->sensitivities || !opts->summary_output.empty())) {
        throw InputError(
            "--horizons, --model: --sensitivities and --summary-output apply to single-horizon stress runs");
      }
      ScoreSettings settings = config.score;
      settings.rate_override = opts->rate;
      settings.horizon_override = opts->horizon;
      settings.weight_override = opts->weight;
      if (!opts->measure.empty()) settings.measure = *measure_from_string(opts->measure);
      StressSettings stress = config.stress;
      if (opts->pd_threshold) stress.pd_threshold = *opts->pd_threshold;

      StressBookOptions runopts;
      runopts.format = opts->format == "csv"    ? OutputFormat::csv
                       : opts->format == "json" ? OutputFormat::json
                                                : OutputFormat::table;
      runopts.threads = opts->threads > 0 ? opts->threads : std::max(1U, std::thread::hardware_concurrency());
      runopts.sensitivities = opts->sensitivities;

      // Everything that can be wrong with the files is found before any output is written.
      const Book book = load_book(opts->book);
      std::vector<Scenario> scenarios;
      std::string origin;
      if (!opts->scenarios.empty()) {
        ScenarioSet set = load_scenarios(opts->scenarios);
        check_filters(set, book);
        scenarios = std::move(set.scenarios);
        origin = opts->scenarios;
      }
      if (grid) {
        const std::vector<double> eq =
            opts->equity_shocks.empty() ? std::vector<double>{0.0} : opts->equity_shocks;
        const std::vector<double> vm =
            opts->vol_multipliers.empty() ? std::vector<double>{1.0} : opts->vol_multipliers;
        for (Scenario& s : grid_scenarios(eq, vm)) scenarios.push_back(std::move(s));
        origin += origin.empty() ? "quick grid" : " and a quick grid";
      }

      std::size_t failed = 0;
      std::vector<std::string> notes, problems;
      std::size_t not_listed = 0;
      std::string closing;
      {
        OutputFile out(opts->output);
        std::unique_ptr<OutputFile> summary_file;
        if (!opts->summary_output.empty()) summary_file = std::make_unique<OutputFile>(opts->summary_output);
        const TextSink sink = [&out](std::string_view s) { out.write(s); };
        if (term_run) {
          term.format = runopts.format;
          term.threads = runopts.threads;
          const TermStressSummary sum = run_stress_term(book, scenarios, origin, settings, term, sink);
          failed = sum.failed();
          notes = sum.notes;
          problems = sum.problems;
          not_listed = sum.problems_not_listed;
          closing = "stressed the term structures of " + std::to_string(sum.obligors) + " obligors under " +
                    std::to_string(sum.scenarios) + " scenarios: " + std::to_string(sum.rows) + " rows, " +
                    std::to_string(sum.failed_rows) + " failed";
        } else if (opts->reverse_pd) {
          const ReverseStressSummary sum =
              run_reverse_stress(book, *opts->reverse_pd, settings, runopts, sink);
          failed = sum.failed();
          notes = sum.notes;
          problems = sum.problems;
          not_listed = sum.problems_not_listed;
          closing = "reverse-stressed " + std::to_string(sum.base_ok) + " of " +
                    std::to_string(sum.obligors) + " obligors";
        } else {
          const StressSummary sum = run_stress(book, scenarios, origin, settings, stress, runopts, sink);
          if (summary_file) summary_file->write(scenario_summary_csv(sum, scenarios));
          failed = sum.failed();
          notes = sum.notes;
          problems = sum.problems;
          not_listed = sum.problems_not_listed;
          closing = "stressed " + std::to_string(sum.obligors) + " obligors under " +
                    std::to_string(sum.scenarios.size()) + " scenarios: " + std::to_string(sum.rows) +
                    " rows, " + std::to_string(sum.failed_rows) + " failed";
          if (runopts.format != OutputFormat::table && !global.quiet) {
            for (std::size_t i = 0; i < sum.scenarios.size(); ++i) {
              const ScenarioSummary& s = sum.scenarios[i];
              char buf[256];
              std::snprintf(buf, sizeof buf, "mean PD %s -> %s, above %g: %zu -> %zu, expected loss %s -> %s",
                            brief(s.mean_pd).c_str(), brief(s.mean_pd_stressed).c_str(), s.pd_threshold,
                            s.above_threshold, s.above_threshold_stressed, brief(s.expected_loss).c_str(),
                            brief(s.expected_loss_stressed).c_str());
              closing += "\nfirmcall: scenario '" + scenarios[i].name + "': " + buf;
            }
          }
        }
        out.commit();
        if (summary_file) summary_file->commit();
      }
      if (!global.quiet) {
        for (const auto& n : notes) std::cerr << "firmcall: " << n << "\n";
        if (runopts.format != OutputFormat::table) {
          for (const auto& p : problems) std::cerr << "firmcall: " << p << "\n";
          if (not_listed > 0) std::cerr << "firmcall: ... and " << not_listed << " more (column message)\n";
        }
        if (runopts.format != OutputFormat::table || !opts->output.empty()) {
          std::cerr << "firmcall: " << closing << "\n";
        }
      }
      return failed > 0 ? kExitRowsFailed : kExitOk;
    };
  });
}

}  // namespace firmcall::cli
