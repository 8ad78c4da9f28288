// `firmcall report BOOK --html FILE`: the book at a glance as one self-contained HTML page.
#include <algorithm>
#include <charconv>
#include <cstdlib>
#include <ctime>
#include <iostream>
#include <memory>
#include <string_view>

#include "build_commit.hpp"  // FIRMCALL_COMMIT, written at build time
#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/report/html_report.hpp"
#include "firmcall/util/timestamp.hpp"

namespace firmcall::cli {

namespace {
// The page's generation time, UTC: SOURCE_DATE_EPOCH when set to whole seconds up to the end of
// year 9999 (the reproducible-builds convention, so that a page can be made again byte for byte),
// else now.
std::string generation_time() {
  const char* epoch = std::getenv("SOURCE_DATE_EPOCH");
  if (epoch != nullptr && *epoch != '\0') {
    const std::string_view text(epoch);
    long long seconds = 0;
    const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), seconds);
    constexpr long long kLastSecondOf9999 = 253402300799;  // 9999-12-31T23:59:59Z
    if (ec == std::errc() && end == text.data() + text.size() && seconds >= 0 &&
        seconds <= kLastSecondOf9999) {
      return utc_timestamp(static_cast<std::time_t>(seconds));
    }
  }
  return utc_timestamp_now();
}

struct ReportCli {
  ReportOptions report;
  std::string html;
  std::optional<std::string> horizons;
  unsigned threads = 0;
  std::string driving_pd;  // --driving-pd: model or calibrated (default: calibrated with a calibration)
};

ExitCode run_report(const ReportCli& opts, const GlobalOptions& global) {
  ReportOptions o = opts.report;
  if (opts.horizons) {
    if (o.term_ids.empty() && o.sheet_ids.empty())
      throw InputError("--horizons: applies to the term structures; give --names or --sheet as well");
    o.horizons = *opts.horizons;
  }
  if (!o.fx_path.empty() && !o.portfolio && o.scenarios_path.empty()) {
    throw InputError(
        "--fx: applies to the stress and portfolio sections; give --scenarios or --portfolio as well");
  }
  if (!o.correlation_path.empty() && !o.portfolio) {
    throw InputError("--correlation: applies to the portfolio section; give --portfolio as well");
  }
  if ((!o.store_run.empty() || !o.against.empty()) && o.store_path.empty()) {
    throw InputError("--run/--against: apply to the movers section; give --db STORE as well");
  }
  if (!o.validation_defaults_path.empty() && (o.store_path.empty() || !o.validation_path.empty())) {
    throw InputError(
        "--validate-defaults: builds the validation section from the history store; give --db STORE and no "
        "--validate OUTCOMES");
  }
  if (!o.validation_against_path.empty() && o.validation_path.empty()) {
    throw InputError(
        "--validate-against: applies to the validation section; give --validate OUTCOMES as well");
  }
  // As score: the calibrated PD drives when a calibration is given, unless --driving-pd model.
  if (opts.driving_pd == "calibrated" && o.pd_calibration_path.empty()) {
    throw InputError("--driving-pd calibrated: needs --pd-calibration CAL.yaml");
  }
  o.driving_pd =
      !o.pd_calibration_path.empty() && opts.driving_pd != "model" ? DrivingPd::calibrated : DrivingPd::model;
  o.threads = thread_count(opts.threads);
  o.tool_version = std::string(FIRMCALL_VERSION).append(" (commit ").append(FIRMCALL_COMMIT).append(")");
  o.generated_at = generation_time();
  // Every input is read and every figure computed before the file is opened.
  const ReportData data = gather_report(o, global.config());
  const std::string html = html_report(data);
  write_output(opts.html, html, "--html");
  const auto failed = static_cast<std::size_t>(
      std::count_if(data.scored.begin(), data.scored.end(),
                    [](const ScoredObligor& s) { return s.status != RowStatus::ok; }));
  if (!global.quiet) {
    std::cerr << "firmcall: wrote " << opts.html << ": " << data.scored.size() << " obligors";
    if (failed > 0) std::cerr << " (" << failed << " not scored)";
    std::cerr << (data.stress ? ", stress" : "") << (!data.terms.empty() ? ", term structures" : "")
              << (data.portfolio ? ", portfolio" : "") << (data.monitoring ? ", movers and alerts" : "")
              << (data.validation ? ", validation" : "")
              << (data.sheets.empty()       ? ""
                  : data.sheets.size() == 1 ? ", 1 tear sheet"
                                            : ", " + std::to_string(data.sheets.size()) + " tear sheets")
              << (data.calibration
                      ? (data.options.driving_pd == DrivingPd::calibrated ? "; calibrated PD drives"
                                                                          : "; model PD drives")
                      : "")
              << "\n";
  }
  return rows_exit_code(failed);
}
}  // namespace

