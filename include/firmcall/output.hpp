// Output formatting shared by the commands: full-precision numbers, CSV and JSON escaping, and
// the score writers (table for people, CSV and JSON for programs).
#pragma once

#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/grades.hpp"
#include "firmcall/score.hpp"

namespace firmcall {

/// Appends v with 17 significant digits (round-trips exactly); non-finite values append nothing.
void append_number(std::string& out, double v);
/// Appends a CSV cell, quoted when it holds a comma, quote or line break.
void append_csv_text(std::string& out, std::string_view s);
/// Appends a JSON string literal (with quotes), escaping as RFC 8259 requires.
void append_json_string(std::string& out, std::string_view s);
/// Appends a JSON number, or null when v is not finite.
void append_json_number(std::string& out, double v);

/// Names of the machine-readable score columns, in order.
const std::vector<std::string_view>& score_columns();

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

/// A writer for the format; `origin` and `settings` appear in the JSON run block. With `grades`,
/// each scored obligor also shows its grade (a last CSV column and JSON key `grade`, a table column).
std::unique_ptr<ScoreWriter> make_score_writer(OutputFormat format, const std::string& origin,
                                               const ScoreSettings& settings,
                                               const GradeScale* grades = nullptr);

}  // namespace firmcall
