// The options several commands share. See common_options.hpp.
#include "common_options.hpp"

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <iostream>
#include <optional>
#include <thread>

#include "firmcall/book/errors.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/format/table_text.hpp"
#include "firmcall/io/output_file.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall::cli {

namespace {
// lo..hi as the user reads it: "[-1, 1]", "(0, 100]".
std::string range_text(double lo, double hi, RangeEnd lo_end, RangeEnd hi_end) {
  return std::string(lo_end == RangeEnd::open ? "(" : "[") + general_number(lo) + ", " + general_number(hi) +
         (hi_end == RangeEnd::open ? ")" : "]");
}
}  // namespace

CLI::Validator finite_number(double lo, double hi, RangeEnd lo_end, RangeEnd hi_end, std::string unit_hint) {
  const std::string range = range_text(lo, hi, lo_end, hi_end);
  const std::string hint = unit_hint.empty() ? std::string() : " (" + unit_hint + ")";
  return CLI::Validator(
      [=](std::string& s) -> std::string {
        const std::string expected = "expected a number in " + range + hint + ", got '" + s + "'";
        // Plain decimals only: strtod would also take "nan", "inf" and hexadecimal floats.
        if (s.empty() || s.find_first_not_of("0123456789+-.eE") != std::string::npos) return expected;
        char* end = nullptr;
        errno = 0;
        const double v = std::strtod(s.c_str(), &end);
        if (end != s.c_str() + s.size() || errno == ERANGE || !std::isfinite(v)) return expected;
        const bool above_lo = lo_end == RangeEnd::open ? v > lo : v >= lo;
        const bool below_hi = hi_end == RangeEnd::open ? v < hi : v <= hi;
        return above_lo && below_hi ? std::string() : expected;
      },
      "NUMBER in " + range);
}

void add_currency_options(CLI::App* cmd, std::string& reporting_currency, std::string& fx,
                          const std::string& reporting_help, const std::string& fx_help) {
  const CLI::Validator code(
      [](std::string& s) -> std::string {
        return is_currency_code(s)
                   ? std::string()
                   : "expected three upper-case letters (ISO 4217 style, e.g. EUR), got '" + s + "'";
      },
      "CCY");
  CLI::Option* reporting =
      cmd->add_option("--reporting-currency", reporting_currency, reporting_help)->check(code);
  CLI::Option* rates = cmd->add_option("--fx", fx, fx_help)->check(CLI::ExistingFile);
  reporting->needs(rates);
  rates->needs(reporting);
}

CLI::Validator whole_number(std::uint64_t lo, std::uint64_t hi) {
  const std::string range = "[" + std::to_string(lo) + ", " + std::to_string(hi) + "]";
  return CLI::Validator(
      [=](std::string& s) -> std::string {
        const std::string expected = "expected a whole number in " + range + ", got '" + s + "'";
        if (s.empty() || s.find_first_not_of("0123456789") != std::string::npos) return expected;
        std::uint64_t v = 0;
        const auto [ptr, ec] = std::from_chars(s.data(), s.data() + s.size(), v);
        if (ec != std::errc() || ptr != s.data() + s.size() || v < lo || v > hi) return expected;
        return {};
      },
      "INT in " + range);
}

CLI::Option* list_option(CLI::Option* opt) {
  return opt->delimiter(',')->allow_extra_args(false);
}

namespace {

// The output format an -o file name implies: .csv, .json, .txt (the table); nullopt without an
// extension (standard output "-", /dev/stdout, a FIFO named without one) or, when -f was given,
// with another extension; an error for another extension without -f.
std::optional<OutputFormat> format_of_output_name(const std::string& path, bool format_given) {
  const std::size_t slash = path.find_last_of('/');
  const std::string base = slash == std::string::npos ? path : path.substr(slash + 1);
  const std::size_t dot = base.find_last_of('.');
  if (dot == std::string::npos || dot == 0) return std::nullopt;
  std::string ext = base.substr(dot + 1);
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return std::tolower(c); });
  if (ext == "csv") return OutputFormat::csv;
  if (ext == "json") return OutputFormat::json;
  if (ext == "txt") return OutputFormat::table;
  if (format_given) return std::nullopt;  // -f says what to write whatever the name
  throw CLI::ValidationError("-o", "'" + path + "': unknown extension '." + ext +
                                       "'; name the file .csv, .json or .txt (the table), or give -f");
}

