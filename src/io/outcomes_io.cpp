// The outcomes reader (outcomes_io.hpp): streams the file in blocks cut at record ends, so that
// memory holds the columns kept and one block.
#include "firmcall/io/outcomes_io.hpp"

#include <algorithm>
#include <array>
#include <cstdio>
#include <cstring>
#include <memory>
#include <optional>
#include <string_view>
#include <unordered_map>
#include <unordered_set>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/history_io.hpp"

namespace firmcall {

namespace {

constexpr std::size_t kBlockBytes = 1 << 20;

enum Column : std::size_t { kId, kPd, kCompare, kDefaulted, kGrade, kAsOf, kSegment, kColumns };

class OutcomeParser {
 public:
  OutcomeParser(const std::string& origin, const OutcomeReadOptions& options, const GradeScale& scale)
      : origin_(origin), options_(options), scale_(scale) {
    s_.origin = origin;
    s_.pd_column = options.pd_column;
    s_.compare_column = options.compare_column;
    for (const GradeBand& b : scale.bands) add_label(b.label);
  }

  // Takes one record (blank records skipped by the caller).
  void record(const std::vector<std::string_view>& fields, std::size_t line) {
    if (!have_header_) return header(fields, line);
    row(fields, line);
  }

  OutcomeSample finish() {
    if (!have_header_) throw InputError(located(origin_, 0, "empty file: a header row is required"));
    if (s_.pd.empty()) throw InputError(located(origin_, 0, "no rows: a validation needs observations"));
    if (s_.defaults == 0 || s_.defaults == s_.pd.size()) {
      throw InputError(located(origin_, 0,
                               std::string("field 'defaulted': ") +
                                   (s_.defaults == 0 ? "no defaults" : "every row defaulted") + " in " +
                                   std::to_string(s_.pd.size()) +
                                   " rows; discrimination needs both defaulters and non-defaulters"));
    }
    return std::move(s_);
  }

 private:
  void add_label(const std::string& label) {
    if (label_index_.emplace(label, static_cast<int>(s_.grade_labels.size())).second) {
      s_.grade_labels.push_back(label);
    }
  }

  void header(const std::vector<std::string_view>& fields, std::size_t line) {
    have_header_ = true;
    const std::string_view names[kColumns] = {"id", "", "", "defaulted", "grade", "as_of", "segment"};
    at_.fill(-1);
    width_ = fields.size();
    for (std::size_t i = 0; i < fields.size(); ++i) {
      const std::string_view name = trim_blanks(fields[i]);
      if (name.empty()) {
        throw InputError(located(origin_, line, "header: column " + std::to_string(i + 1) + " has no name"));
      }
      std::size_t k = kColumns;
      if (name == options_.pd_column) {
        k = kPd;
      } else if (!options_.compare_column.empty() && name == options_.compare_column) {
        k = kCompare;
      } else {
        for (std::size_t c = 0; c < kColumns; ++c) {
          if (!names[c].empty() && names[c] == name) k = c;
        }
      }
      if (k == kColumns) {
        s_.notes.push_back(located(origin_, line, "note: column '" + std::string(name) + "' is not used"));
        continue;
      }
      if (at_[k] >= 0) {
        throw InputError(located(origin_, line, "header: column '" + std::string(name) + "' appears twice"));
      }
      at_[k] = static_cast<int>(i);
    }
    require(kId, "id", line);
    require(kPd, options_.pd_column, line);
    if (!options_.compare_column.empty()) require(kCompare, options_.compare_column, line);
    require(kDefaulted, "defaulted", line);
    s_.graded_from_pd = at_[kGrade] < 0;
  }

  void require(std::size_t k, std::string_view name, std::size_t line) const {
    if (at_[k] < 0) {
      throw InputError(
          located(origin_, line, "header: required column '" + std::string(name) + "' is missing"));
    }
  }

  std::string_view cell(const std::vector<std::string_view>& fields, std::size_t k) const {
    return trim_blanks(fields[static_cast<std::size_t>(at_[k])]);
  }

  [[noreturn]] void bad(std::size_t line, std::string_view field, const std::string& reason,
                        std::string_view value) const {
    throw InputError(located(
        origin_, line, "field '" + std::string(field) + "': " + reason + ", got " + quoted_cell(value)));
  }

  double probability(const std::vector<std::string_view>& fields, std::size_t k, std::string_view field,
                     std::size_t line) const {
    const std::string_view c = cell(fields, k);
    double v = 0.0;
    if (!parse_number(c, v) || !(v >= 0.0 && v <= 1.0)) {
      bad(line, field, "expected a probability in [0, 1] such as 0.012 (not percent)", c);
    }
    return v;
  }

