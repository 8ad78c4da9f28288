// `firmcall portfolio BOOK`: portfolio loss distribution, risk measures and IRB capital.
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <memory>
#include <thread>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/portfolio_book.hpp"
#include "firmcall/io/correlation_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/io/scenario.hpp"

namespace firmcall::cli {

namespace {

constexpr std::uint64_t kMaxScenarios = 20'000'000;  // about 1 GB of working memory

struct PortfolioCli {
  std::string book;
  std::string scenarios;
  std::string correlation;
  std::string asset_correlation;
  std::vector<double> levels;
  std::uint64_t monte_carlo = 0;
  std::optional<std::uint64_t> seed;
  bool importance_sampling = false;
  bool no_contributions = false;
  std::optional<int> loss_grid;
  std::string format = "table";
  std::string output;
  std::string summary_output;
  std::string distribution_output;
  std::optional<double> rate;
  std::optional<double> horizon;
  std::optional<double> weight;
  std::string measure;
  unsigned threads = 0;
};

std::string brief(double v) {
  if (!std::isfinite(v)) return "-";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

// A one-line progress report on standard error, redrawn in place.
class Progress {
 public:
  explicit Progress(bool enabled) : enabled_(enabled) {}
  ~Progress() { clear(); }
  void update(const std::string& scenario, std::uint64_t done, std::uint64_t all) {
    if (!enabled_) return;
    const int pct = static_cast<int>(100.0 * static_cast<double>(done) / static_cast<double>(all));
    if (pct == last_ && scenario == scenario_) return;
    last_ = pct;
    scenario_ = scenario;
    char buf[160];
    std::snprintf(buf, sizeof buf, "\rfirmcall: simulating '%s': %3d%% (%llu of %llu scenarios)",
                  scenario.c_str(), pct, static_cast<unsigned long long>(done),
                  static_cast<unsigned long long>(all));
    std::fputs(buf, stderr);
    std::fflush(stderr);
    shown_ = true;
  }
  void clear() {
    if (!shown_) return;
    std::fputs("\r\033[K", stderr);
    std::fflush(stderr);
    shown_ = false;
  }

 private:
  bool enabled_;
  bool shown_ = false;
  int last_ = -1;
  std::string scenario_;
};

}  // namespace

void add_portfolio_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<PortfolioCli>();
  CLI::App* cmd = app.add_subcommand(
      "portfolio",
      "Portfolio loss distribution, VaR and expected shortfall with contributions, and Basel IRB capital");
  cmd->add_option("book", opts->book, "Obligor book: .yaml/.yml or .csv (every obligor needs ead)")
      ->required();
  cmd->add_option(
         "-s,--scenarios", opts->scenarios,
         "Stress scenario file (YAML, as for `firmcall stress`): the portfolio is run again under each")
      ->check(CLI::ExistingFile);
  cmd->add_option("-c,--correlation", opts->correlation,
                  "Sector correlation file (YAML): asset correlation per sector and the factor correlation "
                  "matrix for Monte Carlo")
      ->check(CLI::ExistingFile);
  cmd->add_option(
      "--asset-correlation", opts->asset_correlation,
      "Asset correlation for every obligor: a decimal in [0, 1) or 'basel' (the IRB function of PD); "
      "overrides the book and the correlation file");
  cmd->add_option(
         "--levels", opts->levels,
         "Confidence levels, ascending, e.g. 0.99,0.995,0.999 (default: config portfolio.confidence_levels)")
      ->delimiter(',');
  cmd->add_option(
         "--monte-carlo", opts->monte_carlo,
         "Also simulate this many scenarios of the multi-factor model (sector factors correlated as in "
         "--correlation), with standard errors")
      ->check(CLI::Range(std::uint64_t{100}, kMaxScenarios));
  cmd->add_option("--seed", opts->seed, "Monte Carlo seed (default: config portfolio.seed)");
  cmd->add_flag("--importance-sampling", opts->importance_sampling,
                "Monte Carlo: shift the factor mean towards the adverse outcome at the highest level "
                "(Glasserman-Li), for deep tails");
  cmd->add_flag("--no-contributions", opts->no_contributions, "Skip the ES contributions (faster)");
  cmd->add_option("--loss-grid", opts->loss_grid,
                  "Points of the exact loss grid (default: config portfolio.loss_grid_points)")
      ->check(CLI::Range(16, 1 << 20));
  cmd->add_option("-f,--format", opts->format, "Output format: table (for people), csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  cmd->add_option("-o,--output", opts->output, "Write here instead of standard output (all or nothing)");
  cmd->add_option("--summary-output", opts->summary_output,
                  "Also write portfolio, sector and country measures as CSV (long format; all or nothing)");
  cmd->add_option("--distribution-output", opts->distribution_output,
                  "Also write the loss distribution as CSV for plotting (all or nothing)");
  cmd->add_option("--rate", opts->rate, "Risk-free rate for every obligor, continuously compounded decimal");
  cmd->add_option("--horizon", opts->horizon, "Horizon in years for every obligor (one horizon for every PD)")
      ->check(CLI::PositiveNumber);
  cmd->add_option("--default-point-weight", opts->weight,
                  "Weight of long-term debt in the default point (default 0.5, common practice)")
      ->check(CLI::Range(0.0, 1.0));
  cmd->add_option("--measure", opts->measure,
                  "physical (drift from the book, default the rate) or risk-neutral")
      ->check(CLI::IsMember({"physical", "risk-neutral"}));
  cmd->add_option("-j,--threads", opts->threads,
                  "Worker threads (default: all cores); results do not depend on it")
      ->check(CLI::Range(1, 1024));
  cmd->footer(
      std::string("\nExit codes: 0 every obligor in the portfolio; 1 some obligors left out (listed, the "
                  "others run); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);

  cmd->callback([opts, &global, &run]() {
    run = [opts, &global]() -> int {
      Config config = global.config();
      ScoreSettings& settings = config.score;
      if (opts->rate && (*opts->rate < -1.0 || *opts->rate > 1.0)) {
        throw InputError("--rate: expected a continuously compounded decimal in [-1, 1] (0.03 means 3%)");
      }
      settings.rate_override = opts->rate;
      settings.horizon_override = opts->horizon;
      settings.weight_override = opts->weight;
      if (!opts->measure.empty()) settings.measure = *measure_from_string(opts->measure);
      if (!opts->levels.empty()) {
        if (opts->levels.size() > kMaxConfidenceLevels) {
          throw InputError("--levels: at most " + std::to_string(kMaxConfidenceLevels) + " levels");
        }
        for (std::size_t i = 0; i < opts->levels.size(); ++i) {
          const double v = opts->levels[i];
          if (!(v > 0.0 && v < 1.0)) {
            throw InputError("--levels: each level must lie in (0, 1) (0.999 means 99.9%), got " + brief(v));
          }
          if (i > 0 && !(v > opts->levels[i - 1]))
            throw InputError("--levels: list the levels in increasing order");
        }
        config.portfolio.confidence_levels = opts->levels;
      }
      if (opts->seed) config.portfolio.seed = *opts->seed;
      if (opts->loss_grid) config.portfolio.loss_grid_points = *opts->loss_grid;
      PortfolioBookOptions ro;
      if (!opts->asset_correlation.empty()) {
        if (opts->asset_correlation == "basel") {
          ro.basel_correlation = true;
        } else {
          double v = std::nan("");
          try {
            std::size_t used = 0;
            v = std::stod(opts->asset_correlation, &used);
            if (used != opts->asset_correlation.size()) v = std::nan("");
          } catch (const std::exception&) {
            v = std::nan("");
          }
          if (!(v >= 0.0 && v < 1.0)) {
            throw InputError(
                "--asset-correlation: expected basel or a decimal in [0, 1) (0.2 means 20%), got '" +
                opts->asset_correlation + "'");
          }
          ro.asset_correlation = v;
        }
      }
      if (opts->importance_sampling && opts->monte_carlo == 0) {
        throw InputError("--importance-sampling: applies to the simulation; give --monte-carlo N as well");
      }
      ro.threads = opts->threads > 0 ? opts->threads : std::max(1U, std::thread::hardware_concurrency());
      ro.monte_carlo_scenarios = opts->monte_carlo;
      ro.importance_sampling = opts->importance_sampling;
      ro.contributions = !opts->no_contributions;
      ro.distribution = !opts->distribution_output.empty();
      Progress progress(!global.quiet && ::isatty(STDERR_FILENO) != 0);
      ro.progress = [&progress](const std::string& s, std::uint64_t done, std::uint64_t all) {
        progress.update(s, done, all);
      };
      const OutputFormat format = opts->format == "csv"    ? OutputFormat::csv
                                  : opts->format == "json" ? OutputFormat::json
                                                           : OutputFormat::table;

      // Everything that can be wrong with the files is found before any output is written.
      const Book book = load_book(opts->book);
      std::vector<Scenario> scenarios;
      if (!opts->scenarios.empty()) {
        ScenarioSet set = load_scenarios(opts->scenarios);
        check_filters(set, book);
        scenarios = std::move(set.scenarios);
      }
      std::unique_ptr<CorrelationFile> correlation;
      if (!opts->correlation.empty()) {
        correlation = std::make_unique<CorrelationFile>(load_correlation_file(opts->correlation));
      }
      const PortfolioResult result =
          run_portfolio(book, scenarios, opts->scenarios, correlation.get(), config, ro);
      progress.clear();
      {
        OutputFile out(opts->output);
        std::unique_ptr<OutputFile> summary_file;
        std::unique_ptr<OutputFile> distribution_file;
        if (!opts->summary_output.empty()) summary_file = std::make_unique<OutputFile>(opts->summary_output);
        if (!opts->distribution_output.empty()) {
          distribution_file = std::make_unique<OutputFile>(opts->distribution_output);
        }
        write_portfolio(result, book, format, [&out](std::string_view s) { out.write(s); });
        if (summary_file) summary_file->write(portfolio_summary_csv(result));
        if (distribution_file) distribution_file->write(portfolio_distribution_csv(result));
        out.commit();
        if (summary_file) summary_file->commit();
        if (distribution_file) distribution_file->commit();
      }
      if (!global.quiet) {
        for (const auto& n : result.notes) std::cerr << "firmcall: " << n << "\n";
        if (format != OutputFormat::table) {
          for (const auto& p : result.problems) std::cerr << "firmcall: " << p << "\n";
          if (result.problems_not_listed > 0) {
            std::cerr << "firmcall: ... and " << result.problems_not_listed << " more (column message)\n";
          }
        }
        if (format != OutputFormat::table || !opts->output.empty()) {
          const std::size_t top = result.confidence_levels.size() - 1;
          char level[32];
          std::snprintf(level, sizeof level, "%g%%", 100.0 * result.confidence_levels[top]);
          for (const PortfolioScenarioResult& sc : result.scenarios) {
            const bool ok = !sc.exact.tails.empty();
            std::cerr << "firmcall: " << sc.name << ": " << sc.included << " of " << sc.obligors.size()
                      << " obligors in the portfolio; expected loss " << brief(sc.total.expected_loss)
                      << ", VaR " << level << " " << brief(ok ? sc.exact.tails[top].var : std::nan(""))
                      << ", ES " << level << " " << brief(ok ? sc.exact.tails[top].es : std::nan(""))
                      << ", IRB capital " << brief(sc.total.irb_capital) << "\n";
          }
        }
      }
      return result.failed_rows > 0 ? kExitRowsFailed : kExitOk;
    };
  });
}

}  // namespace firmcall::cli
