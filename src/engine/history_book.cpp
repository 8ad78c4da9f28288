// Running the history estimators over a book. See history_book.hpp.
#include "firmcall/engine/history_book.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <limits>
#include <memory>
#include <thread>
#include <unordered_map>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/row_writer.hpp"
#include "firmcall/util/parallel.hpp"

namespace firmcall {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string shortest(double v) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

std::string obligor_prefix(std::string_view id) {
  return id.empty() ? std::string() : "obligor '" + std::string(id) + "': ";
}

// Sets the error of a join; false, so that a step of the join can `return fail(...)`.
bool fail(JoinedHistory& out, const std::string& file, std::size_t line, std::string text) {
  out.error_file = file;
  out.error_line = line;
  out.error = std::move(text);
  return false;
}

std::string with_more(const LocatedProblem& p, std::size_t more) {
  if (more == 0) return p.text;
  return p.text + " (and " + std::to_string(more) + " more problem" + (more == 1 ? "" : "s") + ")";
}

// Default point of a balance sheet under the weight w; <= 0 means unusable.
double sheet_default_point(const BalanceSheet& s, double w) {
  if (s.default_point) return *s.default_point;
  return *s.short_term_debt + w * *s.long_term_debt;
}

void clear_joined(JoinedHistory& out) {
  out.equity_value.clear();
  out.default_point.clear();
  out.trading_day.clear();
  out.date.clear();
  out.line.clear();
  out.notes.clear();
  out.error.clear();
  out.error_file.clear();
  out.error_line = 0;
  out.missing_days = 0;
  out.last_default_point_from_sheet = false;
}

// Rate (override > obligor > book) and horizon (override > obligor > book > configuration).
bool join_rate_and_horizon(const ObligorRecord& rec, const Book& book, const ScoreSettings& settings,
                           JoinedHistory& out) {
  if (settings.rate_override) {
    out.rate = *settings.rate_override;
  } else if (rec.has(NumField::rate)) {
    out.rate = rec.get(NumField::rate);
  } else if (book.defaults.rate) {
    out.rate = *book.defaults.rate;
  } else {
    return fail(out, book.origin, rec.line, "field 'rate': missing (give a rate, a book default or --rate)");
  }
  if (!(out.rate >= -1.0 && out.rate <= 1.0)) {
    return fail(out, book.origin, rec.line,
                "field 'rate': must be a continuously compounded decimal in [-1, 1] (0.03 means 3%), got " +
                    shortest(out.rate));
  }
  out.horizon = settings.horizon_override.value_or(
      rec.has(NumField::horizon) ? rec.get(NumField::horizon)
                                 : book.defaults.horizon.value_or(settings.horizon_years));
  if (!(out.horizon > 0.0) || out.horizon > 100.0) {
    return fail(out, book.origin, rec.line,
                "field 'horizon': must be positive years, at most 100, got " + shortest(out.horizon));
  }
  return true;
}

// The book's default point, if it gives one (`dp` stays empty when it gives no debt).
bool book_default_point(const ObligorRecord& rec, const Book& book, double w, JoinedHistory& out,
                        std::optional<double>& dp) {
  for (NumField f : {NumField::short_term_debt, NumField::long_term_debt}) {
    if (rec.has(f) && !(rec.get(f) >= 0.0)) {
      return fail(
          out, book.origin, rec.line,
          "field '" + std::string(to_string(f)) + "': must not be negative, got " + shortest(rec.get(f)));
    }
  }
  if (rec.has(NumField::default_point)) {
    if (!(rec.get(NumField::default_point) > 0.0)) {
      return fail(
          out, book.origin, rec.line,
          "field 'default_point': must be positive, got " + shortest(rec.get(NumField::default_point)));
    }
    dp = rec.get(NumField::default_point);
  } else if (rec.has(NumField::short_term_debt) && rec.has(NumField::long_term_debt)) {
    dp = rec.get(NumField::short_term_debt) + w * rec.get(NumField::long_term_debt);
    if (!(*dp > 0.0)) {
      return fail(out, book.origin, rec.line,
                  "field 'default_point': short_term_debt + weight x long_term_debt is zero: the model needs "
                  "positive debt");
    }
  } else if (rec.has(NumField::short_term_debt) || rec.has(NumField::long_term_debt)) {
    return fail(out, book.origin, rec.line,
                std::string("field '") +
                    (rec.has(NumField::short_term_debt) ? "long_term_debt" : "short_term_debt") +
                    "': missing (give short_term_debt and long_term_debt, or default_point)");
  }
  return true;
}

// The obligor's balance sheets are usable (none is also usable).
bool usable_sheets(const ObligorBalanceSheets* os, const BalanceSheets* sheets, double w,
                   JoinedHistory& out) {
  if (os == nullptr) return true;
  if (!os->error.empty())
    return fail(out, sheets->origin, os->error.line, with_more(os->error, os->more_problems));
  for (const BalanceSheet& s : os->sheets) {
    if (!(sheet_default_point(s, w) > 0.0)) {
      return fail(out, sheets->origin, s.line,
                  "field 'default_point': short_term_debt + weight x long_term_debt is zero: the model needs "
                  "positive debt");
    }
  }
  return true;
}

// The daily arrays: each day's equity value with the default point in force (the latest sheet
// dated on or before the day, else the book's).
void join_days(const ObligorEquityHistory& oh, const ObligorBalanceSheets* os, std::optional<double> book_dp,
               double w, const HistorySources& src, const ObligorRecord& rec, JoinedHistory& out) {
  // No reserve: a worker joins every obligor into one JoinedHistory, whose arrays keep the
  // capacity of the longest history so far.
  std::size_t next_sheet = 0;
  const BalanceSheet* in_force = nullptr;
  for (const EquityRow& r : oh.rows) {
    while (os != nullptr && next_sheet < os->sheets.size() && os->sheets[next_sheet].as_of <= r.date) {
      in_force = &os->sheets[next_sheet++];
    }
    double dp;
    if (in_force != nullptr) {
      dp = sheet_default_point(*in_force, w);
    } else if (book_dp) {
      dp = *book_dp;
    } else {
      out.equity_value.clear();
      fail(
          out, src.book->origin, rec.line,
          (src.sheets != nullptr ? "no balance sheet dated on or before " + format_iso_date(r.date) + " and t"
                                 : std::string("t")) +
              "he book gives no debt (short_term_debt and long_term_debt, or default_point)");
      return;
    }
    out.equity_value.push_back(r.equity_value);
    out.default_point.push_back(dp);
    out.trading_day.push_back(r.trading_day);
    out.date.push_back(r.date);
    out.line.push_back(r.line);
  }
  out.last_default_point_from_sheet = in_force != nullptr;
}

// The obligor's fields, its equity history and its balance sheets, checked; then the days.
bool join_checked(const ObligorRecord& rec, const HistorySources& src, const ScoreSettings& settings,
                  JoinedHistory& out) {
  const Book& book = *src.book;
  const std::string& id = rec.get(TextField::id);
  if (!rec.read_error.empty()) return fail(out, book.origin, rec.line, rec.read_error);
  if (id.empty()) return fail(out, book.origin, rec.line, "field 'id': missing (every obligor needs an id)");
  if (!join_rate_and_horizon(rec, book, settings, out)) return false;
  const double w = settings.weight_override.value_or(
      book.defaults.default_point_weight.value_or(settings.default_point_weight));
  std::optional<double> book_dp;
  if (!book_default_point(rec, book, w, out, book_dp)) return false;

  const EquityHistory& hist = *src.history;
  const ObligorEquityHistory* oh = hist.find(id);
  if (oh == nullptr) return fail(out, hist.origin, 0, "no rows for this obligor in the equity history");
  if (!oh->usable()) return fail(out, hist.origin, oh->error.line, with_more(oh->error, oh->more_problems));
  if (oh->rows.empty()) return fail(out, hist.origin, 0, "no equity values for this obligor in the history");
  out.notes = oh->notes;
  out.missing_days = oh->missing_days;

  const ObligorBalanceSheets* os = src.sheets != nullptr ? src.sheets->find(id) : nullptr;
  if (!usable_sheets(os, src.sheets, w, out)) return false;
  join_days(*oh, os, book_dp, w, src, rec, out);
  return true;
}

}  // namespace