std::string_view format_word(OutputFormat f) {
  return f == OutputFormat::csv ? "csv" : f == OutputFormat::json ? "json" : "table";
}

}  // namespace

void add_output_options(CLI::App* cmd, OutputOptions& o) {
  cmd->add_option_function<std::string>(
         "-f,--format",
         [&o](const std::string& word) {
           o.format = word == "csv"    ? OutputFormat::csv
                      : word == "json" ? OutputFormat::json
                                       : OutputFormat::table;
           o.format_given = true;
         },
         "Output format: table (for people), csv or json (default: from the -o file's extension .csv, "
         ".json or .txt, else table)")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  cmd->add_option("-o,--output", o.output,
                  "Write here instead of standard output (all or nothing; - is standard output)");
  // After the whole command line is read, so that -f and -o may come in either order.
  cmd->parse_complete_callback([&o] {
    if (o.output.empty() || o.output == "-") return;
    const std::optional<OutputFormat> implied = format_of_output_name(o.output, o.format_given);
    if (!implied) return;
    if (!o.format_given) {
      o.format = *implied;
    } else if (*implied != o.format) {
      throw CLI::ValidationError("-o", "'" + o.output + "' names a " + std::string(format_word(*implied)) +
                                           " file but -f is " + std::string(format_word(o.format)) +
                                           "; give one of them, or make them agree");
    }
  });
  cmd->add_flag_callback(
      "--csv-text-guard", [] { set_csv_text_guard(true); },
      "CSV: write a single quote before each text cell that a spreadsheet would run as a formula (begins "
      "with = + - @, tab or CR); numbers are never altered (default: text kept exact, with a note)");
}

void add_scoring_options(CLI::App* cmd, ScoringOptions& o, const char* horizon_help, bool measure) {
  cmd->add_option("--rate", o.rate, "Risk-free rate for every obligor, continuously compounded decimal")
      ->check(finite_number(-1.0, 1.0, RangeEnd::closed, RangeEnd::closed, "0.03 means 3%"));
  cmd->add_option("--horizon", o.horizon, horizon_help)
      ->check(finite_number(0.0, kMaxHorizonYears, RangeEnd::open, RangeEnd::closed, "years"));
  cmd->add_option("--default-point-weight", o.weight,
                  "Weight of long-term debt in the default point (default 0.5, common practice)")
      ->check(finite_number(0.0, 1.0));
  if (!measure) return;
  cmd->add_option("--measure", o.measure, "physical (drift from the book, default the rate) or risk-neutral")
      ->check(CLI::IsMember({"physical", "risk-neutral"}));
}

void check_rate(const ScoringOptions& o) {
  if (o.rate && (*o.rate < -1.0 || *o.rate > 1.0)) {
    throw InputError("--rate: expected a continuously compounded decimal in [-1, 1] (0.03 means 3%)");
  }
}

ScoreSettings scoring_settings(ScoreSettings base, const ScoringOptions& o) {
  check_rate(o);
  base.rate_override = o.rate;
  base.horizon_override = o.horizon;
  base.weight_override = o.weight;
  if (!o.measure.empty()) base.measure = *measure_from_string(o.measure);
  return base;
}

void add_threads_option(CLI::App* cmd, unsigned& threads, const char* help) {
  cmd->add_option("-j,--threads", threads, help)->check(whole_number(1, 1024));
}

unsigned default_threads() {
  static const unsigned all_cores = std::max(1U, std::thread::hardware_concurrency());
  return all_cores;
}

CLI::Option* add_db_option(CLI::App* cmd, std::string& db) {
  return cmd->add_option("--db", db,
                         "History store file (default: monitoring.store, else the user's data folder)");
}

