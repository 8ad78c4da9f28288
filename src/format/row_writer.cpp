#include "firmcall/format/row_writer.hpp"

#include <cmath>
#include <cstdio>

#include "firmcall/format/cells.hpp"

namespace firmcall {

ReportCell ReportCell::number(double v) {
  if (!std::isfinite(v)) return none();
  return {Kind::number, {}, v, {}};
}

std::string format_cell(double v, CellStyle style) {
  if (!std::isfinite(v)) return "-";
  char buf[64];
  switch (style) {
    case CellStyle::text:
    case CellStyle::integer:
      std::snprintf(buf, sizeof buf, "%.0f", v);
      break;
    case CellStyle::decimal3:
      std::snprintf(buf, sizeof buf, "%.3f", v);
      break;
    case CellStyle::signed3:
      std::snprintf(buf, sizeof buf, "%+.3f", v);
      break;
    case CellStyle::percent_pd: {
      const double p = 100.0 * v;
      if (p == 0.0) {
        std::snprintf(buf, sizeof buf, "0");
      } else if (std::fabs(p) >= 1e-3) {
        std::snprintf(buf, sizeof buf, "%.4f", p);
      } else {
        std::snprintf(buf, sizeof buf, "%.2e", p);
      }
      break;
    }
    case CellStyle::signed_pp: {
      const double p = 100.0 * v;
      if (p == 0.0) {
        std::snprintf(buf, sizeof buf, "0");
      } else if (std::fabs(p) >= 1e-3) {
        std::snprintf(buf, sizeof buf, "%+.4f", p);
      } else {
        std::snprintf(buf, sizeof buf, "%+.1e", p);
      }
      break;
    }
    case CellStyle::ratio:
      std::snprintf(buf, sizeof buf, std::fabs(v) < 1e5 ? "%.2f" : "%.3g", v);
      break;
    case CellStyle::amount:
      std::snprintf(buf, sizeof buf, std::fabs(v) < 1e11 ? "%.2f" : "%.4e", v);
      break;
    case CellStyle::percent:
      std::snprintf(buf, sizeof buf, "%.2f", 100.0 * v);
      break;
  }
  return buf;
}

RowWriter::RowWriter(std::vector<ReportColumn> columns, OutputFormat format)
    : columns_(std::move(columns)), format_(format) {}

namespace {

// Pads (and for text, cuts) `s` to `width`; `cut` false lets text run past the width.
void pad(std::string& out, const std::string& s, int width, bool left, bool cut = true) {
  const auto w = static_cast<std::size_t>(width);
  const std::string t = s.size() > w && left && cut ? fit_text(s, w) : s;
  if (!left && t.size() < w) out.append(w - t.size(), ' ');
  out += t;
  if (left && t.size() < w) out.append(w - t.size(), ' ');
}

// Drops trailing spaces of the last line in `out` from position `from`.
void trim_line(std::string& out, std::size_t from) {
  std::size_t end = out.size();
  while (end > from && out[end - 1] == ' ') --end;
  out.resize(end);
}

}  // namespace

void RowWriter::header(std::string& out) const {
  if (format_ == OutputFormat::csv) {
    bool first = true;
    for (const ReportColumn& c : columns_) {
      if (c.key.empty()) continue;
      if (!first) out.push_back(',');
      first = false;
      out += c.key;
    }
    out.push_back('\n');
    return;
  }
  if (format_ != OutputFormat::table) return;
  for (int line = 0; line < 2; ++line) {
    const std::size_t start = out.size();
    bool first = true;
    for (const ReportColumn& c : columns_) {
      if (c.width == 0) continue;
      if (!first) out.push_back(' ');
      first = false;
      pad(out, line == 0 ? c.title : c.unit, c.width, c.style == CellStyle::text);
    }
    trim_line(out, start);
    out.push_back('\n');
  }
  rule(out);
}

void RowWriter::rule(std::string& out) const {
  if (format_ != OutputFormat::table) return;
  int width = -1;
  for (const ReportColumn& c : columns_) {
    if (c.width > 0) width += c.width + 1;
  }
  out.append(static_cast<std::size_t>(std::max(width, 0)), '-');
  out.push_back('\n');
}

void RowWriter::row(const std::vector<ReportCell>& cells, std::string& out) {
  ++rows_;
  switch (format_) {
    case OutputFormat::table: {
      const std::size_t start = out.size();
      std::size_t last = 0;  // the last table column: its text is not cut
      for (std::size_t i = 0; i < columns_.size(); ++i) {
        if (columns_[i].width > 0) last = i;
      }
      bool first = true;
      for (std::size_t i = 0; i < columns_.size(); ++i) {
        const ReportColumn& c = columns_[i];
        if (c.width == 0) continue;
        if (!first) out.push_back(' ');
        first = false;
        const ReportCell& cell = cells[i];
        const bool left = c.style == CellStyle::text;
        if (cell.kind == ReportCell::Kind::number) {
          pad(out, format_cell(cell.number_value, c.style), c.width, left);
        } else if (cell.kind == ReportCell::Kind::text) {
          pad(out, cell.text_value, c.width, left, i != last);
        } else {
          pad(out, "-", c.width, left);
        }
      }
      trim_line(out, start);
      out.push_back('\n');
      break;
    }
    case OutputFormat::csv: {
      bool first = true;
      for (std::size_t i = 0; i < columns_.size(); ++i) {
        if (columns_[i].key.empty()) continue;
        if (!first) out.push_back(',');
        first = false;
        const ReportCell& cell = cells[i];
        if (cell.kind == ReportCell::Kind::number) append_number(out, cell.number_value);
        if (cell.kind == ReportCell::Kind::text) append_csv_text(out, cell.text_value);
      }
      out.push_back('\n');
      break;
    }
    case OutputFormat::json: {
      if (rows_ > 1) out += ",\n";
      out += json_indent;
      out.push_back('{');
      bool first = true;
      for (std::size_t i = 0; i < columns_.size(); ++i) {
        if (columns_[i].key.empty()) continue;
        if (!first) out += ", ";
        first = false;
        append_json_string(out, columns_[i].key);
        out += ": ";
        const ReportCell& cell = cells[i];
        if (cell.kind == ReportCell::Kind::number) {
          append_json_number(out, cell.number_value);
        } else if (cell.kind == ReportCell::Kind::text) {
          if (cell.json.empty()) {
            append_json_string(out, cell.text_value);
          } else {
            out += cell.json;
          }
        } else {
          out += "null";
        }
      }
      out.push_back('}');
      break;
    }
  }
}

}  // namespace firmcall