std::string JoinedHistory::message(std::string_view id) const {
  return located(error_file, error_line, obligor_prefix(id) + error);
}

void join_history(const ObligorRecord& rec, const HistorySources& src, const ScoreSettings& settings,
                  JoinedHistory& out) {
  clear_joined(out);
  join_checked(rec, src, settings, out);
}

namespace {

// Everything written for one obligor.
struct HistoryResult {
  RowStatus status = RowStatus::invalid_input;
  std::string message;  // problem (failed rows) or notes (estimated rows)
  bool joined = false;  // the history arrays are usable (as_of, observations, equity known)
  std::int32_t as_of = 0;
  std::size_t observations = 0;
  std::size_t missing_days = 0;
  double equity_value = kNaN;
  double default_point = kNaN;
  double rate = kNaN;
  double horizon = kNaN;
  AssetDynamics a;
};

std::string core_problem(const JoinedHistory& j, const AssetDynamics& a, const HistorySettings& settings,
                         const std::string& history_origin, std::string_view id) {
  switch (a.status) {
    case EstimateStatus::too_short:
      return located(history_origin, 0,
                     obligor_prefix(id) + std::to_string(j.equity_value.size()) + " observations, at least " +
                         std::to_string(std::max(3, settings.min_observations)) +
                         " needed (history.min_observations)");
    case EstimateStatus::invalid_input:
    case EstimateStatus::inversion_failed:
      if (a.bad_index < j.line.size()) {
        return located(history_origin, j.line[a.bad_index], obligor_prefix(id) + a.message);
      }
      return located(history_origin, 0, obligor_prefix(id) + a.message);
    default: {
      std::string m = located(history_origin, 0,
                              obligor_prefix(id) + std::string(to_string(a.method)) + ": " + a.message);
      if (a.status == EstimateStatus::max_iterations) {
        m += " (" + std::to_string(settings.max_iterations) + "; last change in sV " +
             shortest(a.last_change) + ")";
      }
      return m;
    }
  }
}

std::string joined_notes(const JoinedHistory& j, const std::string& origin) {
  std::string s;
  for (const LocatedProblem& n : j.notes) {
    if (!s.empty()) s += "; ";
    s += located(origin, n.line, "note: " + n.text);
  }
  return s;
}

void estimate_one(const ObligorRecord& rec, const HistorySources& src, const ScoreSettings& score_settings,
                  const HistorySettings& settings, const AssetDynamicsOptions& est, JoinedHistory& j,
                  HistoryWorkspace& ws, HistoryResult& r) {
  r = HistoryResult{};
  r.a.method = est.method;
  const std::string& id = rec.get(TextField::id);
  join_history(rec, src, score_settings, j);
  if (!j.ok()) {
    r.status = RowStatus::invalid_input;
    r.message = j.message(id);
    return;
  }
  r.joined = true;
  r.as_of = j.date.back();
  r.observations = j.equity_value.size();
  r.missing_days = j.missing_days;
  r.equity_value = j.equity_value.back();
  r.default_point = j.default_point.back();
  r.rate = j.rate;
  r.horizon = j.horizon;
  r.a = estimate_asset_dynamics(j.view(), est, settings, ws);
  if (r.a.usable()) {
    r.status = RowStatus::ok;
    r.message = joined_notes(j, src.history->origin);
    return;
  }
  const bool bad_input =
      r.a.status == EstimateStatus::too_short || r.a.status == EstimateStatus::invalid_input;
  r.status = bad_input ? RowStatus::invalid_input : RowStatus::not_converged;
  r.message = core_problem(j, r.a, settings, src.history->origin, id);
}

// --- writers -----------------------------------------------------------------------------------

constexpr std::size_t kNumericColumns = 26;  // equity_value .. log_likelihood, less the two texts
constexpr std::size_t kHistoryColumns = 36;  // history_columns().size()
constexpr std::size_t kDriftUsedValue = 15;  // drift_used among the numeric columns

// Numeric columns from equity_value to log_likelihood in history_columns() order, leaving out
// drift_source and measure (NaN: empty).
std::array<double, kNumericColumns> row_values(const HistoryResult& r) {
  std::array<double, kNumericColumns> x;
  x.fill(kNaN);
  if (!r.joined) return x;
  const AssetDynamics& a = r.a;
  const bool vol_known = a.equity_vol.returns > 0;
  x[0] = r.equity_value;
  x[1] = vol_known ? a.equity_vol.simple_annual : kNaN;
  x[2] = vol_known ? a.equity_vol.ewma_annual : kNaN;
  x[3] = r.default_point;
  x[4] = r.rate;
  x[5] = r.horizon;
  if (a.iterations > 0) x[23] = a.iterations;
  if (a.last_change >= 0.0) x[24] = a.last_change;
  if (r.status != RowStatus::ok) return x;
  const double est[] = {a.asset_value,
                        a.asset_vol_annual,
                        a.asset_vol_se,
                        a.asset_vol_lo,
                        a.asset_vol_hi,
                        a.drift_annual,
                        a.drift_se,
                        a.drift_lo,
                        a.drift_hi,
                        a.drift_used,
                        a.distance_to_default,
                        a.dd_se,
                        a.dd_lo,
                        a.dd_hi,
                        a.pd,
                        a.pd_lo,
                        a.pd_hi};
  std::copy(std::begin(est), std::end(est), x.begin() + 6);
  x[25] = a.log_likelihood;
  return x;
}

// One obligor's cells in history_columns() order; the CSV and the JSON writer share them.
using HistoryCells = std::array<ReportCell, kHistoryColumns>;

void history_cells(const ObligorRecord& rec, const HistoryResult& r, bool risk_neutral, HistoryCells& cells) {
  cells[0] = ReportCell::text(rec.get(TextField::id));
  cells[1] = ReportCell::text(rec.get(TextField::name));
  cells[2] = ReportCell::text(std::string(to_string(r.status)));
  cells[3] = ReportCell::text(std::string(to_string(r.a.method)));
  cells[4] = r.joined ? ReportCell::text(format_iso_date(r.as_of)) : ReportCell::none();
  cells[5] = r.joined ? ReportCell::number(static_cast<double>(r.observations)) : ReportCell::none();
  cells[6] = r.joined ? ReportCell::number(static_cast<double>(r.missing_days)) : ReportCell::none();
  const auto values = row_values(r);
  // equity_value .. drift_used, then drift_source and measure, then distance_to_default ..
  for (std::size_t i = 0; i < kNumericColumns; ++i) {
    cells[7 + i + (i > kDriftUsedValue ? 2 : 0)] = ReportCell::number(values[i]);
  }
  constexpr std::size_t kDriftSourceCell = 7 + kDriftUsedValue + 1;
  cells[kDriftSourceCell] = r.status == RowStatus::ok
                                ? ReportCell::text(std::string(to_string(r.a.drift_source)))
                                : ReportCell::none();
  cells[kDriftSourceCell + 1] =
      ReportCell::text(std::string(to_string(risk_neutral ? Measure::risk_neutral : Measure::physical)));
  cells[kHistoryColumns - 1] = ReportCell::text(r.message);
}

// A cell as CSV (absent: nothing) and as a JSON value (absent: null).
void append_csv_cell(std::string& out, const ReportCell& c) {
  if (c.kind == ReportCell::Kind::number) append_number(out, c.number_value);
  if (c.kind == ReportCell::Kind::text) append_csv_text(out, c.text_value);
}
void append_json_cell(std::string& out, const ReportCell& c) {
  if (c.kind == ReportCell::Kind::text) return append_json_string(out, c.text_value);
  append_json_number(out, c.kind == ReportCell::Kind::number ? c.number_value : kNaN);
}

// Members after an object's first: `, "key": value`.
void json_text_member(std::string& out, std::string_view key, std::string_view text) {
  out += ", \"";
  out += key;
  out += "\": ";
  append_json_string(out, text);
}
void json_number_member(std::string& out, std::string_view key, double v) {
  out += ", \"";
  out += key;
  out += "\": ";
  append_json_number(out, v);
}

class HistoryWriter {
 public:
  virtual ~HistoryWriter() = default;
  virtual void begin(std::string& out) const = 0;
  virtual void row(const ObligorRecord& rec, const HistoryResult& r, std::string& out) const = 0;
  virtual std::string_view separator() const { return {}; }
  virtual void end(const HistorySummary& summary, std::string& out) const = 0;
};

class CsvHistoryWriter final : public HistoryWriter {
 public:
  explicit CsvHistoryWriter(bool risk_neutral) : risk_neutral_(risk_neutral) {}
  void begin(std::string& out) const override {
    append_csv_names(out, history_columns());
    out.push_back('\n');
  }
  void row(const ObligorRecord& rec, const HistoryResult& r, std::string& out) const override {
    HistoryCells cells;
    history_cells(rec, r, risk_neutral_, cells);
    for (std::size_t i = 0; i < kHistoryColumns; ++i) {
      if (i > 0) out.push_back(',');
      append_csv_cell(out, cells[i]);
    }
    out.push_back('\n');
  }
  void end(const HistorySummary&, std::string&) const override {}

