// `firmcall score BOOK`: the main job.
#include <unistd.h>
#include <filesystem>

#include <cstdio>
#include <iostream>
#include <memory>
#include <optional>

#include "commands.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/io/book_stream.hpp"
#include "firmcall/io/calibration_io.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/monitor/record_book.hpp"

namespace firmcall::cli {

namespace {
struct ScoreCli {
  std::string book;
  OutputOptions out;
  ScoringOptions scoring;
  unsigned threads = 0;
  bool sensitivities = false;
  bool grades = false;       // --grades: show each obligor's grade
  bool record = false;       // --record: also write the run to the history store
  bool replace_run = false;  // --replace-run: replace a run of the same book and as-of date
  std::string db;
  std::string as_of;
  TermOptionText term;
  std::string pd_calibration;  // --pd-calibration: calibration file (calibrate --save)
  std::string driving_pd;      // --driving-pd: model or calibrated (default: calibrated with a calibration)
};

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

void declare_score_options(CLI::App* cmd, ScoreCli& o) {
  cmd->add_option("book", o.book, "Obligor book: .yaml/.yml or .csv")->required();
  add_output_options(cmd, o.out);
  add_scoring_options(cmd, o.scoring);
  add_threads_option(cmd, o.threads);
  cmd->add_flag("--sensitivities", o.sensitivities,
                "Add analytic sensitivities of DD, PD and spread per +1% equity value, +1 point equity "
                "volatility, +1% default point and +1 bp rate");
  cmd->add_flag("--grades", o.grades, "Show each obligor's grade on the master scale (settings: grades)");
  CLI::Option* record = cmd->add_flag("--record", o.record, "Also record the run in the history store");
  add_db_option(cmd, o.db)->needs(record);
  cmd->add_option("--as-of", o.as_of,
                  "As-of date YYYY-MM-DD of the recorded run (default: book's, else today)")
      ->needs(record);
  cmd->add_flag("--replace-run", o.replace_run,
                "Replace the run of the same book (same file bytes) and as-of date already in the store "
                "(without it, such a run is refused)")
      ->needs(record);
  add_term_options(cmd, o.term);
  cmd->add_option("--pd-calibration", o.pd_calibration,
                  "Calibration file (firmcall calibrate --save): add each obligor's one-year calibrated PD "
                  "and its interval at the end of the columns");
  cmd->add_option("--driving-pd", o.driving_pd,
                  "PD behind the grades: model or calibrated (default: calibrated with --pd-calibration, "
                  "else model)")
      ->check(CLI::IsMember({"model", "calibrated"}));
  cmd->footer(
      std::string("\nExit codes: 0 every obligor scored; 1 some obligors invalid or not converged "
                  "(the others are scored); 2 unreadable or malformed file or bad command line.\n\n") +
      kCaution);
}

// The notes on standard error after a run: notes, row problems and the closing count.
void print_score_notes(const ScoreSummary& summary, const std::string& book_path, const OutputOptions& out,
                       const std::string& closing) {
  std::vector<std::string> notes = summary.notes;
  if (summary.total == 0) notes.push_back("note: " + book_path + " has no obligors");
  print_run_notes(notes, summary.problems, summary.problems_not_listed, out, closing);
}

// `score --horizons ...` / `--model ...`: the PD term-structure path (term_book.hpp).
ExitCode run_term_structure(const ScoreCli& opts, const ScoreSettings& settings, const TermBookOptions& run,
                            bool quiet) {
  ScoreSummary summary;
  std::size_t rows = 0;
  {
    const std::unique_ptr<BookStream> book = BookStream::open(opts.book);
    OutputFile out(opts.out.output);
    const TextSink sink = [&out](std::string_view s) { out.write(s); };
    summary = score_term_structure(*book, settings, run, sink);
    out.commit();
    rows = summary.total * run.models.size() * std::max<std::size_t>(run.horizons.size(), 1);
  }
  if (!quiet) {
    print_score_notes(summary, opts.book, opts.out,
                      "term structures of " + std::to_string(summary.scored) + " of " +
                          std::to_string(summary.total) + " obligors" +
                          failure_counts(summary.invalid, summary.not_converged) + "; " +
                          std::to_string(rows) + " rows");
  }
  return rows_exit_code(summary.failed());
}

// Scores the book: a CSV book streams, a YAML book is read whole.
ScoreSummary score_whole_book(const ScoreCli& opts, BookFormat fmt, const ScoreSettings& settings,
                              const ScoreBookOptions& run, OutputFile& out) {
  ScoreSummary summary;
  const TextSink sink = [&out](std::string_view s) { out.write(s); };
  if (fmt == BookFormat::csv) {
    std::unique_ptr<std::FILE, FileCloser> in(std::fopen(opts.book.c_str(), "rb"));
    if (!in) throw InputError("cannot open file '" + opts.book + "'");
    summary = score_csv_stream(in.get(), opts.book, settings, run, sink);
  } else {
    summary = score_book(load_book(opts.book), settings, run, sink);
  }
  return summary;
}

std::string score_closing(const ScoreSummary& summary) {
  std::string closing = "scored " + std::to_string(summary.scored) + " of " + std::to_string(summary.total) +
                        " obligors" + failure_counts(summary.invalid, summary.not_converged);
  if (summary.scored > 0) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "; mean solver iterations %.2f",
                  static_cast<double>(summary.newton_iterations) / static_cast<double>(summary.scored));
    closing += buf;
  }
  return closing;
}