void add_store_read_options(CLI::App* cmd, StoreReadOptions& o, bool runs) {
  add_db_option(cmd, o.db);
  add_output_options(cmd, o.out);
  if (!runs) return;
  const auto selector = CLI::Validator(
      [](std::string& s) -> std::string {
        if (s.find_first_not_of("0123456789") == std::string::npos && !s.empty() && s.size() <= 18) return {};
        if (s.size() == 10 && s[4] == '-' && s[7] == '-') return {};  // dates are checked by the store
        return "expected a run id or an as-of date YYYY-MM-DD, got '" + s + "'";
      },
      "ID|DATE");
  cmd->add_option("--run", o.run,
                  "The run to look at: a run id or an as-of date YYYY-MM-DD (default: the latest)")
      ->check(selector);
  cmd->add_option("--against", o.against,
                  "The run to compare with: a run id or an as-of date (default: the run before --run)")
      ->check(selector);
}

RunStore open_store(const std::string& db, const Config& config) {
  return RunStore(resolve_store_path(db, config.monitor), StoreOpen::read_only,
                  config.monitor.busy_timeout_seconds);
}

void add_term_options(CLI::App* cmd, TermOptionText& c) {
  cmd->add_option("--horizons", c.horizons,
                  "PD term structure at these horizons in years, e.g. 0.5,1,2,3,5,7,10 (one row per obligor, "
                  "model and horizon)");
  cmd->add_option("--model", c.model,
                  "merton (default), first-passage (Black-Cox barrier) or both, side by side");
  cmd->add_option("--calibration", c.calibration,
                  "once (default: solve at each obligor's horizon, project the others) or per-horizon (solve "
                  "again at every horizon)");
  cmd->add_option("--barrier-ratio", c.barrier_ratio,
                  "First-passage barrier as a multiple of the default point (default 1)")
      ->check(finite_number(0.0, 100.0, RangeEnd::open));
  cmd->add_option("--barrier-growth", c.barrier_growth,
                  "Growth of the first-passage barrier, continuously compounded decimal a year (default 0)")
      ->check(finite_number(-1.0, 1.0));
}

void write_output(const std::string& path, std::string_view text, const std::string& option) {
  OutputFile out(path, option);
  out.write(text);
  out.commit();
}

std::string terminal_lines(std::string_view text) {
  std::string out;
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t end = std::min(text.find('\n', start), text.size());
    if (start > 0) out.push_back('\n');
    out += terminal_text(text.substr(start, end - start));
    start = end + 1;
  }
  return out;
}

void print_lines(const std::vector<std::string>& lines) {
  // Ids and names quoted in the notes come from files: their controls are shown as escapes.
  for (const auto& l : lines) std::cerr << "firmcall: " << terminal_text(l) << "\n";
}

void print_problems(const std::vector<std::string>& problems, std::size_t not_listed, OutputFormat format) {
  if (format == OutputFormat::table) return;
  print_lines(problems);
  if (not_listed > 0) std::cerr << "firmcall: ... and " << not_listed << " more (column message)\n";
}

void print_run_notes(const std::vector<std::string>& notes, const std::vector<std::string>& problems,
                     std::size_t not_listed, const OutputOptions& out, const std::string& closing) {
  print_lines(notes);
  print_problems(problems, not_listed, out.format);
  if (out.wants_closing_line() && !closing.empty())
    std::cerr << "firmcall: " << terminal_lines(closing) << "\n";
}

void print_csv_formula_note() {
  const CsvFormulaCells cells = take_csv_formula_cells();
  if (cells.count == 0) return;
  std::string first;
  for (const std::string& c : cells.first) first += (first.empty() ? "'" : ", '") + terminal_text(c) + "'";
  std::cerr << "firmcall: note: " << cells.count
            << " text cell(s) of the CSV output begin with = + - @, tab or CR, which a spreadsheet may run "
               "as a formula (first: "
            << first << "); "
            << (cells.guarded ? "written after a single quote (--csv-text-guard)"
                              : "kept exact; --csv-text-guard writes them after a single quote")
            << "\n";
}

std::string failure_counts(std::size_t invalid, std::size_t not_converged) {
  if (invalid + not_converged == 0) return {};
  return " (" + std::to_string(invalid) + " invalid input, " + std::to_string(not_converged) +
         " not converged)";
}

std::string brief(double v) {
  if (!std::isfinite(v)) return "-";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

}  // namespace firmcall::cli