 private:
  bool risk_neutral_ = false;
};

class JsonHistoryWriter final : public HistoryWriter {
 public:
  JsonHistoryWriter(const HistorySources& src, const HistorySettings& settings,
                    const AssetDynamicsOptions& est)
      : src_(src), settings_(settings), est_(est) {}
  void begin(std::string& out) const override {
    out += "{\n  \"run\": {\"book\": ";
    append_json_string(out, src_.book->origin);
    json_text_member(out, "equity_history", src_.history->origin);
    out += ", \"balance_sheets\": ";
    if (src_.sheets != nullptr) {
      append_json_string(out, src_.sheets->origin);
    } else {
      out += "null";
    }
    json_text_member(out, "method", to_string(est_.method));
    json_text_member(out, "equity_vol_estimator", to_string(est_.equity_vol));
    json_text_member(out, "measure",
                     to_string(est_.risk_neutral ? Measure::risk_neutral : Measure::physical));
    json_number_member(out, "drift_shrinkage", settings_.drift_shrinkage);
    json_number_member(out, "drift_cap", settings_.drift_cap);
    json_number_member(out, "trading_days_per_year", settings_.trading_days_per_year);
    json_number_member(out, "ewma_decay", settings_.ewma_decay);
    json_number_member(out, "min_observations", settings_.min_observations);
    json_number_member(out, "confidence_level", settings_.confidence_level);
    out += "},\n  \"obligors\": [\n";
  }
  std::string_view separator() const override { return ",\n"; }
  void row(const ObligorRecord& rec, const HistoryResult& r, std::string& out) const override {
    const auto& cols = history_columns();
    HistoryCells cells;
    history_cells(rec, r, est_.risk_neutral, cells);
    out += "    {";
    for (std::size_t i = 0; i < kHistoryColumns; ++i) {
      if (i > 0) out += ", ";
      append_json_string(out, cols[i]);
      out += ": ";
      append_json_cell(out, cells[i]);
    }
    out += "}";
  }
  void end(const HistorySummary& s, std::string& out) const override {
    out += "\n  ],\n  \"summary\": {\"obligors\": " + std::to_string(s.total) +
           ", \"estimated\": " + std::to_string(s.estimated) +
           ", \"invalid_input\": " + std::to_string(s.invalid) +
           ", \"not_converged\": " + std::to_string(s.not_converged) + "}\n}\n";
  }

