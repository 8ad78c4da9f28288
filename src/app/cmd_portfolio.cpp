// `firmcall portfolio BOOK`: portfolio loss distribution, risk measures and IRB capital.
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <limits>
#include <memory>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/portfolio_book.hpp"
#include "firmcall/io/calibration_io.hpp"
#include "firmcall/io/correlation_io.hpp"
#include "firmcall/io/fx_io.hpp"
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
  OutputOptions out;
  std::string summary_output;
  std::string distribution_output;
  ScoringOptions scoring;
  unsigned threads = 0;
  std::string pd_calibration;  // --pd-calibration: calibration file (calibrate --save)
  std::string driving_pd;      // --driving-pd: model or calibrated (default: calibrated with a calibration)
  std::string reporting_currency;  // --reporting-currency: the currency of the portfolio figures
  std::string fx;                  // --fx: FX rates to it (CSV currency,rate)
};

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

void declare_portfolio_options(CLI::App* cmd, PortfolioCli& o) {
  cmd->add_option("book", o.book, "Obligor book: .yaml/.yml or .csv (every obligor needs ead)")->required();
  cmd->add_option(
         "-s,--scenarios", o.scenarios,
         "Stress scenario file (YAML, as for `firmcall stress`): the portfolio is run again under each")
      ->check(CLI::ExistingFile);
  cmd->add_option("-c,--correlation", o.correlation,
                  "Sector correlation file (YAML): asset correlation per sector and the factor correlation "
                  "matrix for Monte Carlo")
      ->check(CLI::ExistingFile);
  cmd->add_option(
      "--asset-correlation", o.asset_correlation,
      "Asset correlation for every obligor: a decimal in [0, 1) or 'basel' (the IRB function of PD); "
      "overrides the book and the correlation file");
  list_option(cmd->add_option("--levels", o.levels,
                              "Confidence levels, ascending, e.g. 0.99,0.995,0.999 (default: config "
                              "portfolio.confidence_levels)"))
      ->check(finite_number(0.0, 1.0, RangeEnd::open, RangeEnd::open, "0.999 means 99.9%"));
  cmd->add_option(
         "--monte-carlo", o.monte_carlo,
         "Also simulate this many scenarios of the multi-factor model (sector factors correlated as in "
         "--correlation), with standard errors")
      ->check(whole_number(100, kMaxScenarios));
  cmd->add_option("--seed", o.seed, "Monte Carlo seed (default: config portfolio.seed)")
      ->check(whole_number(0, std::numeric_limits<std::uint64_t>::max()));
  cmd->add_flag("--importance-sampling", o.importance_sampling,
                "Monte Carlo: shift the factor mean towards the adverse outcome at the highest level "
                "(Glasserman-Li), for deep tails");
  cmd->add_flag("--no-contributions", o.no_contributions, "Skip the ES contributions (faster)");
  cmd->add_option("--loss-grid", o.loss_grid,
                  "Points of the exact loss grid (default: config portfolio.loss_grid_points)")
      ->check(whole_number(16, 1 << 20));
  add_output_options(cmd, o.out);
  cmd->add_option("--summary-output", o.summary_output,
                  "Also write portfolio, sector and country measures as CSV (long format; all or nothing)");
  cmd->add_option("--distribution-output", o.distribution_output,
                  "Also write the loss distribution as CSV for plotting (all or nothing)");
  add_scoring_options(cmd, o.scoring, "Horizon in years for every obligor (one horizon for every PD)");
  add_threads_option(cmd, o.threads, "Worker threads (default: all cores); results do not depend on it");
  cmd->add_option(
         "--pd-calibration", o.pd_calibration,
         "Calibration file (firmcall calibrate --save): each obligor's calibrated one-year PD of its "
         "distance to default, which drives the figures unless --driving-pd model")
      ->check(CLI::ExistingFile);
  cmd->add_option(
         "--driving-pd", o.driving_pd,
         "PD behind IRB capital, expected loss and the loss distribution: model or calibrated (default: "
         "calibrated with --pd-calibration, else model); a calibrated PD over T years is "
         "1 - (1 - PD1)^T")
      ->check(CLI::IsMember({"model", "calibrated"}));
  add_currency_options(
      cmd, o.reporting_currency, o.fx,
      "Currency of EAD, losses, capital and contributions (three upper-case letters, e.g. EUR); needs --fx",
      "FX rates to the reporting currency: CSV currency,rate (units of the reporting currency per unit), "
      "first line '# as_of: YYYY-MM-DD'; needs --reporting-currency");
  cmd->footer(
      std::string("\nExit codes: 0 every obligor in the portfolio; 1 some obligors left out (listed, the "
                  "others run); 2 unreadable or malformed file or bad command line.\n"
                  "A build with FIRMCALL_MPI shares --monte-carlo between the processes of mpirun; the "
                  "result equals one process's (docs/cluster.md).\n\n") +
      kCaution);
}