// InputError for an option that does not apply to term structures.
void check_term_combination(const ScoreCli& opts) {
  if (opts.sensitivities) {
    throw InputError("--sensitivities: not available with term structures (--horizons, --model)");
  }
  if (!opts.pd_calibration.empty()) {
    throw InputError("--pd-calibration: not available with term structures (--horizons, --model)");
  }
  if (opts.grades || opts.record) {
    throw InputError(std::string(opts.grades ? "--grades" : "--record") +
                     ": not available with term structures (--horizons, --model)");
  }
}

ExitCode run_score(const ScoreCli& opts, const GlobalOptions& global) {
  Config config = global.config();
  const ScoreSettings settings = scoring_settings(config.score, opts.scoring);
  ScoreBookOptions run;
  run.format = opts.out.format;
  run.threads = thread_count(opts.threads);
  run.sensitivities = opts.sensitivities;
  if (opts.grades) run.grades = &config.grades;
  CalibrationRecord calibration;
  if (!opts.pd_calibration.empty() && !wants_term_structure(opts.term)) {
    calibration = read_calibration(opts.pd_calibration);
    run.pd_calibration = &calibration.calibration;
    run.pd_calibration_origin = opts.pd_calibration;
    if (opts.driving_pd != "model") run.driving_pd = DrivingPd::calibrated;
  }
  if (opts.driving_pd == "calibrated" && opts.pd_calibration.empty()) {
    throw InputError("--driving-pd calibrated: needs --pd-calibration CAL.yaml");
  }
  TermBookOptions term = term_book_options(config.term, opts.term);  // checks the term options
  if (wants_term_structure(opts.term)) {
    check_term_combination(opts);
    term.format = run.format;
    term.threads = run.threads;
    return run_term_structure(opts, settings, term, global.quiet);
  }
  const BookFormat fmt = book_format_of(opts.book);
  std::string store_path;
  std::optional<PreparedRun> prepared;
  RecordBookOptions record_options;
  if (opts.record) {
    // The date and the store are checked before anything is written.
    if (!opts.as_of.empty() && !is_calendar_date(opts.as_of)) {
      throw InputError("--as-of: expected a date YYYY-MM-DD, got '" + opts.as_of + "'");
    }
    store_path = resolve_store_path(opts.db, config.monitor);
    // An existing store is opened once before the run, so a foreign or newer file is refused
    // before anything is scored (a missing one is created only when the run is recorded).
    std::error_code size_error;
    if (::access(store_path.c_str(), F_OK) == 0 && std::filesystem::file_size(store_path, size_error) != 0) {
      const RunStore check(store_path, StoreOpen::read_only, config.monitor.busy_timeout_seconds);
    }
    RunCalibration identity;
    if (run.pd_calibration) {
      identity = {.file = opts.pd_calibration,
                  .method = std::string(to_string(calibration.calibration.method)),
                  .data_sha256 = calibration.data_sha256};
    }
    record_options = {.store_path = store_path,
                      .as_of = opts.as_of,
                      .tool_version = FIRMCALL_VERSION,
                      .pd_calibration = run.pd_calibration,
                      .calibration = identity,
                      .driving_pd = run.driving_pd,
                      .replace_run = opts.replace_run,
                      .threads = run.threads};
    // The run to record is scored from the book's bytes first, so that a second run of the same
    // book and as-of date is refused before any output is written.
    prepared = prepare_run(opts.book, settings, config, record_options);
    try {
      refuse_same_book(*prepared, record_options, config.monitor.busy_timeout_seconds);
    } catch (const SameBookRun& e) {
      throw InputError(e.message() + "; give --replace-run to replace " +
                       (e.run_ids().size() == 1 ? "it" : "them") +
                       ", or --as-of DATE to record another date");
    }
  }
  // -o goes to its temporary file; the run is recorded (one transaction) only when the output is
  // written, and the output replaces its target only when the run is recorded.
  OutputSet outputs;
  OutputFile& out = outputs.add("-o", opts.out.output);
  if (opts.record) outputs.reserve("--db", store_path);
  // The run is scored and inserted (uncommitted) while the output is written.
  std::optional<RunRecorder> recorder;
  if (prepared) recorder.emplace(*prepared, record_options, config.monitor.busy_timeout_seconds);
  const ScoreSummary summary = score_whole_book(opts, fmt, settings, run, out);
  std::optional<RecordedRun> rec;
  try {
    outputs.commit([&] {
      if (recorder) rec = recorder->finish();
    });
  } catch (const SameBookRun& e) {
    // Recorded by another process since the check above.
    throw InputError(e.message() +
                     "; give --replace-run to replace it, or --as-of DATE to record another date");
  } catch (const InputError& e) {
    if (!rec) throw;
    throw InputError("run " + std::to_string(rec->run_id) + " is recorded in " + store_path + ", but " +
                     e.what());
  }
  if (!global.quiet) print_score_notes(summary, opts.book, opts.out, score_closing(summary));
  if (rec && !global.quiet) {
    std::cerr << "firmcall: recorded run " << rec->run_id << " as of " << rec->as_of << " (" << rec->obligors
              << " obligors";
    if (run.pd_calibration) {
      std::cerr << ", calibrated one-year PDs of " << opts.pd_calibration << ", driving PD "
                << to_string(run.driving_pd);
    }
    std::cerr << ") in " << store_path;
    if (!rec->replaced_run_ids.empty()) {
      std::cerr << (rec->replaced_run_ids.size() == 1 ? ", replacing run " : ", replacing runs ");
      for (std::size_t i = 0; i < rec->replaced_run_ids.size(); ++i) {
        std::cerr << (i == 0 ? "" : ", ") << rec->replaced_run_ids[i];
      }
    } else if (opts.replace_run) {
      std::cerr << "; no earlier run of this book as of " << rec->as_of << " to replace";
    }
    std::cerr << "\n";
  }
  return rows_exit_code(summary.failed());
}
}  // namespace

void add_score_command(CLI::App& app, const GlobalOptions& global, CommandAction& run) {
  auto opts = std::make_shared<ScoreCli>();
  CLI::App* cmd =
      app.add_subcommand("score", "Score every obligor of a book (YAML or CSV) with the Merton model");
  declare_score_options(cmd, *opts);
  set_action(cmd, run, [opts, &global] { return run_score(*opts, global); });
}

}  // namespace firmcall::cli
