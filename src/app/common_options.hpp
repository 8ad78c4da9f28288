// The options several commands share, declared and read in one place: the output (-f, -o), the
// scoring overrides (--rate, --horizon, --default-point-weight, --measure), -j, the history store
// (--db, --run, --against) and the PD term-structure options; and the notes every command prints
// on standard error when it is done.
#pragma once

#include <CLI/CLI.hpp>

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/io/settings_io.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

/// The ends of a numeric option's range: closed (the end is allowed) or open (it is not).
enum class RangeEnd { closed, open };

/// A check for a numeric option: a finite decimal (never nan or inf) in the range lo..hi, each end
/// closed or open; the message names the range and `unit_hint` (e.g. "0.03 means 3%"). For list
/// options it checks each item.
CLI::Validator finite_number(double lo, double hi, RangeEnd lo_end = RangeEnd::closed,
                             RangeEnd hi_end = RangeEnd::closed, std::string unit_hint = {});

/// A check for a whole-number option: digits only (no sign), within lo..hi; the message names the
/// range (no wrap-around or clamping of values past the type).
CLI::Validator whole_number(std::uint64_t lo, std::uint64_t hi);

/// --reporting-currency CCY (checked: three upper-case letters) and --fx FILE (an existing file),
/// each needing the other; the help texts say which amounts they convert.
void add_currency_options(CLI::App* cmd, std::string& reporting_currency, std::string& fx,
                          const std::string& reporting_help, const std::string& fx_help);

/// `opt` as a comma-separated list option: one argument per flag ("--levels 0.99,0.999"), so a
/// positional argument after it is never taken into the list; the flag may be repeated.
CLI::Option* list_option(CLI::Option* opt);

/// The largest horizon in years an option accepts (as the book's horizon_years).
inline constexpr double kMaxHorizonYears = 100.0;

/// -f/--format, -o/--output and --csv-text-guard.
struct OutputOptions {
  OutputFormat format = OutputFormat::table;  ///< -f, parsed from its word (table, csv or json)
  std::string output;                         ///< -o; empty: standard output
  bool format_given = false;                  ///< -f was given (else the format follows -o's extension)
  /// True when the closing line goes to standard error: the output is for a program or a file.
  bool wants_closing_line() const { return format != OutputFormat::table || !output.empty(); }
};

/// Adds -f/--format and -o/--output.
void add_output_options(CLI::App* cmd, OutputOptions& o);

/// The overrides of the scoring settings typed on the command line (unset: from the settings).
struct ScoringOptions {
  std::optional<double> rate;     ///< --rate
  std::optional<double> horizon;  ///< --horizon
  std::optional<double> weight;   ///< --default-point-weight
  std::string measure;            ///< --measure; empty: from the settings
};

/// The --horizon help of most commands.
inline constexpr const char* kHorizonHelp = "Horizon in years for every obligor";

/// Adds --rate, --horizon (with `horizon_help`), --default-point-weight and, with `measure`, --measure.
void add_scoring_options(CLI::App* cmd, ScoringOptions& o, const char* horizon_help = kHorizonHelp,
                         bool measure = true);

/// InputError when --rate lies outside [-1, 1].
void check_rate(const ScoringOptions& o);

/// `base` with the overrides of `o`; checks --rate first.
ScoreSettings scoring_settings(ScoreSettings base, const ScoringOptions& o);

/// Adds -j/--threads (1 to 1024; 0 until given).
void add_threads_option(CLI::App* cmd, unsigned& threads,
                        const char* help = "Worker threads (default: all cores)");

/// Worker threads when -j is not given: all cores (at least 1), found once.
unsigned default_threads();

/// `given` (-j), or default_threads() when it is 0.
inline unsigned thread_count(unsigned given) {
  return given > 0 ? given : default_threads();
}

/// Adds --db (the history store file).
CLI::Option* add_db_option(CLI::App* cmd, std::string& db);

/// Options shared by the commands that read the history store.
struct StoreReadOptions {
  std::string db;       ///< --db
  OutputOptions out;    ///< -f, -o
  std::string run;      ///< --run (comparisons)
  std::string against;  ///< --against (comparisons)
};

/// Adds --db, --format and --output to a command reading the store; with `runs`, also --run and
/// --against.
void add_store_read_options(CLI::App* cmd, StoreReadOptions& o, bool runs);

/// Opens the existing history store that --db names (or the default one).
RunStore open_store(const std::string& db, const Config& config);

/// Adds the PD term-structure options (shared by score and stress).
void add_term_options(CLI::App* cmd, TermOptionText& c);

/// Writes `text` to `path` (empty or "-": standard output), all or nothing; `option` names it in
/// messages (io/output_file.hpp).
void write_output(const std::string& path, std::string_view text, const std::string& option = "-o");

/// `text` with each line as terminal_text shows it (line breaks kept).
std::string terminal_lines(std::string_view text);

/// Each line on standard error after "firmcall: ", as terminal_text shows it.
void print_lines(const std::vector<std::string>& lines);

/// The row problems on standard error, when the output is machine-readable (the table lists them).
void print_problems(const std::vector<std::string>& problems, std::size_t not_listed, OutputFormat format);

/// What every run prints on standard error when it is done: its notes, its row problems (machine-
/// readable output only) and, when out.wants_closing_line() and it is not empty, `closing` after
/// "firmcall: ".
void print_run_notes(const std::vector<std::string>& notes, const std::vector<std::string>& problems,
                     std::size_t not_listed, const OutputOptions& out, const std::string& closing);

/// The note on the formula-like CSV text cells written by the run (none when there were none).
void print_csv_formula_note();

/// " (N invalid input, M not converged)" when some rows failed, else "".
std::string failure_counts(std::size_t invalid, std::size_t not_converged);

/// Six significant digits for the closing notes; "-" where there is no value (never "nan").
std::string brief(double v);

}  // namespace firmcall::cli