 private:
  HistorySources src_;
  HistorySettings settings_;
  AssetDynamicsOptions est_;
};

// Fixed-width text for people.
class TableHistoryWriter final : public HistoryWriter {
 public:
  TableHistoryWriter(const HistorySettings& settings, const AssetDynamicsOptions& est)
      : settings_(settings), est_(est) {}
  void begin(std::string& out) const override {
    out += "method: ";
    switch (est_.method) {
      case HistoryMethod::iterative:
        out += "iterative (Vassalou and Xing 2004; Bharath and Shumway 2008)";
        break;
      case HistoryMethod::mle:
        out += "mle (Duan 1994); intervals at " + shortest(100.0 * settings_.confidence_level) + "%";
        break;
      case HistoryMethod::naive:
        out += "naive (Bharath and Shumway 2008)";
        break;
    }
    out += "; equity volatility: ";
    out += to_string(est_.equity_vol);
    out += "\n";
    if (est_.risk_neutral) {
      out += "measure: risk-neutral; drift in DD: the rate\n";
    } else {
      out += "measure: physical; drift in DD: the estimate shrunk " +
             shortest(100.0 * settings_.drift_shrinkage) + "% towards the rate, capped at rate +- " +
             shortest(100.0 * settings_.drift_cap) + "% (* the cap bound)\n";
    }
    char buf[320];
    std::snprintf(buf, sizeof buf, kFormat, "obligor", "as of", "asset value", "asset vol %", "drift %",
                  "drift used %", "DD", "DD interval", "PD %", "PD interval %", "iter", "status");
    out += buf;
    out += std::string(kWidth, '-') + "\n";
  }
  void row(const ObligorRecord& rec, const HistoryResult& r, std::string& out) const override {
    char buf[320];
    const std::string id = fit_text(rec.get(TextField::id), 12);
    const std::string as_of = r.joined ? format_iso_date(r.as_of) : "-";
    if (r.status != RowStatus::ok) {
      std::snprintf(buf, sizeof buf, kFormat, id.c_str(), as_of.c_str(), "-", "-", "-", "-", "-", "-", "-",
                    "-", "-", std::string(to_string(r.status)).c_str());
      out += buf;
      return;
    }
    const AssetDynamics& a = r.a;
    char vol[40];
    char drift[24];
    char dd[24];
    char ddi[48] = "-";
    char pdi[48] = "-";
    char iter[16] = "-";
    if (std::isfinite(a.asset_vol_se)) {
      std::snprintf(vol, sizeof vol, "%.2f +- %.2f", 100.0 * a.asset_vol_annual, 100.0 * a.asset_vol_se);
    } else {
      std::snprintf(vol, sizeof vol, "%.2f", 100.0 * a.asset_vol_annual);
    }
    std::snprintf(drift, sizeof drift, "%.2f", 100.0 * a.drift_annual);
    char drift_used[24];
    std::snprintf(drift_used, sizeof drift_used, "%.2f%s", 100.0 * a.drift_used,
                  a.drift_source == DriftSource::capped ? "*" : " ");
    std::snprintf(dd, sizeof dd, "%.3f", a.distance_to_default);
    if (std::isfinite(a.dd_lo) && std::isfinite(a.dd_hi)) {
      std::snprintf(ddi, sizeof ddi, "[%.3f, %.3f]", a.dd_lo, a.dd_hi);
      std::snprintf(pdi, sizeof pdi, "[%s, %s]", format_cell(a.pd_lo, CellStyle::percent_pd).c_str(),
                    format_cell(a.pd_hi, CellStyle::percent_pd).c_str());
    }
    if (a.iterations > 0) std::snprintf(iter, sizeof iter, "%d", a.iterations);
    std::snprintf(buf, sizeof buf, kFormat, id.c_str(), as_of.c_str(),
                  format_cell(a.asset_value, CellStyle::amount).c_str(), vol, drift, drift_used, dd, ddi,
                  format_cell(a.pd, CellStyle::percent_pd).c_str(), pdi, iter, "ok");
    out += buf;
  }
  void end(const HistorySummary& sum, std::string& out) const override {
    out += std::string(kWidth, '-') + "\n";
    out += "estimated " + std::to_string(sum.estimated) + " of " + std::to_string(sum.total) + " obligors";
    if (sum.failed() > 0) {
      out += "; " + std::to_string(sum.invalid) + " invalid input, " + std::to_string(sum.not_converged) +
             " not converged (reasons below)";
    }
    out += "\n";
    append_table_problems(out, sum.problems, sum.problems_not_listed);
    out += kTableCaution;
  }