void add_report_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<ReportCli>();
  CLI::App* cmd = app.add_subcommand(
      "report",
      "One self-contained HTML page with charts: book summary, DD against leverage, weakest and "
      "strongest names, and stress, term-structure, portfolio and monitoring sections when asked");
  cmd->add_option("book", opts->report.book_path, "Obligor book: .yaml/.yml or .csv")->required();
  cmd->add_option("--html", opts->html, "Write the page here (all or nothing)")->required();
  cmd->add_option("-s,--scenarios", opts->report.scenarios_path,
                  "Stress scenario file (as for `firmcall stress`): adds the stress section");
  list_option(
      cmd->add_option("--names", opts->report.term_ids,
                      "Obligor ids whose PD term structure is drawn, e.g. GOR-33,ZEP-26: adds the term "
                      "section"));
  list_option(cmd->add_option("--sheet", opts->report.sheet_ids,
                              "Obligor id with a tear sheet (a page of inputs, results, sensitivities, term "
                              "structure, stress results "
                              "and, with --db, DD and PD history); repeat it or give ID,ID"));
  cmd->add_option(
      "--horizons", opts->horizons,
      "Horizons of the term structures and tear sheets in years (default 0.5,1,2,3,5,7,10); needs "
      "--names or --sheet");
  cmd->add_flag("--portfolio", opts->report.portfolio,
                "Adds the portfolio loss distribution with EL, VaR and ES (every obligor needs ead)");
  cmd->add_option("-c,--correlation", opts->report.correlation_path,
                  "Sector correlation file for the portfolio section (as for `firmcall portfolio`)");
  add_currency_options(cmd, opts->report.reporting_currency, opts->report.fx_path,
                       "Currency of the stress summaries' and the portfolio section's amounts (three "
                       "upper-case letters); needs --fx (as for `firmcall portfolio`)",
                       "FX rates to the reporting currency for the stress and portfolio sections (as for "
                       "`firmcall portfolio`)");
  cmd->add_option("--db", opts->report.store_path, "History store: adds the movers and alerts section");
  cmd->add_option("--run", opts->report.store_run,
                  "Run of the store to show: run id or as-of date (default: latest)");
  cmd->add_option("--against", opts->report.against,
                  "Run to compare with: run id or as-of date (default: the run before --run)");
  cmd->add_option("--validate", opts->report.validation_path,
                  "Outcomes file (as for `firmcall validate`): adds the validation section")
      ->check(CLI::ExistingFile);
  cmd->add_option("--validate-defaults", opts->report.validation_defaults_path,
                  "Defaults file (id, default_date) with --db STORE: the validation section from the "
                  "recorded runs (as validate --db STORE --defaults FILE; the calibrated PD when it drives)")
      ->check(CLI::ExistingFile);
  cmd->add_option("--validate-against", opts->report.validation_against_path,
                  "An earlier outcomes file (as validate --against): adds the grade migration matrix and "
                  "the population stability index (matched on id); needs --validate")
      ->check(CLI::ExistingFile);
  cmd->add_option(
      "--pd-calibration", opts->report.pd_calibration_path,
      "Calibration file (firmcall calibrate --save): the name tables show each obligor's one-year "
      "calibrated PD and its interval beside the model PD");
  cmd->add_option("--driving-pd", opts->driving_pd,
                  "PD behind grades, expected loss and the portfolio section: model or calibrated (default: "
                  "calibrated with --pd-calibration, else model)")
      ->check(CLI::IsMember({"model", "calibrated"}));
  cmd->add_option("--top", opts->report.top, "Rows of the name tables (default 10)")
      ->check(whole_number(1, 1000));
  cmd->add_option("--title", opts->report.title, "Page title (default: the book's label)");
  add_threads_option(cmd, opts->threads, "Worker threads of the portfolio run (default: all cores)");
  cmd->footer(
      std::string(
          "\nExit codes: 0 every obligor scored; 1 the page was written but some obligors could "
          "not be scored (listed in it); 2 unreadable or malformed file, unknown id in --names or --sheet, "
          "or bad command line (nothing written).\n\n") +
      kCaution);
  set_action(cmd, run, [opts, &global] { return run_report(*opts, global); });
}

}  // namespace firmcall::cli