// --levels: at most kMaxConfidenceLevels, each in (0, 1), increasing.
void check_levels(const std::vector<double>& levels) {
  if (levels.size() > kMaxConfidenceLevels) {
    throw InputError("--levels: at most " + std::to_string(kMaxConfidenceLevels) + " levels");
  }
  for (std::size_t i = 0; i < levels.size(); ++i) {
    const double v = levels[i];
    if (!(v > 0.0 && v < 1.0)) {
      throw InputError("--levels: each level must lie in (0, 1) (0.999 means 99.9%), got " + brief(v));
    }
    if (i > 0 && !(v > levels[i - 1])) throw InputError("--levels: list the levels in increasing order");
  }
}

// --asset-correlation: 'basel' or a decimal in [0, 1).
void read_asset_correlation(const std::string& text, PortfolioBookOptions& run) {
  if (text.empty()) return;
  if (text == "basel") {
    run.basel_correlation = true;
    return;
  }
  double v = std::nan("");
  try {
    std::size_t used = 0;
    v = std::stod(text, &used);
    if (used != text.size()) v = std::nan("");
  } catch (const std::exception&) {
    v = std::nan("");
  }
  if (!(v >= 0.0 && v < 1.0)) {
    throw InputError("--asset-correlation: expected basel or a decimal in [0, 1) (0.2 means 20%), got '" +
                     text + "'");
  }
  run.asset_correlation = v;
}

// The settings and run options from the command line, checked in the order they are reported.
PortfolioBookOptions portfolio_options(const PortfolioCli& o, Config& config) {
  config.score = scoring_settings(config.score, o.scoring);
  if (!o.levels.empty()) {
    check_levels(o.levels);
    config.portfolio.confidence_levels = o.levels;
  }
  if (o.seed) config.portfolio.seed = *o.seed;
  if (o.loss_grid) config.portfolio.loss_grid_points = *o.loss_grid;
  PortfolioBookOptions run;
  read_asset_correlation(o.asset_correlation, run);
  if (o.importance_sampling && o.monte_carlo == 0) {
    throw InputError("--importance-sampling: applies to the simulation; give --monte-carlo N as well");
  }
  run.threads = thread_count(o.threads);
  run.monte_carlo_scenarios = o.monte_carlo;
  run.importance_sampling = o.importance_sampling;
  run.contributions = !o.no_contributions;
  run.distribution = !o.distribution_output.empty();
  if (o.driving_pd == "calibrated" && o.pd_calibration.empty()) {
    throw InputError("--driving-pd calibrated: needs --pd-calibration CAL.yaml");
  }
  run.driving_pd =
      o.driving_pd == "model" || o.pd_calibration.empty() ? DrivingPd::model : DrivingPd::calibrated;
  run.reporting_currency = o.reporting_currency;
  return run;
}

// The output and the summary and distribution files, opened before the run (two naming the same
// file are refused) and committed together after it.
struct PortfolioOutputs {
  OutputSet set;
  OutputFile* out = nullptr;
  OutputFile* summary = nullptr;
  OutputFile* distribution = nullptr;
};

void open_portfolio_files(const PortfolioCli& o, PortfolioOutputs& files) {
  files.out = &files.set.add("-o", o.out.output);
  if (!o.summary_output.empty()) files.summary = &files.set.add("--summary-output", o.summary_output);
  if (!o.distribution_output.empty()) {
    files.distribution = &files.set.add("--distribution-output", o.distribution_output);
  }
}

void write_portfolio_files(const PortfolioOutputs& files, const PortfolioCli& o,
                           const PortfolioResult& result, const Book& book) {
  OutputFile* out = files.out;
  write_portfolio(result, book, o.out.format, [out](std::string_view s) { out->write(s); });
  if (files.summary) files.summary->write(portfolio_summary_csv(result));
  if (files.distribution) files.distribution->write(portfolio_distribution_csv(result));
}