 private:
  static constexpr const char* kFormat = "%-12s %-10s %13s %15s %8s %13s %8s %18s %9s %20s %5s  %s\n";
  static constexpr std::size_t kWidth = 147;
  HistorySettings settings_;
  AssetDynamicsOptions est_;
};

std::unique_ptr<HistoryWriter> make_history_writer(OutputFormat f, const HistorySources& src,
                                                   const HistorySettings& settings,
                                                   const AssetDynamicsOptions& est) {
  switch (f) {
    case OutputFormat::csv:
      return std::make_unique<CsvHistoryWriter>(est.risk_neutral);
    case OutputFormat::json:
      return std::make_unique<JsonHistoryWriter>(src, settings, est);
    case OutputFormat::table:
      return std::make_unique<TableHistoryWriter>(settings, est);
  }
  return std::make_unique<CsvHistoryWriter>(est.risk_neutral);
}

void append_series(const std::string& id, const JoinedHistory& j, const HistoryWorkspace& ws,
                   std::string& out) {
  for (std::size_t t = 0; t < j.equity_value.size(); ++t) {
    out += format_iso_date(j.date[t]);
    out.push_back(',');
    append_csv_text(out, id);
    out.push_back(',');
    append_number(out, j.equity_value[t]);
    out.push_back(',');
    append_number(out, j.default_point[t]);
    out.push_back(',');
    append_number(out, ws.asset_value[t]);
    out.push_back(',');
    append_number(out, ws.distance_to_default[t]);
    out.push_back(',');
    append_number(out, ws.pd[t]);
    out.push_back('\n');
  }
}

// Notes on ids present in a file but not in the book.
void note_unknown_ids(const std::vector<std::string>& ids, const Book& book, const std::string& origin,
                      std::vector<std::string>& notes) {
  std::unordered_map<std::string_view, bool> in_book;
  in_book.reserve(book.obligors.size());
  for (const auto& rec : book.obligors) in_book.emplace(rec.get(TextField::id), true);
  std::size_t count = 0;
  std::string first;
  for (const auto& id : ids) {
    if (in_book.count(id) == 0) {
      if (count++ == 0) first = id;
    }
  }
  if (count > 0) {
    notes.push_back(located(origin, 0,
                            "note: " + std::to_string(count) + " obligor" + (count == 1 ? "" : "s") +
                                " not in the book (first '" + first + "') ignored"));
  }
}

// The notes on the input files: the book's, the history's, the sheets', and ids not in the book.
std::vector<std::string> input_notes(const HistorySources& src) {
  const Book& book = *src.book;
  std::vector<std::string> notes = book.notes;
  notes.insert(notes.end(), src.history->notes.begin(), src.history->notes.end());
  std::vector<std::string> ids;
  ids.reserve(src.history->obligors.size());
  for (const auto& ob : src.history->obligors) ids.push_back(ob.id);
  note_unknown_ids(ids, book, src.history->origin, notes);
  if (src.sheets != nullptr) {
    notes.insert(notes.end(), src.sheets->notes.begin(), src.sheets->notes.end());
    note_unknown_ids(src.sheets->ids, book, src.sheets->origin, notes);
  }
  return notes;
}

// One worker thread's buffers and counts.
struct Worker {
  HistoryWorkspace ws;
  JoinedHistory joined;
  HistoryResult result;
  std::string out;
  std::string series;
  std::vector<std::pair<std::size_t, std::string>> problems;
  std::vector<std::pair<std::size_t, std::string>> notes;
  std::size_t problem_count = 0, note_count = 0;
  std::size_t estimated = 0, invalid = 0, not_converged = 0, iterations = 0;

