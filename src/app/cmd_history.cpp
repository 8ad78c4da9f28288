// `firmcall history BOOK PRICES`: asset volatility, drift and distance to default estimated from
// a history of equity values (or, with --score, scoring with the history's equity volatility).
#include <unistd.h>

#include <cstdio>
#include <iostream>
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/history_book.hpp"
#include "firmcall/io/output_file.hpp"

namespace firmcall::cli {

namespace {
struct HistoryCli {
  std::string book;
  std::string prices;
  std::string sheets;
  std::string method = "iterative";
  std::string vol_estimator = "simple";
  bool score = false;
  OutputOptions out;
  std::string series;
  ScoringOptions scoring;
  unsigned threads = 0;
};

void declare_history_options(CLI::App* cmd, HistoryCli& o) {
  cmd->add_option("book", o.book, "Obligor book (.yaml/.yml or .csv): rate, horizon and debt per obligor")
      ->required();
  cmd->add_option("prices", o.prices,
                  "Equity history CSV, one row per obligor and day: date,id,market_cap "
                  "(or close with shares_outstanding)")
      ->required();
  cmd->add_option("-b,--balance-sheets", o.sheets,
                  "Dated balance sheets CSV: id,as_of,short_term_debt,long_term_debt[,default_point]; each "
                  "day uses the latest sheet dated on or before it");
  auto* method = cmd->add_option("-m,--method", o.method,
                                 "iterative (Vassalou-Xing / Bharath-Shumway, default), mle (Duan 1994, with "
                                 "intervals) or naive (Bharath-Shumway naive DD)")
                     ->check(CLI::IsMember({"iterative", "mle", "naive"}));
  cmd->add_option(
         "--vol-estimator", o.vol_estimator,
         "Equity volatility from daily log returns: simple (sample standard deviation, default) or "
         "ewma (decay history.ewma_decay); used by --score, the naive method and the iterative start")
      ->check(CLI::IsMember({"simple", "ewma"}));
  auto* score =
      cmd->add_flag("--score", o.score,
                    "Score the book as `firmcall score` does, with each obligor's equity value from the "
                    "last day and equity volatility from --vol-estimator");
  add_output_options(cmd, o.out);
  auto* series =
      cmd->add_option("--series", o.series,
                      "Also write the daily series (date,id,equity_value,default_point,asset_value,"
                      "distance_to_default,pd) to this CSV file");
  add_scoring_options(cmd, o.scoring, kHorizonHelp, false);
  cmd->add_option("--measure", o.scoring.measure,
                  "Drift in DD and PD: physical (the estimated drift shrunk towards the rate and capped, "
                  "history.drift_shrinkage and history.drift_cap; with --score the book's drift) or "
                  "risk-neutral (the rate); default scoring.measure")
      ->check(CLI::IsMember({"physical", "risk-neutral"}));
  add_threads_option(cmd, o.threads);
  score->excludes(method);
  score->excludes(series);
  cmd->footer(
      std::string(
          "\nSettings (config file, section history): min_observations, trading_days_per_year, "
          "ewma_decay, iteration_tolerance, max_iterations, confidence_level, drift_shrinkage, drift_cap.\n"
          "Exit codes: 0 every obligor estimated; 1 some obligors failed (the others are "
          "estimated); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);
}

// What both paths of the command read and settle first.
struct HistoryInputs {
  Config config;
  ScoreSettings settings;
  unsigned threads = 1;
  VolEstimator vol{};
  Book book;
  EquityHistory prices;
  std::optional<BalanceSheets> sheets;
  HistorySources sources() const { return {&book, &prices, sheets ? &*sheets : nullptr}; }
};

// `history --score`: scoring with each obligor's last equity value and its history's volatility.
ExitCode score_from_history(const HistoryCli& opts, const HistoryInputs& in, bool quiet) {
  ScoreBookOptions run;
  run.format = opts.out.format;
  run.threads = in.threads;
  ScoreSummary summary;
  {
    OutputFile out(opts.out.output);
    summary = score_with_history(in.sources(), in.settings, in.config.history, in.vol, run,
                                 [&out](std::string_view s) { out.write(s); });
    out.commit();
  }
  if (!quiet) {
    print_run_notes(summary.notes, summary.problems, summary.problems_not_listed, opts.out,
                    "scored " + std::to_string(summary.scored) + " of " + std::to_string(summary.total) +
                        " obligors" + failure_counts(summary.invalid, summary.not_converged));
  }
  return rows_exit_code(summary.failed());
}

// Progress only where a person watches stderr and the results do not scroll on the same screen.
decltype(HistoryBookOptions::progress) history_progress(const OutputOptions& out, bool quiet) {
  const bool to_terminal = (out.output.empty() || out.output == "-") && ::isatty(STDOUT_FILENO) != 0;
  if (quiet || ::isatty(STDERR_FILENO) == 0 || to_terminal) return {};
  return [](std::size_t done, std::size_t total) {
    std::fprintf(stderr, "\rfirmcall: history: %zu of %zu obligors", done, total);
    if (done == total) std::fputc('\n', stderr);
    std::fflush(stderr);
  };
}

// The estimation itself: asset volatility, drift and distance to default per obligor.
ExitCode estimate_from_history(const HistoryCli& opts, const HistoryInputs& in, bool quiet) {
  HistoryBookOptions run;
  run.estimator = {.method = *history_method_from_string(opts.method),
                   .equity_vol = in.vol,
                   .risk_neutral = in.settings.measure == Measure::risk_neutral};
  run.format = opts.out.format;
  run.threads = in.threads;
  run.progress = history_progress(opts.out, quiet);
  HistorySummary summary;
  {
    OutputSet outputs;
    OutputFile& out = outputs.add("-o", opts.out.output);
    OutputFile* series_out = opts.series.empty() ? nullptr : &outputs.add("--series", opts.series);
    TextSink series_sink;
    if (series_out) series_sink = [series_out](std::string_view s) { series_out->write(s); };
    summary = run_history(
        in.sources(), in.settings, in.config.history, run, [&out](std::string_view s) { out.write(s); },
        series_out ? &series_sink : nullptr);
    outputs.commit();
  }
  if (!quiet) {
    print_run_notes(summary.notes, summary.problems, summary.problems_not_listed, opts.out,
                    "estimated " + std::to_string(summary.estimated) + " of " +
                        std::to_string(summary.total) + " obligors" +
                        failure_counts(summary.invalid, summary.not_converged));
  }
  return rows_exit_code(summary.failed());
}

ExitCode run_history_command(const HistoryCli& opts, const GlobalOptions& global) {
  HistoryInputs in;
  in.config = global.config();
  in.settings = scoring_settings(in.config.score, opts.scoring);
  in.threads = thread_count(opts.threads);
  in.vol = *vol_estimator_from_string(opts.vol_estimator);
  in.book = load_book(opts.book, BookUse::history);
  in.prices = load_equity_history(opts.prices);
  if (!opts.sheets.empty()) in.sheets = load_balance_sheets(opts.sheets);
  return opts.score ? score_from_history(opts, in, global.quiet)
                    : estimate_from_history(opts, in, global.quiet);
}
}  // namespace

void add_history_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<HistoryCli>();
  CLI::App* cmd = app.add_subcommand(
      "history", "Estimate asset volatility, drift and distance to default from a history of equity values");
  declare_history_options(cmd, *opts);
  set_action(cmd, run, [opts, &global] { return run_history_command(*opts, global); });
}

}  // namespace firmcall::cli