  void row(const std::vector<std::string_view>& fields, std::size_t line) {
    if (fields.size() != width_) {
      throw InputError(located(
          origin_, line,
          "row has " + std::to_string(fields.size()) + " fields, the header has " + std::to_string(width_)));
    }
    const std::string_view id = cell(fields, kId);
    if (id.empty())
      throw InputError(located(origin_, line, "field 'id': missing (every row needs an obligor id)"));
    const double pd = probability(fields, kPd, options_.pd_column, line);
    const double compare =
        at_[kCompare] >= 0 ? probability(fields, kCompare, options_.compare_column, line) : 0.0;
    const std::string_view flag = cell(fields, kDefaulted);
    if (flag != "0" && flag != "1") bad(line, "defaulted", "expected 0 or 1", flag);
    int grade = -1;
    if (at_[kGrade] >= 0) {
      const std::string_view label = cell(fields, kGrade);
      if (label.empty())
        bad(line, "grade", "missing (give a grade on every row, or leave out the column)", label);
      const auto it = label_index_.find(std::string(label));
      if (it != label_index_.end()) {
        grade = it->second;
      } else {
        grade = static_cast<int>(s_.grade_labels.size());
        add_label(std::string(label));
      }
    } else {
      grade = scale_.index_of(pd);
    }
    int segment = -1;
    if (at_[kSegment] >= 0) {
      const std::string_view label = cell(fields, kSegment);
      if (label.empty())
        bad(line, "segment", "missing (give a segment on every row, or leave out the column)", label);
      segment = segment_of(label);
    }
    std::int32_t as_of = 0;
    if (at_[kAsOf] >= 0) {
      const std::string_view date = cell(fields, kAsOf);
      if (date.empty() || date != last_date_) {  // rows often share a date: parse a run once
        const std::optional<std::int32_t> day = parse_iso_date(date);
        if (!day) bad(line, "as_of", "expected a calendar date YYYY-MM-DD", date);
        last_date_.assign(date);
        last_day_ = *day;
      }
      as_of = last_day_;
    }
    if (options_.keep_ids) {
      if (!seen_ids_.emplace(id).second) bad(line, "id", "appears twice (each obligor once per sample)", id);
      s_.ids.emplace_back(id);
    }
    s_.pd.push_back(pd);
    if (at_[kCompare] >= 0) s_.compare_pd.push_back(compare);
    s_.defaulted.push_back(flag == "1" ? 1 : 0);
    s_.defaults += flag == "1" ? 1 : 0;
    s_.grade.push_back(grade);
    if (segment >= 0) s_.segment.push_back(segment);
    if (at_[kAsOf] >= 0) s_.as_of.push_back(as_of);
  }

  // The index of a segment label, added when new; a few labels are compared one by one, which is
  // cheaper than hashing each row's label.
  int segment_of(std::string_view label) {
    constexpr std::size_t kFewSegments = 8;
    if (s_.segment_labels.size() <= kFewSegments) {
      for (std::size_t i = 0; i < s_.segment_labels.size(); ++i) {
        if (s_.segment_labels[i] == label) return static_cast<int>(i);
      }
    }
    const auto [it, added] =
        segment_index_.try_emplace(std::string(label), static_cast<int>(s_.segment_labels.size()));
    if (added) s_.segment_labels.emplace_back(label);
    return it->second;
  }

  const std::string& origin_;
  const OutcomeReadOptions& options_;
  const GradeScale& scale_;
  OutcomeSample s_;
  bool have_header_ = false;
  std::array<int, kColumns> at_{};
  std::size_t width_ = 0;
  std::unordered_map<std::string, int> label_index_;
  std::unordered_map<std::string, int> segment_index_;  // every segment label
  std::string last_date_;  // the as_of text of the previous row, and its day number
  std::int32_t last_day_ = 0;
  std::unordered_set<std::string> seen_ids_;
};

// Feeds the complete records of `text` (all of it when `at_end`) to the parser; returns the bytes
// used. `line` is the line number of text's first byte and moves on.
std::size_t feed(std::string_view text, bool at_end, OutcomeParser& parser, std::size_t& line,
                 CsvRecordReader& records) {
  records.start(text, line, at_end);
  while (records.next()) parser.record(records.fields(), records.line());
  line = records.next_line();
  return records.consumed();
}

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

void check_options(const OutcomeReadOptions& options) {
  if (const OptionCheck problem = options.validate()) throw OptionError(problem->field, problem->constraint);
}

}  // namespace

OptionCheck OutcomeReadOptions::validate() const {
  const auto fixed = [](const std::string& s) {
    return s == "id" || s == "defaulted" || s == "grade" || s == "as_of" || s == "segment";
  };
  if (pd_column.empty() || fixed(pd_column)) {
    return OptionProblem{"pd_column", "'" + pd_column + "'",
                         "must name a PD column other than id, defaulted, grade, as_of, segment"};
  }
  if (!compare_column.empty() && (fixed(compare_column) || compare_column == pd_column)) {
    return OptionProblem{"compare_column", "'" + compare_column + "'",
                         "must name a second PD column, different from pd_column and the fixed columns"};
  }
  return std::nullopt;
}

OutcomeSample parse_outcomes(std::string_view text, const std::string& origin,
                             const OutcomeReadOptions& options, const GradeScale& scale) {
  check_options(options);
  OutcomeParser parser(origin, options, scale);
  CsvRecordReader records(origin);
  std::size_t line = 1;
  feed(text, true, parser, line, records);
  return parser.finish();
}

OutcomeSample load_outcomes(const std::string& path, const OutcomeReadOptions& options,
                            const GradeScale& scale) {
  check_options(options);
  std::unique_ptr<std::FILE, FileCloser> f(std::fopen(path.c_str(), "rb"));
  if (!f) throw InputError("cannot open file '" + path + "'");
  OutcomeParser parser(path, options, scale);
  CsvRecordReader records(path);
  std::string buffer;
  std::size_t line = 1;
  std::size_t kept = 0;  // bytes carried over from the previous block
  for (;;) {
    buffer.resize(kept + kBlockBytes);
    const std::size_t got = std::fread(buffer.data() + kept, 1, kBlockBytes, f.get());
    if (std::ferror(f.get())) throw InputError("cannot read file '" + path + "'");
    const bool at_end = got < kBlockBytes;
    const std::string_view text(buffer.data(), kept + got);
    const std::size_t used = feed(text, at_end, parser, line, records);
    kept = text.size() - used;
    std::memmove(buffer.data(), buffer.data() + used, kept);
    if (at_end) break;
  }
  return parser.finish();
}

}  // namespace firmcall