  // Counts `result` of the obligor at book position i, keeping its problem or notes among the
  // first `max_listed`.
  void tally(std::size_t i, const ObligorRecord& rec, const std::string& history_origin,
             std::size_t max_listed) {
    if (result.status != RowStatus::ok) {
      ++(result.status == RowStatus::invalid_input ? invalid : not_converged);
      if (problems.size() < max_listed) problems.emplace_back(i, result.message);
      ++problem_count;
      return;
    }
    ++estimated;
    iterations += static_cast<std::size_t>(result.a.iterations);
    for (const LocatedProblem& note : joined.notes) {
      if (notes.size() < max_listed) {
        notes.emplace_back(i, located(history_origin, note.line,
                                      obligor_prefix(rec.get(TextField::id)) + "note: " + note.text));
      }
      ++note_count;
    }
  }
};

// The workers' counts, and the first problems and notes in book order, into the summary.
void merge_workers(std::vector<Worker>& workers, std::size_t max_listed, HistorySummary& summary) {
  std::vector<std::pair<std::size_t, std::string>> problems;
  std::vector<std::pair<std::size_t, std::string>> notes;
  std::size_t problem_count = 0;
  std::size_t note_count = 0;
  for (Worker& wk : workers) {
    summary.estimated += wk.estimated;
    summary.invalid += wk.invalid;
    summary.not_converged += wk.not_converged;
    summary.iterations += wk.iterations;
    problem_count += wk.problem_count;
    note_count += wk.note_count;
    for (auto& p : wk.problems) problems.push_back(std::move(p));
    for (auto& p : wk.notes) notes.push_back(std::move(p));
  }
  std::sort(problems.begin(), problems.end());
  std::sort(notes.begin(), notes.end());
  for (std::size_t i = 0; i < problems.size() && i < max_listed; ++i) {
    summary.problems.push_back(std::move(problems[i].second));
  }
  summary.problems_not_listed = problem_count - summary.problems.size();
  std::size_t listed_notes = 0;
  for (std::size_t i = 0; i < notes.size() && i < max_listed; ++i, ++listed_notes) {
    summary.notes.push_back(std::move(notes[i].second));
  }
  if (note_count > listed_notes) {
    summary.notes.push_back("... and " + std::to_string(note_count - listed_notes) +
                            " more obligor notes (see --format csv, column message)");
  }
}

}  // namespace

