#include "firmcall/monitor/monitor_output.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "firmcall/engine/score_output.hpp"
#include "firmcall/format/row_writer.hpp"

namespace firmcall {

namespace {

using Cell = ReportCell;
using Style = CellStyle;

std::string grade_text(const GradeScale& scale, int index) {
  return std::string(scale.label_at(index));
}

Cell grade_cell(const GradeScale& scale, int index) {
  return index < 0 ? Cell::none() : Cell::text(grade_text(scale, index));
}

// Alert names: "a;b" in CSV, ["a", "b"] in JSON.
Cell alerts_cell(const Mover& m) {
  Cell cell = Cell::text(m.alert_list());
  cell.json = "[";
  for (std::size_t i = 0; i < kAlertCount; ++i) {
    if (!m.has(static_cast<Alert>(i))) continue;
    if (cell.json.size() > 1) cell.json += ", ";
    append_json_string(cell.json, to_string(static_cast<Alert>(i)));
  }
  cell.json += "]";
  return cell;
}

std::string run_title(const RunInfo& r) {
  return "run " + std::to_string(r.run_id) + " (as of " + r.as_of + ")";
}

void json_run(std::string& out, const RunInfo& r) {
  out += "{\"run_id\": " + std::to_string(r.run_id) + ", \"as_of\": ";
  append_json_string(out, r.as_of);
  out += ", \"recorded_at\": ";
  append_json_string(out, r.recorded_at);
  out += ", \"book_path\": ";
  append_json_string(out, r.book_path);
  out += ", \"book_label\": ";
  append_json_string(out, r.book_label);
  out += ", \"input_sha256\": ";
  append_json_string(out, r.input_sha256);
  out += ", \"tool_version\": ";
  append_json_string(out, r.tool_version);
  out += ", \"obligor_count\": " + std::to_string(r.obligor_count) + "}";
}

// Opens the JSON list of rows / closes it.
void json_rows_begin(std::string& out, std::string_view key) {
  out += ",\n  \"";
  out += key;
  out += "\": [\n";
}
void json_rows_end(std::string& out, std::size_t rows) {
  out += rows > 0 ? "\n  ]\n}\n" : "]\n}\n";
}

std::string number_text(double v, const char* fmt) {
  char buf[64];
  std::snprintf(buf, sizeof buf, fmt, v);
  return buf;
}

}  // namespace

OptionCheck MoversOptions::validate() const {
  return std::nullopt;
}

void write_runs_report(const std::string& store_path, const std::vector<RunInfo>& runs, OutputFormat format,
                       std::string& out) {
  std::vector<ReportColumn> columns = {{"run_id", "run", "", 5, Style::integer},
                                       {"as_of", "as of", "", 10, Style::text},
                                       {"recorded_at", "recorded", "UTC", 20, Style::text},
                                       {"obligor_count", "obligors", "", 8, Style::integer},
                                       {"input_sha256", "input", "SHA-256", 12, Style::text},
                                       {"tool_version", "version", "", 7, Style::text},
                                       {"book_path", "book", "", 50, Style::text},
                                       {"book_label", "", "", 0, Style::text}};
  // A store with calibrated runs lists each run's driving PD and calibration; without any, the
  // output is as it was before calibrations were recorded.
  const bool calibrated =
      std::any_of(runs.begin(), runs.end(), [](const RunInfo& r) { return r.calibration.present(); });
  if (calibrated) {
    columns.push_back({"driving_pd", "driving", "PD", 10, Style::text});
    columns.push_back({"calibration_method", "calibration", "method", 11, Style::text});
    columns.push_back({"calibration_sha256", "data", "SHA-256", 12, Style::text});
    columns.push_back({"calibration_file", "", "", 0, Style::text});
  }
  ReportWriter w(std::move(columns), format);
  if (format == OutputFormat::json) {
    out += "{\n  \"store\": ";
    append_json_string(out, store_path);
    json_rows_begin(out, "runs");
  } else if (format == OutputFormat::table) {
    out += "Runs in " + store_path + "\n\n";
  }
  w.header(out);
  for (const RunInfo& r : runs) {
    std::string book = r.book_path;
    if (format == OutputFormat::table) {
      if (!r.book_label.empty()) book += " (" + r.book_label + ")";
      book = fit_text(book, 50);
    }
    std::vector<Cell> cells = {
        Cell::number(static_cast<double>(r.run_id)),
        Cell::text(r.as_of),
        Cell::text(r.recorded_at),
        Cell::number(static_cast<double>(r.obligor_count)),
        Cell::text(format == OutputFormat::table ? r.input_sha256.substr(0, 12) : r.input_sha256),
        Cell::text(r.tool_version),
        Cell::text(book),
        Cell::text(r.book_label)};
    if (calibrated) {
      const RunCalibration& c = r.calibration;
      const auto text_or_none = [](const std::string& v) { return v.empty() ? Cell::none() : Cell::text(v); };
      cells.push_back(Cell::text(std::string(to_string(r.driving_pd))));
      cells.push_back(text_or_none(c.method));
      cells.push_back(
          text_or_none(format == OutputFormat::table ? c.data_sha256.substr(0, 12) : c.data_sha256));
      cells.push_back(text_or_none(c.file));
    }
    w.row(cells, out);
  }
  if (format == OutputFormat::json) {
    json_rows_end(out, w.rows());
  } else if (format == OutputFormat::table) {
    w.rule(out);
    out += std::to_string(runs.size()) + (runs.size() == 1 ? " run\n" : " runs\n");
  }
}

namespace {

// With the calibrated basis the PD columns are named pd_calibrated_* (CSV and JSON) and headed
// "cal PD %" (table); on the model PD they keep their names.
std::vector<ReportColumn> movers_columns(const PdBasisChoice& basis) {
  const bool cal = basis.basis == PdBasis::calibrated;
  const std::string pd = cal ? "pd_calibrated_" : "pd_";
  const std::string title = cal ? "cal PD %" : "PD %";
  return {{"id", "obligor", "", 12, Style::text},
          {"name", "name", "", 9, Style::text},
          {"change", "", "", 0, Style::text},
          {"status_before", "", "", 0, Style::text},
          {"status_now", "", "", 0, Style::text},
          {"dd_before", "DD", "before", 6, Style::decimal3},
          {"dd_now", "DD", "now", 6, Style::decimal3},
          {"dd_change", "DD", "change", 6, Style::signed3},
          {pd + "before", title, "before", 9, Style::percent_pd},
          {pd + "now", title, "now", 9, Style::percent_pd},
          {pd + "change", "", "", 0, Style::signed_pp},
          {pd + "ratio", "", "", 0, Style::ratio},
          {"grade_before", "", "", 0, Style::text},
          {"grade_now", "", "", 0, Style::text},
          {"", "grade", "from>to", 9, Style::text},
          {"notches", "notch", "down", 5, Style::integer},
          {"severity", "sev", "", 3, Style::integer},
          {"alerts", "", "", 0, Style::text},
          {"", "alerts and notes", "", 16, Style::text}};
}

// The PD of a comparison, only when a run was recorded with a calibrated driving PD (otherwise
// the output stays as it was before calibrations were recorded).
void json_pd_basis(const PdBasisChoice& b, std::string& out) {
  if (b.basis == PdBasis::model && b.note.empty()) return;
  out += ",\n  \"pd_basis\": {\"pd\": ";
  append_json_string(out, b.basis == PdBasis::calibrated ? "calibrated_one_year" : "model");
  if (b.basis == PdBasis::calibrated) {
    out += ", \"calibration_method\": ";
    append_json_string(out, b.calibration.method);
    out += ", \"calibration_data_sha256\": ";
    append_json_string(out, b.calibration.data_sha256);
    out += ", \"calibration_file\": ";
    append_json_string(out, b.calibration.file);
  }
  out += ", \"note\": ";
  append_json_string(out, b.note);
  out += "}";
}

// The table's line that states the PD (nothing on the model PD without a note).
void table_pd_basis(const PdBasisChoice& b, std::string& out) {
  if (b.basis == PdBasis::model && b.note.empty()) return;
  out += "PD: " + b.description();
  if (!b.note.empty()) out += " (" + b.note + ")";
  out += "\n";
}

// The JSON object up to its list of obligors: both runs, the alert rules, the counts and the
// migration matrix.
void json_movers_head(const RunPair& runs, const Comparison& c, const GradeScale& scale,
                      const AlertRules& rules, std::string& out) {
  out += "{\n  \"now\": ";
  json_run(out, runs.now);
  out += ",\n  \"before\": ";
  json_run(out, runs.before);
  json_pd_basis(c.basis, out);
  out += ",\n  \"alert_rules\": {\"dd_drop\": ";
  append_json_number(out, rules.dd_drop);
  out += ", \"pd_ratio\": ";
  append_json_number(out, rules.pd_ratio);
  out += ", \"pd_ratio_min_pd\": ";
  append_json_number(out, rules.pd_ratio_min_pd);
  out += ", \"downgrade_notches\": " + std::to_string(rules.downgrade_notches) + ", \"pd_ceiling\": ";
  append_json_number(out, rules.pd_ceiling);
  out += "},\n  \"summary\": {\"continuing\": " + std::to_string(c.continuing) +
         ", \"new\": " + std::to_string(c.added) + ", \"dropped\": " + std::to_string(c.dropped) +
         ", \"downgraded\": " + std::to_string(c.downgraded) +
         ", \"upgraded\": " + std::to_string(c.upgraded) +
         ", \"unchanged_grade\": " + std::to_string(c.unchanged_grade) +
         ", \"on_watchlist\": " + std::to_string(c.flagged) + ", \"left_out\": " + std::to_string(c.skipped) +
         "},\n  \"migration\": {\"grades\": [";
  for (std::size_t i = 0; i < scale.bands.size(); ++i) {
    if (i > 0) out += ", ";
    append_json_string(out, scale.bands[i].label);
  }
  out += "], \"counts\": [";
  for (std::size_t i = 0; i < c.migration.size(); ++i) {
    out += i == 0 ? "[" : ", [";
    for (std::size_t j = 0; j < c.migration[i].size(); ++j) {
      out += (j == 0 ? "" : ", ") + std::to_string(c.migration[i][j]);
    }
    out += "]";
  }
  out += "]}";
  json_rows_begin(out, "obligors");
}

// One mover's cells in movers_columns() order; the table's notes column only for the table.
std::vector<Cell> mover_cells(const Mover& m, const GradeScale& scale, bool table) {
  std::string notes;
  if (table) {
    if (m.kind != MoveKind::continuing) notes = std::string(to_string(m.kind));
    for (std::size_t i = 0; i < kAlertCount; ++i) {
      if (!m.has(static_cast<Alert>(i))) continue;
      if (!notes.empty()) notes += ' ';
      notes += to_string(static_cast<Alert>(i));
    }
  }
  const std::string move = (m.grade_before < 0 ? "-" : grade_text(scale, m.grade_before)) + ">" +
                           (m.grade_now < 0 ? "-" : grade_text(scale, m.grade_now));
  const bool graded_both = m.grade_before >= 0 && m.grade_now >= 0;
  return {Cell::text(m.id),
          Cell::text(m.name),
          Cell::text(std::string(to_string(m.kind))),
          m.before ? Cell::text(std::string(to_string(m.before->status))) : Cell::none(),
          m.now ? Cell::text(std::string(to_string(m.now->status))) : Cell::none(),
          Cell::number(m.dd_before),
          Cell::number(m.dd_now),
          Cell::number(m.dd_change()),
          Cell::number(m.pd_before),
          Cell::number(m.pd_now),
          Cell::number(m.pd_change()),
          Cell::number(m.pd_ratio()),
          grade_cell(scale, m.grade_before),
          grade_cell(scale, m.grade_now),
          Cell::text(move),
          graded_both ? Cell::number(m.notches()) : Cell::none(),
          Cell::number(m.severity),
          alerts_cell(m),
          Cell::text(notes)};
}

// Grade migration for the table: rows the older run's grade, columns the newer run's; '.' for none.
void migration_table(const RunPair& runs, const Comparison& c, const GradeScale& scale, std::string& out) {
  out += "\nGrade migration (rows: " + run_title(runs.before) + ", columns: " + run_title(runs.now) + ")\n";
  // Cells right-aligned in 7 characters.
  const auto cell = [&out](const std::string& text) {
    const std::string t = fit_text(text, 6);
    out.append(7 - t.size(), ' ');
    out += t;
  };
  out.append(8, ' ');
  for (const GradeBand& b : scale.bands) cell(b.label);
  out += '\n';
  for (std::size_t i = 0; i < c.migration.size(); ++i) {
    const std::string label = fit_text(scale.bands[i].label, 8);
    out += label;
    out.append(8 - label.size(), ' ');
    for (std::size_t j = 0; j < c.migration[i].size(); ++j) {
      cell(c.migration[i][j] == 0 ? std::string(".") : std::to_string(c.migration[i][j]));
    }
    out += '\n';
  }
}

// Under the table: the counts, the alert rules and (movers only) the migration matrix.
void movers_table_foot(const RunPair& runs, const Comparison& c, const GradeScale& scale,
                       const AlertRules& rules, const MoversOptions& view, std::size_t shown,
                       std::string& out) {
  if (view.watchlist && shown == 0) out += "No obligor meets an alert rule.\n";
  out += std::to_string(c.continuing) + " continuing, " + std::to_string(c.added) + " new, " +
         std::to_string(c.dropped) + " dropped; grades " + std::to_string(c.downgraded) + " down, " +
         std::to_string(c.upgraded) + " up, " + std::to_string(c.unchanged_grade) + " unchanged; " +
         std::to_string(c.flagged) + " on the watchlist";
  if (view.top > 0 && shown == view.top) out += "; first " + std::to_string(shown) + " rows shown";
  out += "\n";
  if (c.skipped > 0) {
    out += std::to_string(c.skipped) + " entries without an id, or repeating one, are left out\n";
  }
  out += "Alert rules: DD fell by more than " + number_text(rules.dd_drop, "%g") + "; PD grew more than " +
         number_text(rules.pd_ratio, "%g") + "x to at least " +
         number_text(100.0 * rules.pd_ratio_min_pd, "%g") + "%; grade down " +
         std::to_string(rules.downgrade_notches) + "+ notches; PD above " +
         number_text(100.0 * rules.pd_ceiling, "%g") + "%; not scored\n";
  if (!view.watchlist) migration_table(runs, c, scale, out);
  out += kTableCaution;
}

}  // namespace

void write_movers_report(const RunPair& runs, const Comparison& c, const GradeScale& scale,
                         const AlertRules& rules, const MoversOptions& view, OutputFormat format,
                         std::string& out) {
  const bool table = format == OutputFormat::table;
  ReportWriter w(movers_columns(c.basis), format);
  if (format == OutputFormat::json) {
    json_movers_head(runs, c, scale, rules, out);
  } else if (table) {
    const char* what = view.watchlist ? "Watchlist" : "Movers";
    out += std::string(what) + ": " + run_title(runs.now) + " against " + run_title(runs.before) + "\n";
    table_pd_basis(c.basis, out);
    out += "\n";
  }
  w.header(out);
  std::size_t shown = 0;
  for (const Mover& m : c.movers) {
    if (view.watchlist && m.severity == 0) continue;
    if (view.top > 0 && shown == view.top) break;
    ++shown;
    w.row(mover_cells(m, scale, table), out);
  }
  if (format == OutputFormat::json) {
    json_rows_end(out, w.rows());
  } else if (table) {
    w.rule(out);
    movers_table_foot(runs, c, scale, rules, view, shown, out);
  }
}

void write_attribution_report(const RunPair& runs, const std::vector<AttributedMover>& rows,
                              std::size_t left_out, const GradeScale& scale, OutputFormat format,
                              std::string& out) {
  const bool table = format == OutputFormat::table;
  std::vector<ReportColumn> cols = {{"id", "obligor", "", 12, Style::text},
                                    {"name", "", "", 0, Style::text},
                                    {"status", "", "", 0, Style::text},
                                    {"grade_before", "", "", 0, Style::text},
                                    {"grade_now", "", "", 0, Style::text},
                                    {"", "grade", "before>now", 10, Style::text},
                                    {"pd_before", "PD %", "before", 9, Style::percent_pd},
                                    {"pd_now", "PD %", "now", 9, Style::percent_pd},
                                    {"pd_change", "change", "pp", 9, Style::signed_pp}};
  const char* titles[kDriverCount][2] = {{"equity", "value"}, {"equity", "vol"}, {"default", "point"},
                                         {"rate", ""},        {"horizon", ""},   {"drift", ""}};
  for (std::size_t d = 0; d < kDriverCount; ++d) {
    cols.push_back({"from_" + std::string(to_string(static_cast<Driver>(d))), titles[d][0], titles[d][1], 9,
                    Style::signed_pp});
  }
  cols.push_back({"drivers", "", "", 0, Style::integer});
  for (std::size_t d = 0; d < kDriverCount; ++d) {
    const std::string name(to_string(static_cast<Driver>(d)));
    cols.push_back({name + "_before", "", "", 0, Style::text});
    cols.push_back({name + "_now", "", "", 0, Style::text});
  }
  ReportWriter w(std::move(cols), format);
  if (format == OutputFormat::json) {
    out += "{\n  \"now\": ";
    json_run(out, runs.now);
    out += ",\n  \"before\": ";
    json_run(out, runs.before);
    out += ",\n  \"method\": \"exact Shapley values over the drivers; from_* sum to pd_change\"";
    out += ",\n  \"left_out\": " + std::to_string(left_out);
    json_rows_begin(out, "obligors");
  } else if (table) {
    out += "Why PDs moved: " + run_title(runs.now) + " against " + run_title(runs.before) +
           "\nShares of each PD change in percentage points (exact Shapley values; they add up to the "
           "change)\n\n";
  }
  w.header(out);
  for (const AttributedMover& a : rows) {
    const Mover& m = *a.mover;
    const PdAttribution& r = a.result;
    const bool ok = r.usable();
    std::vector<Cell> cells = {
        Cell::text(m.id),
        Cell::text(m.name),
        Cell::text(std::string(to_string(r.status))),
        grade_cell(scale, m.grade_before),
        grade_cell(scale, m.grade_now),
        Cell::text(grade_text(scale, m.grade_before) + ">" + grade_text(scale, m.grade_now)),
        Cell::number(ok ? r.pd_before : m.pd_before),
        Cell::number(ok ? r.pd_after : m.pd_now),
        Cell::number(ok ? r.total() : m.pd_change())};
    for (std::size_t d = 0; d < kDriverCount; ++d) {
      const bool is_driver = ok && (d < static_cast<std::size_t>(r.drivers));
      cells.push_back(ok && (is_driver || table) ? Cell::number(is_driver ? r.contribution[d] : 0.0)
                                                 : Cell::none());
    }
    cells.push_back(ok ? Cell::number(r.drivers) : Cell::none());
    const MertonInputs& b = m.before->inputs;
    const MertonInputs& n = m.now->inputs;
    const double values[kDriverCount][2] = {
        {b.equity_value, n.equity_value},   {b.equity_vol_annual, n.equity_vol_annual},
        {b.default_point, n.default_point}, {b.risk_free_rate_cc, n.risk_free_rate_cc},
        {b.horizon_years, n.horizon_years}, {b.drift_annual, n.drift_annual}};
    for (const auto& v : values) {
      cells.push_back(Cell::number(v[0]));
      cells.push_back(Cell::number(v[1]));
    }
    w.row(cells, out);
  }
  if (format == OutputFormat::json) {
    json_rows_end(out, w.rows());
    return;
  }
  if (!table) return;
  w.rule(out);
  out += std::to_string(rows.size()) + " obligors attributed";
  if (left_out > 0) out += "; " + std::to_string(left_out) + " not scored in both runs left out";
  out += "\n";
  out += kTableCaution;
}

namespace {

// The columns of write_track_report(); with `calibrated`, those of the calibrated PD after them.
std::vector<ReportColumn> track_columns(bool calibrated) {
  std::vector<ReportColumn> columns = {{"as_of", "as of", "", 10, Style::text},
                                       {"run_id", "run", "", 5, Style::integer},
                                       {"status", "", "", 0, Style::text},
                                       {"equity_value", "equity", "value", 12, Style::amount},
                                       {"equity_vol", "equity", "vol %", 7, Style::percent},
                                       {"default_point", "default", "point", 12, Style::amount},
                                       {"rate", "", "", 0, Style::text},
                                       {"horizon", "", "", 0, Style::text},
                                       {"asset_value", "", "", 0, Style::amount},
                                       {"asset_vol", "", "", 0, Style::percent},
                                       {"distance_to_default", "DD", "", 7, Style::decimal3},
                                       {"dd_change", "DD", "change", 7, Style::signed3},
                                       {"pd", "PD", "%", 10, Style::percent_pd},
                                       {"spread_bp", "spread", "bp", 10, Style::amount},
                                       {"grade", "grade", "", 6, Style::text},
                                       {"grade_recorded", "", "", 0, Style::text},
                                       {"", "status", "", 13, Style::text},
                                       {"message", "", "", 0, Style::text}};
  if (calibrated) {
    columns.push_back({"pd_calibrated", "cal PD", "1y %", 10, Style::percent_pd});
    columns.push_back({"pd_calibrated_lower", "", "", 0, Style::percent_pd});
    columns.push_back({"pd_calibrated_upper", "", "", 0, Style::percent_pd});
    columns.push_back({"pd_calibrated_extrapolated", "", "", 0, Style::text});
    columns.push_back({"driving_pd", "driving", "PD", 10, Style::text});
  }
  return columns;
}

}  // namespace

void write_track_report(std::string_view obligor_id, const std::vector<RunStore::SeriesPoint>& series,
                        const GradeScale& scale, OutputFormat format, std::string& out) {
  const bool table = format == OutputFormat::table;
  // Runs recorded with a calibration add its columns; without any, the output is as before.
  const bool calibrated = std::any_of(series.begin(), series.end(), [](const RunStore::SeriesPoint& p) {
    return p.run.calibration.present();
  });
  ReportWriter w(track_columns(calibrated), format);
  std::string name;
  for (const auto& p : series) {
    if (!p.obligor.name.empty()) name = p.obligor.name;
  }
  if (format == OutputFormat::json) {
    out += "{\n  \"id\": ";
    append_json_string(out, obligor_id);
    out += ", \"name\": ";
    append_json_string(out, name);
    json_rows_begin(out, "runs");
  } else if (table) {
    out += "Obligor " + std::string(obligor_id) + (name.empty() ? "" : " (" + name + ")") + ": " +
           std::to_string(series.size()) + (series.size() == 1 ? " run\n" : " runs\n");
    if (calibrated) {
      out +=
          "PD: model PD at each run's horizon; cal PD: calibrated one-year PD where recorded; grade from "
          "each run's driving PD\n";
    }
    out += "\n";
  }
  w.header(out);
  double last_dd = std::nan("");
  for (const auto& p : series) {
    const StoredObligor& o = p.obligor;
    const bool in = o.has_inputs;
    const bool sc = o.status == RowStatus::ok && o.has_measures;
    const double dd = sc ? o.measures.distance_to_default : std::nan("");
    const double pd = sc ? o.measures.pd : std::nan("");
    // The grade follows the run's driving PD: the calibrated one-year PD when the run drives it.
    const bool cal_drives = sc && p.run.driving_pd == DrivingPd::calibrated && !std::isnan(o.pd_calibrated);
    std::vector<Cell> cells = {
        Cell::text(p.run.as_of),
        Cell::number(static_cast<double>(p.run.run_id)),
        Cell::text(std::string(to_string(o.status))),
        Cell::number(in ? o.inputs.equity_value : std::nan("")),
        Cell::number(in ? o.inputs.equity_vol_annual : std::nan("")),
        Cell::number(in ? o.inputs.default_point : std::nan("")),
        Cell::number(in ? o.inputs.risk_free_rate_cc : std::nan("")),
        Cell::number(in ? o.inputs.horizon_years : std::nan("")),
        Cell::number(sc ? o.measures.asset_value : std::nan("")),
        Cell::number(sc ? o.measures.asset_vol_annual : std::nan("")),
        Cell::number(dd),
        Cell::number(dd - last_dd),
        Cell::number(pd),
        Cell::number(sc ? o.measures.spread_bp : std::nan("")),
        !sc          ? Cell::none()
        : cal_drives ? Cell::text(std::string(scale.label_of(o.pd_calibrated)))
                     : Cell::text(std::string(scale.label_of_pd_at(pd, in ? o.inputs.horizon_years : 1.0))),
        o.grade.empty() ? Cell::none() : Cell::text(o.grade),
        Cell::text(std::string(to_string(o.status))),
        Cell::text(o.message)};
    if (calibrated) {
      const bool has_cal = sc && !std::isnan(o.pd_calibrated);
      cells.push_back(Cell::number(has_cal ? o.pd_calibrated : std::nan("")));
      cells.push_back(Cell::number(has_cal ? o.pd_calibrated_lower : std::nan("")));
      cells.push_back(Cell::number(has_cal ? o.pd_calibrated_upper : std::nan("")));
      Cell flag = has_cal ? Cell::text(o.pd_calibrated_extrapolated ? "true" : "false") : Cell::none();
      flag.json = has_cal ? flag.text_value : std::string();
      cells.push_back(std::move(flag));
      cells.push_back(Cell::text(std::string(to_string(p.run.driving_pd))));
    }
    w.row(cells, out);
    if (sc) last_dd = dd;
  }
  if (format == OutputFormat::json) {
    json_rows_end(out, w.rows());
    return;
  }
  if (table) {
    w.rule(out);
    out += kTableCaution;
  }
}

namespace {

// Obligors in a row of the migration (every column).
std::size_t row_total(const RunMigration& m, std::size_t row) {
  std::size_t n = 0;
  for (std::size_t j = 0; j < m.grades() + 2; ++j) n += m.at(row, j);
  return n;
}

double row_share(const RunMigration& m, std::size_t row, std::size_t column) {
  const std::size_t total = row_total(m, row);
  return total == 0 ? std::nan("") : static_cast<double>(m.at(row, column)) / static_cast<double>(total);
}

std::string grades_on(const RunInfo& r) {
  std::string s = "run " + std::to_string(r.run_id) + " " + std::string(to_string(r.driving_pd));
  if (r.driving_pd == DrivingPd::calibrated) {
    s += " (method " + r.calibration.method + ", data sha256 " + r.calibration.data_sha256.substr(0, 12) +
         "...)";
  }
  return s;
}

// One matrix of the table: counts, or row shares in percent; '.' for an empty cell.
void migration_block(const RunMigration& m, bool shares, std::string& out) {
  const std::size_t n = m.grades() + 2;
  const auto cell = [&out](const std::string& text, std::size_t width) {
    const std::string t = fit_text(text, width - 1);
    out.append(width - t.size(), ' ');
    out += t;
  };
  out.append(9, ' ');
  for (std::size_t j = 0; j < n; ++j) cell(std::string(m.column_label(j)), j < m.grades() ? 7 : 9);
  if (!shares) cell("total", 9);
  out += '\n';
  for (std::size_t i = 0; i < n; ++i) {
    const std::size_t total = row_total(m, i);
    if (i >= m.grades() && total == 0) continue;  // no new or ungraded obligors
    const std::string label = fit_text(std::string(m.row_label(i)), 9);
    out += label;
    out.append(9 - label.size(), ' ');
    for (std::size_t j = 0; j < n; ++j) {
      const std::size_t c = m.at(i, j);
      cell(c == 0   ? std::string(".")
           : shares ? number_text(100.0 * row_share(m, i, j), "%.1f")
                    : std::to_string(c),
           j < m.grades() ? 7 : 9);
    }
    if (!shares) cell(std::to_string(total), 9);
    out += '\n';
  }
}

}  // namespace

void write_run_migration_report(const std::string& store_path, const RunMigration& m, OutputFormat format,
                                std::string& out) {
  const std::size_t n = m.grades() + 2;
  if (format == OutputFormat::json) {
    out += "{\n  \"store\": ";
    append_json_string(out, store_path);
    out += ",\n  \"from_run\": " + std::to_string(m.from.run_id) +
           ", \"to_run\": " + std::to_string(m.to.run_id);
    out += ",\n  \"from\": ";
    json_run(out, m.from);
    out += ",\n  \"to\": ";
    json_run(out, m.to);
    out += ",\n  \"graded_on\": {\"from\": ";
    append_json_string(out, to_string(m.from.driving_pd));
    out += ", \"to\": ";
    append_json_string(out, to_string(m.to.driving_pd));
    out += "},\n  \"psi\": ";
    append_json_number(out, m.psi);
    out += ",\n  \"left_out\": " + std::to_string(m.left_out) + ",\n  \"note\": ";
    append_json_string(out, m.note);
    out += ",\n  \"grades\": [";
    for (std::size_t g = 0; g < m.grades(); ++g) {
      if (g > 0) out += ", ";
      append_json_string(out, m.grade_labels[g]);
    }
    out += "],\n  \"from_counts\": [";
    for (std::size_t g = 0; g < m.grades(); ++g)
      out += (g > 0 ? ", " : "") + std::to_string(m.from_counts[g]);
    out += "],\n  \"to_counts\": [";
    for (std::size_t g = 0; g < m.grades(); ++g) out += (g > 0 ? ", " : "") + std::to_string(m.to_counts[g]);
    out += "],\n  \"migration\": [";
    bool first = true;
    for (std::size_t i = 0; i < n; ++i) {
      for (std::size_t j = 0; j < n; ++j) {
        if (m.at(i, j) == 0) continue;
        out += first ? "\n    {\"from_grade\": " : ",\n    {\"from_grade\": ";
        first = false;
        append_json_string(out, m.row_label(i));
        out += ", \"to_grade\": ";
        append_json_string(out, m.column_label(j));
        out += ", \"obligors\": " + std::to_string(m.at(i, j)) + ", \"row_share\": ";
        append_json_number(out, row_share(m, i, j));
        out += "}";
      }
    }
    out += first ? "]\n}\n" : "\n  ]\n}\n";
    return;
  }
  if (format == OutputFormat::csv) {
    out += "from_run,to_run,from_grade,to_grade,statistic,value\n";
    const std::string runs = std::to_string(m.from.run_id) + "," + std::to_string(m.to.run_id) + ",";
    const auto line = [&](std::string_view from, std::string_view to, std::string_view statistic, double v) {
      out += runs;
      append_csv_text(out, from);
      out += ',';
      append_csv_text(out, to);
      out += ',';
      out += statistic;
      out += ',';
      append_number(out, v);
      out += '\n';
    };
    line("all", "all", "psi", m.psi);
    for (std::size_t i = 0; i < n; ++i) {
      for (std::size_t j = 0; j < n; ++j) {
        if (m.at(i, j) == 0) continue;
        line(m.row_label(i), m.column_label(j), "obligors", static_cast<double>(m.at(i, j)));
        line(m.row_label(i), m.column_label(j), "row_share", row_share(m, i, j));
      }
    }
    return;
  }
  out += "Grade migration: " + run_title(m.from) + " to " + run_title(m.to) + " in " + store_path + "\n";
  out += "Grades on each run's driving PD (one-year): " + grades_on(m.from) + "; " + grades_on(m.to) + "\n";
  if (!m.note.empty()) out += "Note: " + m.note + "\n";
  out += "PSI " + number_text(m.psi, "%.6f") + " (grade distribution of run " + std::to_string(m.to.run_id) +
         " against run " + std::to_string(m.from.run_id) + ")\n";
  out += "\nObligors (rows: grade in run " + std::to_string(m.from.run_id) + ", columns: grade in run " +
         std::to_string(m.to.run_id) + "; new: only in run " + std::to_string(m.to.run_id) +
         ", gone: only in run " + std::to_string(m.from.run_id) + ", ungraded: not scored)\n";
  migration_block(m, false, out);
  out += "\nRow shares %\n";
  migration_block(m, true, out);
  if (m.left_out > 0) {
    out += std::to_string(m.left_out) + " entries without an id, or repeating one, are left out\n";
  }
  out += kTableCaution;
}

}  // namespace firmcall