// Without FX rates: a book in several currencies is refused, naming them and the options.
void check_one_currency(const Book& book, const ScoreSettings& settings) {
  const std::vector<std::string> currencies = book_currencies(book, settings);
  if (currencies.size() < 2) return;
  std::string names;
  for (const std::string& c : currencies) names.append(names.empty() ? "" : ", ").append(c);
  throw InputError(
      book.origin + ": the obligors' amounts are in " + std::to_string(currencies.size()) + " currencies (" +
      names +
      "): a portfolio adds exposures and losses up in one currency; give --reporting-currency CCY "
      "and --fx FILE (units of CCY per unit of each currency)");
}

// One closing line per scenario: obligors in, expected loss, VaR, ES and IRB capital.
void print_portfolio_closing(const PortfolioResult& result) {
  const std::size_t top = result.confidence_levels.size() - 1;
  char level[32];
  std::snprintf(level, sizeof level, "%g%%", 100.0 * result.confidence_levels[top]);
  for (const PortfolioScenarioResult& sc : result.scenarios) {
    const bool ok = !sc.exact.tails.empty();
    const std::string unit = result.reporting_currency.empty() ? "" : " " + result.reporting_currency;
    std::cerr << "firmcall: " << sc.name << ": " << sc.included << " of " << sc.obligors.size()
              << " obligors in the portfolio; expected loss " << brief(sc.total.expected_loss) << unit
              << ", VaR " << level << " " << brief(ok ? sc.exact.tails[top].var : std::nan("")) << unit
              << ", ES " << level << " " << brief(ok ? sc.exact.tails[top].es : std::nan("")) << unit
              << ", IRB capital " << brief(sc.total.irb_capital) << unit << "\n";
  }
}

ExitCode run_portfolio_command(const PortfolioCli& o, const GlobalOptions& global) {
  Config config = global.config();
  PortfolioBookOptions run = portfolio_options(o, config);
  Progress progress(!global.quiet && ::isatty(STDERR_FILENO) != 0);
  run.progress = [&progress](const std::string& s, std::uint64_t done, std::uint64_t all) {
    progress.update(s, done, all);
  };
  // Everything that can be wrong with the files is found before any output is written.
  const Book book = load_book(o.book);
  std::vector<Scenario> scenarios;
  if (!o.scenarios.empty()) {
    ScenarioSet set = load_scenarios(o.scenarios);
    check_filters(set, book);
    scenarios = std::move(set.scenarios);
  }
  std::unique_ptr<CorrelationFile> correlation;
  if (!o.correlation.empty()) {
    correlation = std::make_unique<CorrelationFile>(load_correlation_file(o.correlation));
  }
  CalibrationRecord calibration;
  if (!o.pd_calibration.empty()) {
    calibration = read_calibration(o.pd_calibration);
    run.pd_calibration = &calibration.calibration;
    run.pd_calibration_origin = o.pd_calibration;
  }
  FxTable fx;
  if (!o.fx.empty()) {
    fx = load_fx_rates(o.fx);
    run.fx = &fx;
  } else {
    check_one_currency(book, config.score);
  }
  run.exchange = global.exchange;
  if (!global.writes_outputs) {  // a process of an mpirun other than the root: simulates, writes nothing
    const PortfolioResult result =
        run_portfolio(book, scenarios, o.scenarios, correlation.get(), config, run);
    return rows_exit_code(result.failed_rows);
  }
  PortfolioOutputs files;
  open_portfolio_files(o, files);
  const PortfolioResult result = run_portfolio(book, scenarios, o.scenarios, correlation.get(), config, run);
  progress.clear();
  write_portfolio_files(files, o, result, book);
  files.set.commit();
  if (!global.quiet) {
    print_run_notes(result.notes, result.problems, result.problems_not_listed, o.out, "");
    if (o.out.wants_closing_line()) print_portfolio_closing(result);
  }
  return rows_exit_code(result.failed_rows);
}
}  // namespace

void add_portfolio_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<PortfolioCli>();
  CLI::App* cmd = app.add_subcommand(
      "portfolio",
      "Portfolio loss distribution, VaR and expected shortfall with contributions, and Basel IRB capital");
  declare_portfolio_options(cmd, *opts);
  set_action(cmd, run, [opts, &global] { return run_portfolio_command(*opts, global); });
}

}  // namespace firmcall::cli