OptionCheck HistoryBookOptions::validate() const {
  const auto number = [](auto e) { return std::to_string(static_cast<int>(e)); };
  if (estimator.method != HistoryMethod::iterative && estimator.method != HistoryMethod::mle &&
      estimator.method != HistoryMethod::naive) {
    return OptionProblem{"estimator.method", number(estimator.method), "must be iterative, mle or naive"};
  }
  if (estimator.equity_vol != VolEstimator::simple && estimator.equity_vol != VolEstimator::ewma) {
    return OptionProblem{"estimator.equity_vol", number(estimator.equity_vol), "must be simple or ewma"};
  }
  if (format != OutputFormat::table && format != OutputFormat::csv && format != OutputFormat::json) {
    return OptionProblem{"format", number(format), "must be table, csv or json"};
  }
  return std::nullopt;
}

const std::vector<std::string_view>& history_columns() {
  static const std::vector<std::string_view> cols = {"id",
                                                     "name",
                                                     "status",
                                                     "method",
                                                     "as_of",
                                                     "observations",
                                                     "missing_days",
                                                     "equity_value",
                                                     "equity_vol_simple",
                                                     "equity_vol_ewma",
                                                     "default_point",
                                                     "rate",
                                                     "horizon",
                                                     "asset_value",
                                                     "asset_vol",
                                                     "asset_vol_se",
                                                     "asset_vol_lo",
                                                     "asset_vol_hi",
                                                     "drift",
                                                     "drift_se",
                                                     "drift_lo",
                                                     "drift_hi",
                                                     "drift_used",
                                                     "drift_source",
                                                     "measure",
                                                     "distance_to_default",
                                                     "dd_se",
                                                     "dd_lo",
                                                     "dd_hi",
                                                     "pd",
                                                     "pd_lo",
                                                     "pd_hi",
                                                     "iterations",
                                                     "last_change",
                                                     "log_likelihood",
                                                     "message"};
  return cols;
}

