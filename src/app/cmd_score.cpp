// `firmcall score BOOK`: the main job.
#include <cstdio>
#include <iostream>
#include <memory>
#include <thread>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/monitor/record_book.hpp"

namespace firmcall::cli {

namespace {
struct ScoreCli {
  std::string book;
  std::string format = "table";
  std::string output;
  std::optional<double> rate;
  std::optional<double> horizon;
  std::optional<double> weight;
  std::string measure;
  unsigned threads = 0;
  bool sensitivities = false;
  bool grades = false;  // --grades: show each obligor's grade
  bool record = false;  // --record: also write the run to the history store
  std::string db;
  std::string as_of;
  TermOptionText term;
};

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

// `score --horizons ...` / `--model ...`: the PD term-structure path (term_run.hpp).
int run_term_structure(const std::string& book_path, const ScoreSettings& settings,
                       const TermBookOptions& run, const std::string& output, bool quiet) {
  ScoreSummary summary;
  std::size_t rows = 0;
  {
    const Book book = load_book(book_path);
    OutputFile out(output);
    const TextSink sink = [&out](std::string_view s) { out.write(s); };
    summary = score_term_structure(book, settings, run, sink);
    out.commit();
    rows = book.obligors.size() * run.models.size() * std::max<std::size_t>(run.horizons.size(), 1);
  }
  if (!quiet) {
    for (const auto& n : summary.notes) std::cerr << "firmcall: " << n << "\n";
    if (summary.total == 0) std::cerr << "firmcall: note: " << book_path << " has no obligors\n";
    if (run.format != OutputFormat::table) {
      for (const auto& p : summary.problems) std::cerr << "firmcall: " << p << "\n";
      if (summary.problems_not_listed > 0) {
        std::cerr << "firmcall: ... and " << summary.problems_not_listed << " more (column message)\n";
      }
    }
    if (run.format != OutputFormat::table || !output.empty()) {
      std::cerr << "firmcall: term structures of " << summary.scored << " of " << summary.total
                << " obligors";
      if (summary.failed() > 0) {
        std::cerr << " (" << summary.invalid << " invalid input, " << summary.not_converged
                  << " not converged)";
      }
      std::cerr << "; " << rows << " rows\n";
    }
  }
  return summary.failed() > 0 ? kExitRowsFailed : kExitOk;
}
}  // namespace

unsigned default_threads() {
  return std::max(1U, std::thread::hardware_concurrency());
}

void add_score_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<ScoreCli>();
  CLI::App* cmd =
      app.add_subcommand("score", "Score every obligor of a book (YAML or CSV) with the Merton model");
  cmd->add_option("book", opts->book, "Obligor book: .yaml/.yml or .csv")->required();
  cmd->add_option("-f,--format", opts->format, "Output format: table (for people), csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  cmd->add_option("-o,--output", opts->output, "Write here instead of standard output (all or nothing)");
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
  cmd->add_flag("--sensitivities", opts->sensitivities,
                "Add analytic sensitivities of DD, PD and spread per +1% equity value, +1 point equity "
                "volatility, +1% default point and +1 bp rate");
  cmd->add_flag("--grades", opts->grades, "Show each obligor's grade on the master scale (settings: grades)");
  CLI::Option* record = cmd->add_flag("--record", opts->record, "Also record the run in the history store");
  cmd->add_option("--db", opts->db,
                  "History store file (default: monitoring.store, else the user's data folder)")
      ->needs(record);
  cmd->add_option("--as-of", opts->as_of,
                  "As-of date YYYY-MM-DD of the recorded run (default: book's, else today)")
      ->needs(record);
  add_term_options(cmd, opts->term);
  cmd->footer(
      std::string("\nExit codes: 0 every obligor scored; 1 some obligors invalid or not converged "
                  "(the others are scored); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);

  cmd->callback([opts, &global, &run]() {
    run = [opts, &global]() -> int {
      Config config = global.config();
      ScoreSettings settings = config.score;
      settings.rate_override = opts->rate;
      settings.horizon_override = opts->horizon;
      settings.weight_override = opts->weight;
      if (!opts->measure.empty()) settings.measure = *measure_from_string(opts->measure);
      if (opts->rate && (*opts->rate < -1.0 || *opts->rate > 1.0)) {
        throw InputError("--rate: expected a continuously compounded decimal in [-1, 1] (0.03 means 3%)");
      }
      ScoreBookOptions runopts;
      runopts.format = opts->format == "csv"    ? OutputFormat::csv
                       : opts->format == "json" ? OutputFormat::json
                                                : OutputFormat::table;
      runopts.threads = opts->threads > 0 ? opts->threads : default_threads();
      runopts.sensitivities = opts->sensitivities;
      if (opts->grades) runopts.grades = &config.grades;
      TermBookOptions term = term_book_options(config.term, opts->term);  // checks the term options
      if (wants_term_structure(opts->term)) {
        if (opts->sensitivities) {
          throw InputError("--sensitivities: not available with term structures (--horizons, --model)");
        }
        if (opts->grades || opts->record) {
          throw InputError(std::string(opts->grades ? "--grades" : "--record") +
                           ": not available with term structures (--horizons, --model)");
        }
        term.format = runopts.format;
        term.threads = runopts.threads;
        return run_term_structure(opts->book, settings, term, opts->output, global.quiet);
      }

      const BookFormat fmt = book_format_of(opts->book);
      std::string store_path;
      if (opts->record) {
        if (!opts->as_of.empty() && !is_calendar_date(opts->as_of)) {
          throw InputError("--as-of: expected a date YYYY-MM-DD, got '" + opts->as_of + "'");
        }
        store_path = resolve_store_path(opts->db, config.monitor);
      }
      ScoreSummary summary;
      {
        OutputFile out(opts->output);
        const TextSink sink = [&out](std::string_view s) { out.write(s); };
        if (fmt == BookFormat::csv) {
          std::unique_ptr<std::FILE, FileCloser> in(std::fopen(opts->book.c_str(), "rb"));
          if (!in) throw InputError("cannot open file '" + opts->book + "'");
          summary = score_csv_stream(in.get(), opts->book, settings, runopts, sink);
        } else {
          summary = score_book(load_book(opts->book), settings, runopts, sink);
        }
        out.commit();
      }
      if (!global.quiet) {
        for (const auto& n : summary.notes) std::cerr << "firmcall: " << n << "\n";
        if (summary.total == 0) std::cerr << "firmcall: note: " << opts->book << " has no obligors\n";
        if (runopts.format != OutputFormat::table) {
          for (const auto& p : summary.problems) std::cerr << "firmcall: " << p << "\n";
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
          if (summary.scored > 0) {
            char buf[64];
            std::snprintf(
                buf, sizeof buf, "; mean solver iterations %.2f",
                static_cast<double>(summary.newton_iterations) / static_cast<double>(summary.scored));
            std::cerr << buf;
          }
          std::cerr << "\n";
        }
      }
      if (opts->record) {
        const RecordedRun rec =
            record_book(opts->book, settings, config,
                        {.store_path = store_path, .as_of = opts->as_of, .tool_version = FIRMCALL_VERSION});
        if (!global.quiet) {
          std::cerr << "firmcall: recorded run " << rec.run_id << " as of " << rec.as_of << " ("
                    << rec.obligors << " obligors) in " << store_path << "\n";
        }
      }
      return summary.failed() > 0 ? kExitRowsFailed : kExitOk;
    };
  });
}

}  // namespace firmcall::cli
