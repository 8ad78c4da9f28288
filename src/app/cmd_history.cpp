// `firmcall history BOOK PRICES`: asset volatility, drift and distance to default estimated from
// a history of equity values (or, with --score, scoring with the history's equity volatility).
#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <iostream>
#include <memory>
#include <thread>

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
  std::string format = "table";
  std::string output;
  std::string series;
  std::optional<double> rate;
  std::optional<double> horizon;
  std::optional<double> weight;
  unsigned threads = 0;
};

OutputFormat format_of(const std::string& f) {
  return f == "csv" ? OutputFormat::csv : f == "json" ? OutputFormat::json : OutputFormat::table;
}

void print_lines(const std::vector<std::string>& lines) {
  for (const auto& l : lines) std::cerr << "firmcall: " << l << "\n";
}
}  // namespace

void add_history_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<HistoryCli>();
  CLI::App* cmd = app.add_subcommand(
      "history", "Estimate asset volatility, drift and distance to default from a history of equity values");
  cmd->add_option("book", opts->book, "Obligor book (.yaml/.yml or .csv): rate, horizon and debt per obligor")
      ->required();
  cmd->add_option("prices", opts->prices,
                  "Equity history CSV, one row per obligor and day: date,id,market_cap "
                  "(or close with shares_outstanding)")
      ->required();
  cmd->add_option("-b,--balance-sheets", opts->sheets,
                  "Dated balance sheets CSV: id,as_of,short_term_debt,long_term_debt[,default_point]; each "
                  "day uses the latest sheet dated on or before it");
  auto* method =
      cmd->add_option("-m,--method", opts->method,
                      "iterative (Vassalou-Xing / Bharath-Shumway, default), mle (Duan 1994, with intervals) "
                      "or naive (Bharath-Shumway naive DD)")
          ->check(CLI::IsMember({"iterative", "mle", "naive"}));
  cmd->add_option(
         "--vol-estimator", opts->vol_estimator,
         "Equity volatility from daily log returns: simple (sample standard deviation, default) or "
         "ewma (decay history.ewma_decay); used by --score, the naive method and the iterative start")
      ->check(CLI::IsMember({"simple", "ewma"}));
  auto* score =
      cmd->add_flag("--score", opts->score,
                    "Score the book as `firmcall score` does, with each obligor's equity value from the "
                    "last day and equity volatility from --vol-estimator");
  cmd->add_option("-f,--format", opts->format, "Output format: table (for people), csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  cmd->add_option("-o,--output", opts->output, "Write here instead of standard output (all or nothing)");
  auto* series =
      cmd->add_option("--series", opts->series,
                      "Also write the daily series (date,id,equity_value,default_point,asset_value,"
                      "distance_to_default,pd) to this CSV file");
  cmd->add_option("--rate", opts->rate, "Risk-free rate for every obligor, continuously compounded decimal");
  cmd->add_option("--horizon", opts->horizon, "Horizon in years for every obligor")
      ->check(CLI::PositiveNumber);
  cmd->add_option("--default-point-weight", opts->weight,
                  "Weight of long-term debt in the default point (default 0.5, common practice)")
      ->check(CLI::Range(0.0, 1.0));
  cmd->add_option("-j,--threads", opts->threads, "Worker threads (default: all cores)")
      ->check(CLI::Range(1, 1024));
  score->excludes(method);
  score->excludes(series);
  cmd->footer(
      std::string("\nSettings (config file, section history): min_observations, trading_days_per_year, "
                  "ewma_decay, iteration_tolerance, max_iterations, confidence_level.\n"
                  "Exit codes: 0 every obligor estimated; 1 some obligors failed (the others are "
                  "estimated); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);

  cmd->callback([opts, &global, &run]() {
    run = [opts, &global]() -> int {
      const Config config = global.config();
      ScoreSettings settings = config.score;
      settings.rate_override = opts->rate;
      settings.horizon_override = opts->horizon;
      settings.weight_override = opts->weight;
      if (opts->rate && (*opts->rate < -1.0 || *opts->rate > 1.0)) {
        throw InputError("--rate: expected a continuously compounded decimal in [-1, 1] (0.03 means 3%)");
      }
      const unsigned threads =
          opts->threads > 0 ? opts->threads : std::max(1U, std::thread::hardware_concurrency());
      const VolEstimator vol = *vol_estimator_from_string(opts->vol_estimator);

      const Book book = load_book(opts->book, BookUse::history);
      const EquityHistory prices = load_equity_history(opts->prices);
      std::optional<BalanceSheets> sheets;
      if (!opts->sheets.empty()) sheets = load_balance_sheets(opts->sheets);
      const HistorySources src{&book, &prices, sheets ? &*sheets : nullptr};

      if (opts->score) {
        ScoreBookOptions runopts;
        runopts.format = format_of(opts->format);
        runopts.threads = threads;
        ScoreSummary summary;
        {
          OutputFile out(opts->output);
          summary = score_with_history(src, settings, config.history, vol, runopts,
                                       [&out](std::string_view s) { out.write(s); });
          out.commit();
        }
        if (!global.quiet) {
          print_lines(summary.notes);
          if (runopts.format != OutputFormat::table) {
            print_lines(summary.problems);
            if (summary.problems_not_listed > 0) {
              std::cerr << "firmcall: ... and " << summary.problems_not_listed << " more (column message)\n";
            }
          }
          if (runopts.format != OutputFormat::table || !opts->output.empty()) {
            std::cerr << "firmcall: scored " << summary.scored << " of " << summary.total << " obligors";
            if (summary.failed() > 0) {
              std::cerr << " (" << summary.invalid << " invalid input, " << summary.not_converged
                        << " not converged)";
            }
            std::cerr << "\n";
          }
        }
        return summary.failed() > 0 ? kExitRowsFailed : kExitOk;
      }

      HistoryBookOptions runopts;
      runopts.estimator = {.method = *history_method_from_string(opts->method), .equity_vol = vol};
      runopts.format = format_of(opts->format);
      runopts.threads = threads;
      // Progress only where a person watches stderr and the results do not scroll on the same screen.
      const bool to_terminal = (opts->output.empty() || opts->output == "-") && ::isatty(STDOUT_FILENO) != 0;
      const bool progress = !global.quiet && ::isatty(STDERR_FILENO) != 0 && !to_terminal;
      if (progress) {
        runopts.progress = [](std::size_t done, std::size_t total) {
          std::fprintf(stderr, "\rfirmcall: history: %zu of %zu obligors", done, total);
          if (done == total) std::fputc('\n', stderr);
          std::fflush(stderr);
        };
      }
      HistorySummary summary;
      {
        OutputFile out(opts->output);
        std::optional<OutputFile> series_out;
        TextSink series_sink;
        if (!opts->series.empty()) {
          series_out.emplace(opts->series);
          series_sink = [&series_out](std::string_view s) { series_out->write(s); };
        }
        summary = run_history(
            src, settings, config.history, runopts, [&out](std::string_view s) { out.write(s); },
            series_out ? &series_sink : nullptr);
        out.commit();
        if (series_out) series_out->commit();
      }
      if (!global.quiet) {
        print_lines(summary.notes);
        if (runopts.format != OutputFormat::table) {
          print_lines(summary.problems);
          if (summary.problems_not_listed > 0) {
            std::cerr << "firmcall: ... and " << summary.problems_not_listed << " more (column message)\n";
          }
        }
        if (runopts.format != OutputFormat::table || !opts->output.empty()) {
          std::cerr << "firmcall: estimated " << summary.estimated << " of " << summary.total << " obligors";
          if (summary.failed() > 0) {
            std::cerr << " (" << summary.invalid << " invalid input, " << summary.not_converged
                      << " not converged)";
          }
          std::cerr << "\n";
        }
      }
      return summary.failed() > 0 ? kExitRowsFailed : kExitOk;
    };
  });
}

}  // namespace firmcall::cli