HistorySummary run_history(const HistorySources& src, const ScoreSettings& score_settings,
                           const HistorySettings& settings, const HistoryBookOptions& run,
                           const TextSink& sink, const TextSink* series) {
  const Book& book = *src.book;
  const auto writer = make_history_writer(run.format, src, settings, run.estimator);
  HistorySummary summary;
  summary.notes = input_notes(src);
  {
    std::string s;
    writer->begin(s);
    sink(s);
  }
  if (series != nullptr) (*series)("date,id,equity_value,default_point,asset_value,distance_to_default,pd\n");

  const unsigned threads = std::max(1U, run.threads);
  std::vector<Worker> workers(threads);
  const std::size_t total = book.obligors.size();
  const std::size_t batch = std::max<std::size_t>(1, run.batch_obligors);
  for (std::size_t base = 0; base < total; base += batch) {
    const std::size_t n = std::min(batch, total - base);
    for (Worker& wk : workers) {
      wk.out.clear();
      wk.series.clear();
    }
    parallel_slices(
        n, threads,
        [&](unsigned w, std::size_t b, std::size_t e) {
          Worker& wk = workers[w];
          for (std::size_t i = base + b; i < base + e; ++i) {
            const ObligorRecord& rec = book.obligors[i];
            estimate_one(rec, src, score_settings, settings, run.estimator, wk.joined, wk.ws, wk.result);
            if (i > 0) wk.out.append(writer->separator());
            writer->row(rec, wk.result, wk.out);
            if (series != nullptr && wk.result.status == RowStatus::ok) {
              append_series(rec.get(TextField::id), wk.joined, wk.ws, wk.series);
            }
            wk.tally(i, rec, src.history->origin, run.max_listed_problems);
          }
        },
        16);
    for (Worker& wk : workers) {
      sink(wk.out);
      if (series != nullptr) (*series)(wk.series);
    }
    if (run.progress) run.progress(base + n, total);
  }
  merge_workers(workers, run.max_listed_problems, summary);
  summary.total = total;
  std::string s;
  writer->end(summary, s);
  sink(s);
  return summary;
}

ScoreSummary score_with_history(const HistorySources& src, const ScoreSettings& score_settings,
                                const HistorySettings& settings, VolEstimator estimator,
                                const ScoreBookOptions& run, const TextSink& sink) {
  Book scored = *src.book;
  scored.notes.insert(scored.notes.end(), src.history->notes.begin(), src.history->notes.end());
  if (src.sheets != nullptr)
    scored.notes.insert(scored.notes.end(), src.sheets->notes.begin(), src.sheets->notes.end());
  JoinedHistory j;
  std::size_t notes = 0;
  for (ObligorRecord& rec : scored.obligors) {
    if (!rec.read_error.empty()) continue;
    join_history(rec, src, score_settings, j);
    if (!j.ok()) {
      rec.read_error = j.message({});
      continue;
    }
    for (const LocatedProblem& note : j.notes) {
      if (notes++ < run.max_listed_problems) {
        scored.notes.push_back(located(src.history->origin, note.line,
                                       obligor_prefix(rec.get(TextField::id)) + "note: " + note.text));
      }
    }
    const HistoryCheck check = validate(j.view(), settings);
    if (!check.ok()) {
      AssetDynamics a;
      a.status = check.status;
      a.message = check.message;
      a.bad_index = check.index;
      rec.read_error = core_problem(j, a, settings, src.history->origin, {});
      continue;
    }
    const EquityVolEstimate v = estimate_equity_vol(j.view(), settings);
    rec.set(NumField::market_cap, j.equity_value.back());
    rec.set(NumField::equity_vol, estimator == VolEstimator::ewma ? v.ewma_annual : v.simple_annual);
    if (j.last_default_point_from_sheet) rec.set(NumField::default_point, j.default_point.back());
  }
  if (notes > run.max_listed_problems) {
    scored.notes.push_back("... and " + std::to_string(notes - run.max_listed_problems) +
                           " more obligor notes");
  }
  return score_book(scored, score_settings, run, sink);
}

}  // namespace firmcall
