// Output formatting shared by the commands: full-precision numbers, CSV and JSON escaping,
// sensitivity columns, and the score writers (table for people, CSV and JSON for programs).
#pragma once

#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/grades.hpp"
#include "firmcall/score.hpp"
#include "firmcall/sensitivity.hpp"

namespace firmcall {

/// Appends v with 17 significant digits (round-trips exactly); non-finite values append nothing.
void append_number(std::string& out, double v);

/// Room write_number needs (it may write scratch bytes past the number's end, within this).
inline constexpr std::size_t kMaxNumberChars = 40;

/// Writes v as append_number does at p (room for kMaxNumberChars); returns the end.
char* write_number(char* p, double v) noexcept;
/// Appends column names joined by commas (a CSV header, or its continuation after a comma).
void append_csv_names(std::string& out, const std::vector<std::string_view>& names);
/// Appends a CSV cell, quoted when it holds a comma, quote or line break.
void append_csv_text(std::string& out, std::string_view s);
/// Appends a JSON string literal (with quotes), escaping as RFC 8259 requires.
void append_json_string(std::string& out, std::string_view s);
/// Appends a JSON number, or null when v is not finite.
void append_json_number(std::string& out, double v);

/// The caution printed under every table of a Merton-model run.
inline constexpr std::string_view kTableCaution =
    "Model estimates under the Merton assumptions; not a credit decision on their own.\n";

/// Appends the problems listed under a table, one per line indented by two spaces (wrapped at
/// `wrap_width` columns when it is not 0), then "  ... and N more (see --format csv, column
/// message)" when `not_listed` is not 0.
void append_table_problems(std::string& out, const std::vector<std::string>& problems, std::size_t not_listed,
                           std::size_t wrap_width = 0);

namespace detail {
/// Text broken at spaces into lines of at most `width` columns, `indent` spaces first and twice that
/// on continuation lines; ends with a line break.
std::string wrapped(const std::string& text, std::size_t indent, std::size_t width);
}  // namespace detail

/// Names of the machine-readable score columns, in order.
const std::vector<std::string_view>& score_columns();

/// Names of the optional sensitivity columns (--sensitivities), in order: sensitivity_status, then
/// DD, PD and spread per +1% equity value, per +1 equity-volatility point, per +1% default point and
/// per +1 bp of rate (units in sensitivity.hpp). Appended after the other columns.
const std::vector<std::string_view>& sensitivity_columns();

/// Sensitivities of a solved obligor (its own inputs and solution).
MertonSensitivities sensitivities_of(const ResolvedObligor& resolved, const AssetSolution& solution);

/// Appends ",status,v1,...,v12" in sensitivity_columns() order; cells are empty when `usable` is
/// false or the sensitivities are not ok.
void append_sensitivities_csv(std::string& out, const MertonSensitivities& s, bool usable);
/// Appends ", \"sensitivity_status\": ..., \"dd_per_equity_pct\": ..." (null when not usable).
void append_sensitivities_json(std::string& out, const MertonSensitivities& s, bool usable);
/// Appends one fixed-width line of the twelve values under a table row (see the table header).
void append_sensitivities_table(std::string& out, const MertonSensitivities& s, std::size_t indent);
/// Appends the two header lines that explain append_sensitivities_table's columns.
void append_sensitivities_table_header(std::string& out, std::size_t indent);

/// Writes scored obligors in one format. Rows are appended to a caller's buffer so that workers
/// can format in parallel; `separator` is written between rows by the caller.
class ScoreWriter {
 public:
  virtual ~ScoreWriter() = default;
  virtual void begin(std::string& out) const = 0;
  virtual void row(const ObligorRecord& rec, const ScoredObligor& s, std::string& out) const = 0;
  virtual std::string_view separator() const { return {}; }
  virtual void end(const ScoreSummary& summary, std::string& out) const = 0;
};

/// A writer for the format; `origin` and `settings` appear in the JSON run block. With
/// `sensitivities` every format adds the sensitivity columns (the table a second line per obligor).
/// With `grades`, each scored obligor also shows its grade (a last CSV column and JSON key `grade`,
/// a table column).
std::unique_ptr<ScoreWriter> make_score_writer(OutputFormat format, const std::string& origin,
                                               const ScoreSettings& settings, bool sensitivities = false,
                                               const GradeScale* grades = nullptr);

}  // namespace firmcall
