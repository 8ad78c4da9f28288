#include "firmcall/report/svg.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "firmcall/format/cells.hpp"
#include "firmcall/util/utf8.hpp"

namespace firmcall {

namespace {

// A coordinate in SVG units, one decimal.
std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", std::isfinite(v) ? v : 0.0);
  return buf;
}

// Fewest decimals (up to 12) that show multiples of `step` exactly.
int decimals_for(double step) {
  step = std::fabs(step);
  if (!(step > 0.0) || !std::isfinite(step)) return 0;
  for (int d = 0; d < 12; ++d) {
    const double scaled = step * std::pow(10.0, d);
    if (std::fabs(scaled - std::round(scaled)) < 1e-6 * std::max(1.0, scaled)) return d;
  }
  return 12;
}

std::string with_thousands(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, std::fabs(v));
  std::string digits(buf);
  const std::size_t dot = digits.find('.');
  const std::size_t int_end = dot == std::string::npos ? digits.size() : dot;
  std::string out;
  for (std::size_t i = 0; i < int_end; ++i) {
    if (i > 0 && (int_end - i) % 3 == 0) out.push_back(',');
    out.push_back(digits[i]);
  }
  out += digits.substr(int_end);
  const bool zero = out.find_first_not_of("0.,") == std::string::npos;
  return (v < 0.0 && !zero ? "-" : "") + out;
}

}  // namespace

std::string group_thousands(double v, int decimals) {
  return with_thousands(v, decimals);
}

namespace {

double clamp_to(double v, double lo, double hi) {
  return std::min(std::max(v, lo), hi);
}

// Width of a text in SVG units at the chart's 12-unit font (an estimate: 0.58 em a character).
double text_width(std::string_view s, double font = 12.0) {
  return 0.58 * font * static_cast<double>(s.size());
}

bool overlaps(const std::array<double, 4>& a, const std::array<double, 4>& b) {
  return a[0] < b[2] && b[0] < a[2] && a[1] < b[3] && b[1] < a[3];
}

}  // namespace

std::string xml_escape(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  while (!s.empty()) {
    const char c = s.front();
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default: {
        const Utf8Step step = next_utf8(s);
        const std::int32_t cp = step.code_point;
        // Not allowed in XML 1.0 (C0 controls), invisible controls (DEL, C1), text that reorders
        // what follows it (bidirectional controls) and bytes that are not UTF-8 all become U+FFFD.
        const bool control = (cp >= 0 && cp < 0x20 && c != '\t' && c != '\n' && c != '\r') ||
                             (cp >= 0x7F && cp <= 0x9F) || is_bidi_control(cp);
        if (cp < 0 || control) {
          append_replacement_char(out);
        } else {
          out.append(s.substr(0, step.bytes));
        }
        s.remove_prefix(step.bytes);
        continue;
      }
    }
    s.remove_prefix(1);
  }
  return out;
}

std::vector<double> axis_ticks(const SvgAxis& axis, int target) {
  std::vector<double> ticks;
  if (!(axis.max > axis.min) || !std::isfinite(axis.min) || !std::isfinite(axis.max)) return ticks;
  if (axis.log) {
    if (!(axis.min > 0.0)) return ticks;
    const int lo = static_cast<int>(std::ceil(std::log10(axis.min) - 1e-9));
    const int hi = static_cast<int>(std::floor(std::log10(axis.max) + 1e-9));
    const int every = std::max(1, (hi - lo) / std::max(1, target) + 1);
    for (int e = lo; e <= hi; e += every) ticks.push_back(std::pow(10.0, e));
    return ticks;
  }
  const double raw = (axis.max - axis.min) / std::max(1, target);
  const double mag = std::pow(10.0, std::floor(std::log10(raw)));
  double step = 10.0 * mag;
  for (const double m : {1.0, 2.0, 2.5, 5.0, 10.0}) {
    if (m * mag >= raw * (1.0 - 1e-9)) {
      step = m * mag;
      break;
    }
  }
  const double first = std::ceil(axis.min / step - 1e-9) * step;
  for (double t = first; t <= axis.max + 1e-9 * step; t += step) {
    ticks.push_back(std::fabs(t) < 1e-12 * step ? 0.0 : t);
    if (ticks.size() > 64) break;
  }
  return ticks;
}

std::string tick_label(double v, TickFormat format, double step) {
  char buf[64];
  switch (format) {
    case TickFormat::percent: {
      const double p = 100.0 * v;
      if (step == v && v > 0.0) {  // a log axis: powers of ten
        std::snprintf(buf, sizeof buf, "%g%%", p);
        return buf;
      }
      if (p != 0.0 && std::fabs(p) < 1e-3) {
        std::snprintf(buf, sizeof buf, "%.0e%%", p);
        return buf;
      }
      std::snprintf(buf, sizeof buf, "%.*f%%", decimals_for(100.0 * step), p);
      return buf;
    }
    case TickFormat::amount:
      return with_thousands(v, decimals_for(step));
    case TickFormat::plain:
      break;
  }
  if (v != 0.0 && (std::fabs(v) < 1e-4 || std::fabs(v) >= 1e9)) {
    std::snprintf(buf, sizeof buf, "%.0e", v);
    return buf;
  }
  std::snprintf(buf, sizeof buf, "%.*f", decimals_for(step), v);
  return buf;
}

void fit_axis(SvgAxis& axis, const std::vector<double>& values, bool include_zero, double floor) {
  double lo = INFINITY, hi = -INFINITY;
  for (const double v : values) {
    if (!std::isfinite(v) || (axis.log && !(v > 0.0))) continue;
    const double w = axis.log ? std::max(v, floor) : v;
    lo = std::min(lo, w);
    hi = std::max(hi, w);
  }
  if (axis.log) {
    if (!std::isfinite(lo)) lo = hi = floor > 0.0 ? floor : 1e-12;
    axis.min = std::pow(10.0, std::floor(std::log10(lo) + 1e-9));
    axis.max = std::pow(10.0, std::ceil(std::log10(hi) - 1e-9));
    if (!(axis.max > axis.min)) axis.max = axis.min * 10.0;
    return;
  }
  if (!std::isfinite(lo)) lo = hi = 0.0;
  if (include_zero) {
    lo = std::min(lo, 0.0);
    hi = std::max(hi, 0.0);
  }
  if (!(hi > lo)) {
    const double pad = lo == 0.0 ? 1.0 : 0.1 * std::fabs(lo);
    lo -= include_zero && lo >= 0.0 ? 0.0 : pad;
    hi += pad;
  }
  const double pad = 0.04 * (hi - lo);
  if (!(include_zero && lo == 0.0)) lo -= pad;
  if (!(include_zero && hi == 0.0)) hi += pad;
  axis.min = lo;
  axis.max = hi;
  const std::vector<double> ticks = axis_ticks(axis);
  if (ticks.size() >= 2) {
    const double step = ticks[1] - ticks[0];
    axis.min = std::floor(lo / step + 1e-9) * step;
    axis.max = std::ceil(hi / step - 1e-9) * step;
  }
}

SvgPlot::SvgPlot(SvgAxis x, SvgAxis y, std::string title, double width, double height)
    : x_(std::move(x)), y_(std::move(y)), title_(std::move(title)), width_(width), height_(height) {}

namespace {

// Where v lies along an axis, from 0 (min) to 1 (max), held to [0, 1].
double axis_fraction(const SvgAxis& a, double v) {
  const double f =
      a.log ? (std::log10(std::max(v, a.min)) - std::log10(a.min)) / (std::log10(a.max) - std::log10(a.min))
            : (v - a.min) / (a.max - a.min);
  return clamp_to(f, 0.0, 1.0);
}

}  // namespace

double SvgPlot::px(double x) const {
  return left_ + (width_ - left_ - right_) * axis_fraction(x_, x);
}

double SvgPlot::py(double y) const {
  return top_ + (height_ - top_ - bottom_) * (1.0 - axis_fraction(y_, y));
}

void SvgPlot::point(double x, double y, std::string_view css_class, std::string_view tooltip,
                    std::string_view label) {
  if (!std::isfinite(x) || !std::isfinite(y)) return;
  const double cx = px(x), cy = py(y);
  body_ += "<circle class=\"" + xml_escape(css_class) + "\" cx=\"" + num(cx) + "\" cy=\"" + num(cy) +
           "\" r=\"4.5\"><title>" + xml_escape(tooltip) + "</title></circle>\n";
  if (label.empty()) return;
  const double w = text_width(label, 11.0), h = 12.0;
  // Try right, left, above and below the marker; keep the first spot free of earlier labels.
  const std::array<std::array<double, 2>, 6> offsets = {
      {{7.0, 4.0}, {-7.0 - w, 4.0}, {-w / 2, -9.0}, {-w / 2, 16.0}, {7.0, 16.0}, {7.0, -8.0}}};
  std::array<double, 4> box{};
  bool placed = false;
  for (const auto& o : offsets) {
    const double x0 = clamp_to(cx + o[0], left_, width_ - right_ - w);
    const double y1 = clamp_to(cy + o[1], top_ + h, height_ - bottom_);
    box = {x0, y1 - h + 2.0, x0 + w, y1 + 2.0};
    if (std::none_of(label_boxes_.begin(), label_boxes_.end(),
                     [&box](const std::array<double, 4>& b) { return overlaps(box, b); })) {
      placed = true;
      break;
    }
  }
  if (!placed) box = {clamp_to(cx + 7.0, left_, width_ - right_ - w), cy - 6.0, 0.0, 0.0};
  label_boxes_.push_back(box);
  labels_ += "<text class=\"fc-point-label\" x=\"" + num(box[0]) + "\" y=\"" + num(box[1] + h - 2.0) + "\">" +
             xml_escape(label) + "</text>\n";
}

void SvgPlot::line(const std::vector<double>& x, const std::vector<double>& y, std::string_view css_class,
                   std::string_view name, bool markers) {
  std::string pts;
  std::string marks;
  for (std::size_t i = 0; i < x.size() && i < y.size(); ++i) {
    if (!std::isfinite(x[i]) || !std::isfinite(y[i])) continue;
    if (!pts.empty()) pts.push_back(' ');
    pts += num(px(x[i])) + "," + num(py(y[i]));
    if (!markers) continue;
    marks += "<circle class=\"" + xml_escape(css_class) + " fc-mark\" cx=\"" + num(px(x[i])) + "\" cy=\"" +
             num(py(y[i])) + "\" r=\"3\"/>\n";
  }
  if (pts.empty()) return;
  body_ += "<polyline class=\"" + xml_escape(css_class) + " fc-line\" points=\"" + pts + "\"><title>" +
           xml_escape(name) + "</title></polyline>\n" + marks;
}

void SvgPlot::exact_line(const std::vector<double>& x, const std::vector<double>& y,
                         std::string_view css_class, std::string_view name) {
  std::string pts;
  for (std::size_t i = 0; i < x.size() && i < y.size(); ++i) {
    if (!std::isfinite(x[i]) || !std::isfinite(y[i])) continue;
    if (!pts.empty()) pts.push_back(' ');
    append_number(pts, x[i]);
    pts.push_back(',');
    append_number(pts, y[i]);
  }
  if (pts.empty() || x_.log || y_.log || !(x_.max > x_.min) || !(y_.max > y_.min)) return;
  // px(x) = e + a x and py(y) = f + d y on linear axes.
  const double plot_w = width_ - left_ - right_, plot_h = height_ - top_ - bottom_;
  const double a = plot_w / (x_.max - x_.min), d = -plot_h / (y_.max - y_.min);
  const double e = left_ - a * x_.min, f = top_ + plot_h - d * y_.min;
  std::string m = "matrix(";
  append_number(m, a);
  m += " 0 0 ";
  append_number(m, d);
  m.push_back(' ');
  append_number(m, e);
  m.push_back(' ');
  append_number(m, f);
  m.push_back(')');
  body_ += "<polyline class=\"" + xml_escape(css_class) +
           " fc-line\" vector-effect=\"non-scaling-stroke\" transform=\"" + m + "\" points=\"" + pts +
           "\"><title>" + xml_escape(name) + "</title></polyline>\n";
}

void SvgPlot::vline(double x, std::string_view css_class, std::string_view label) {
  if (!std::isfinite(x)) return;
  const double X = px(x);
  body_ += "<line class=\"" + xml_escape(css_class) + "\" x1=\"" + num(X) + "\" y1=\"" + num(top_) +
           "\" x2=\"" + num(X) + "\" y2=\"" + num(height_ - bottom_) + "\"/>\n";
  if (label.empty()) return;
  // Labels of neighbouring markers are staggered downwards so that they do not overlap.
  const double w = text_width(label, 11.0);
  double y = top_ + 12.0;
  const double x0 = X + 4.0 + w > width_ - right_ ? X - 4.0 - w : X + 4.0;
  std::array<double, 4> box{x0, y - 10.0, x0 + w, y + 2.0};
  for (int k = 0; k < 12; ++k) {
    if (std::none_of(label_boxes_.begin(), label_boxes_.end(),
                     [&box](const std::array<double, 4>& b) { return overlaps(box, b); })) {
      break;
    }
    y += 14.0;
    box = {x0, y - 10.0, x0 + w, y + 2.0};
  }
  label_boxes_.push_back(box);
  labels_ += "<text class=\"fc-marker-label " + xml_escape(css_class) + "-text\" x=\"" + num(x0) + "\" y=\"" +
             num(y) + "\">" + xml_escape(label) + "</text>\n";
}

void SvgPlot::hline(double y, std::string_view css_class, std::string_view label) {
  if (!std::isfinite(y)) return;
  const double Y = py(y);
  body_ += "<line class=\"" + xml_escape(css_class) + "\" x1=\"" + num(left_) + "\" y1=\"" + num(Y) +
           "\" x2=\"" + num(width_ - right_) + "\" y2=\"" + num(Y) + "\"/>\n";
  if (label.empty()) return;
  const double w = text_width(label, 11.0);
  labels_ += "<text class=\"fc-marker-label " + xml_escape(css_class) + "-text\" x=\"" +
             num(width_ - right_ - w - 4.0) + "\" y=\"" + num(Y - 4.0) + "\">" + xml_escape(label) +
             "</text>\n";
}

void SvgPlot::legend(std::string_view css_class, std::string_view name) {
  legend_.emplace_back(std::string(css_class), std::string(name));
}

namespace {

// The <svg> element's opening, its title, and the background of the plot area [l, r] x [t, b].
std::string frame(const std::string& title, double width, double height, double l, double t, double r,
                  double b) {
  return "<svg class=\"fc-chart\" viewBox=\"0 0 " + num(width) + " " + num(height) + "\" width=\"" +
         num(width) + "\" height=\"" + num(height) + "\" role=\"img\" aria-label=\"" + xml_escape(title) +
         "\">\n<title>" + xml_escape(title) + "</title>\n<text class=\"fc-chart-title\" x=\"12\" y=\"22\">" +
         xml_escape(title) + "</text>\n<rect class=\"fc-plot-bg\" x=\"" + num(l) + "\" y=\"" + num(t) +
         "\" width=\"" + num(r - l) + "\" height=\"" + num(b - t) + "\"/>\n";
}

std::string legend_block(const std::vector<std::pair<std::string, std::string>>& entries, double right_edge,
                         double top) {
  std::string out;
  double y = top + 14.0;
  double widest = 0.0;
  for (const auto& e : entries) widest = std::max(widest, text_width(e.second, 11.0));
  const double x = right_edge - widest - 26.0;
  if (!entries.empty()) {
    out += "<rect class=\"fc-legend-bg\" x=\"" + num(x - 6.0) + "\" y=\"" + num(top + 2.0) + "\" width=\"" +
           num(widest + 30.0) + "\" height=\"" + num(16.0 * static_cast<double>(entries.size()) + 6.0) +
           "\"/>\n";
  }
  for (const auto& e : entries) {
    out += "<rect class=\"" + xml_escape(e.first) + " fc-key\" x=\"" + num(x) + "\" y=\"" + num(y - 8.0) +
           "\" width=\"14\" height=\"8\"/>\n<text class=\"fc-legend\" x=\"" + num(x + 18.0) + "\" y=\"" +
           num(y) + "\">" + xml_escape(e.second) + "</text>\n";
    y += 16.0;
  }
  return out;
}

}  // namespace

std::string SvgPlot::str() const {
  const double l = left_, r = width_ - right_, t = top_, b = height_ - bottom_;
  std::string out = frame(title_, width_, height_, l, t, r, b);
  const std::vector<double> xt = axis_ticks(x_, 7), yt = axis_ticks(y_, 6);
  const double xstep = xt.size() >= 2 ? xt[1] - xt[0] : 1.0, ystep = yt.size() >= 2 ? yt[1] - yt[0] : 1.0;
  for (const double v : xt) {
    const double X = px(v);
    out += "<line class=\"fc-grid\" x1=\"" + num(X) + "\" y1=\"" + num(t) + "\" x2=\"" + num(X) + "\" y2=\"" +
           num(b) + "\"/>\n<text class=\"fc-tick\" x=\"" + num(X) + "\" y=\"" + num(b + 16.0) +
           "\" text-anchor=\"middle\">" + xml_escape(tick_label(v, x_.format, x_.log ? v : xstep)) +
           "</text>\n";
  }
  for (const double v : yt) {
    const double Y = py(v);
    out += "<line class=\"fc-grid\" x1=\"" + num(l) + "\" y1=\"" + num(Y) + "\" x2=\"" + num(r) + "\" y2=\"" +
           num(Y) + "\"/>\n<text class=\"fc-tick\" x=\"" + num(l - 6.0) + "\" y=\"" + num(Y + 4.0) +
           "\" text-anchor=\"end\">" + xml_escape(tick_label(v, y_.format, y_.log ? v : ystep)) + "</text>\n";
  }
  out += "<path class=\"fc-axis\" d=\"M" + num(l) + " " + num(t) + " V" + num(b) + " H" + num(r) + "\"/>\n";
  out += "<text class=\"fc-axis-title\" x=\"" + num((l + r) / 2) + "\" y=\"" + num(height_ - 12.0) +
         "\" text-anchor=\"middle\">" + xml_escape(x_.label) + "</text>\n";
  out += "<text class=\"fc-axis-title\" transform=\"translate(16 " + num((t + b) / 2) +
         ") rotate(-90)\" text-anchor=\"middle\">" + xml_escape(y_.label) + "</text>\n";
  out += body_;
  out += labels_;
  out += legend_block(legend_, r - 4.0,
                      legend_bottom_ ? b - 16.0 * static_cast<double>(legend_.size()) - 12.0 : t);
  out += "</svg>\n";
  return out;
}

// Horizontal grid lines and tick labels of the value axis `y` between x = l and x = r, at the
// heights `py` gives (a log axis labels each tick by its own value, a linear one by the step).
template <class Py>
void append_value_grid(std::string& out, const SvgAxis& y, double l, double r, const Py& py) {
  const std::vector<double> yt = axis_ticks(y, 6);
  const double ystep = yt.size() >= 2 ? yt[1] - yt[0] : 1.0;
  for (const double v : yt) {
    out += "<line class=\"fc-grid\" x1=\"" + num(l) + "\" y1=\"" + num(py(v)) + "\" x2=\"" + num(r) +
           "\" y2=\"" + num(py(v)) + "\"/>\n<text class=\"fc-tick\" x=\"" + num(l - 6.0) + "\" y=\"" +
           num(py(v) + 4.0) + "\" text-anchor=\"end\">" +
           xml_escape(tick_label(v, y.format, y.log ? v : ystep)) + "</text>\n";
  }
}

std::string svg_bar_chart(const std::vector<std::string>& categories, const std::vector<BarSeries>& series,
                          const std::string& x_label, SvgAxis y, const std::string& title, double width,
                          double height) {
  const double l = 78.0, r = width - 24.0, t = 40.0, b = height - 56.0;
  std::vector<double> all;
  for (const BarSeries& s : series) all.insert(all.end(), s.values.begin(), s.values.end());
  fit_axis(y, all, true);
  const auto py = [&](double v) { return b - (b - t) * axis_fraction(y, v); };
  std::string out = frame(title, width, height, l, t, r, b);
  append_value_grid(out, y, l, r, py);
  const double n = static_cast<double>(std::max<std::size_t>(1, categories.size()));
  const double group = (r - l) / n;
  const double bar = group * 0.78 / static_cast<double>(std::max<std::size_t>(1, series.size()));
  for (std::size_t c = 0; c < categories.size(); ++c) {
    const double g0 = l + group * static_cast<double>(c) + group * 0.11;
    for (std::size_t s = 0; s < series.size(); ++s) {
      const double v = c < series[s].values.size() ? series[s].values[c] : 0.0;
      if (!std::isfinite(v)) continue;
      const double x = g0 + bar * static_cast<double>(s);
      const double y0 = py(std::max(v, 0.0)), y1 = py(std::min(v, 0.0));
      std::string tip = categories[c] + ", " + series[s].name;
      if (c < series[s].value_labels.size()) tip += ": " + series[s].value_labels[c];
      out += "<rect class=\"" + xml_escape(series[s].css_class) + "\" x=\"" + num(x) + "\" y=\"" + num(y0) +
             "\" width=\"" + num(bar * 0.94) + "\" height=\"" + num(std::max(0.0, y1 - y0)) + "\"><title>" +
             xml_escape(tip) + "</title></rect>\n";
      if (c < series[s].value_labels.size() && !series[s].value_labels[c].empty()) {
        out += "<text class=\"fc-bar-label\" x=\"" + num(x + bar * 0.47) + "\" y=\"" + num(y0 - 4.0) +
               "\" text-anchor=\"middle\">" + xml_escape(series[s].value_labels[c]) + "</text>\n";
      }
    }
    out += "<text class=\"fc-tick\" x=\"" + num(l + group * (static_cast<double>(c) + 0.5)) + "\" y=\"" +
           num(b + 16.0) + "\" text-anchor=\"middle\">" + xml_escape(categories[c]) + "</text>\n";
  }
  out += "<path class=\"fc-axis\" d=\"M" + num(l) + " " + num(t) + " V" + num(b) + " H" + num(r) + "\"/>\n";
  out += "<text class=\"fc-axis-title\" x=\"" + num((l + r) / 2) + "\" y=\"" + num(height - 12.0) +
         "\" text-anchor=\"middle\">" + xml_escape(x_label) + "</text>\n";
  out += "<text class=\"fc-axis-title\" transform=\"translate(16 " + num((t + b) / 2) +
         ") rotate(-90)\" text-anchor=\"middle\">" + xml_escape(y.label) + "</text>\n";
  std::vector<std::pair<std::string, std::string>> keys;
  if (series.size() > 1) {
    for (const BarSeries& s : series) keys.emplace_back(s.css_class, s.name);
  }
  out += legend_block(keys, r - 4.0, t);
  out += "</svg>\n";
  return out;
}

namespace {

std::string exact(double v) {
  std::string s;
  append_number(s, v);
  return s;
}

}  // namespace

std::string svg_interval_chart(const std::vector<std::string>& categories,
                               const std::vector<IntervalMark>& marks, const std::string& x_label, SvgAxis y,
                               const std::string& title, const std::string& predicted_name,
                               const std::string& observed_name, double width, double height) {
  const double l = 78.0, r = width - 24.0, t = 40.0, b = height - 56.0;
  std::vector<double> all;
  for (const IntervalMark& m : marks) all.insert(all.end(), {m.predicted, m.observed, m.lower, m.upper});
  const double floor = y.log && y.min > 0.0 ? y.min : 1e-12;
  fit_axis(y, all, !y.log, floor);
  const auto py = [&](double v) { return b - (b - t) * axis_fraction(y, v); };
  std::string out = frame(title, width, height, l, t, r, b);
  append_value_grid(out, y, l, r, py);
  const double n = static_cast<double>(std::max<std::size_t>(1, categories.size()));
  const double group = (r - l) / n;
  for (std::size_t c = 0; c < categories.size() && c < marks.size(); ++c) {
    const IntervalMark& m = marks[c];
    const double x = l + group * (static_cast<double>(c) + 0.5);
    out += "<g class=\"fc-interval-mark\" data-category=\"" + xml_escape(categories[c]) +
           "\" data-predicted=\"" + exact(m.predicted) + "\" data-observed=\"" + exact(m.observed) +
           "\" data-lower=\"" + exact(m.lower) + "\" data-upper=\"" + exact(m.upper) + "\">\n<title>" +
           xml_escape(m.tooltip) + "</title>\n";
    if (std::isfinite(m.lower) && std::isfinite(m.upper)) {
      const double y0 = py(m.lower), y1 = py(m.upper);
      out += "<line class=\"fc-whisker\" x1=\"" + num(x) + "\" y1=\"" + num(y0) + "\" x2=\"" + num(x) +
             "\" y2=\"" + num(y1) + "\"/>\n";
      for (const double yy : {y0, y1}) {
        out += "<line class=\"fc-whisker\" x1=\"" + num(x - 5.0) + "\" y1=\"" + num(yy) + "\" x2=\"" +
               num(x + 5.0) + "\" y2=\"" + num(yy) + "\"/>\n";
      }
    }
    if (std::isfinite(m.predicted)) {
      out += "<rect class=\"fc-predicted\" x=\"" + num(x - 12.0) + "\" y=\"" + num(py(m.predicted) - 4.0) +
             "\" width=\"8\" height=\"8\"/>\n";
    }
    if (std::isfinite(m.observed)) {
      out += "<circle class=\"fc-observed\" cx=\"" + num(x) + "\" cy=\"" + num(py(m.observed)) +
             "\" r=\"4.5\"/>\n";
    }
    out += "</g>\n<text class=\"fc-tick\" x=\"" + num(x) + "\" y=\"" + num(b + 16.0) +
           "\" text-anchor=\"middle\">" + xml_escape(categories[c]) + "</text>\n";
  }
  out += "<path class=\"fc-axis\" d=\"M" + num(l) + " " + num(t) + " V" + num(b) + " H" + num(r) + "\"/>\n";
  out += "<text class=\"fc-axis-title\" x=\"" + num((l + r) / 2) + "\" y=\"" + num(height - 12.0) +
         "\" text-anchor=\"middle\">" + xml_escape(x_label) + "</text>\n";
  out += "<text class=\"fc-axis-title\" transform=\"translate(16 " + num((t + b) / 2) +
         ") rotate(-90)\" text-anchor=\"middle\">" + xml_escape(y.label) + "</text>\n";
  // Bottom right: weak grades (right) sit high, strong ones (left) low.
  out += legend_block({{"fc-predicted", predicted_name}, {"fc-observed", observed_name}}, r - 4.0, b - 44.0);
  out += "</svg>\n";
  return out;
}

std::string svg_signed_bars(const std::vector<std::string>& categories, const std::vector<double>& values,
                            const std::vector<std::string>& value_labels, SvgAxis x, const std::string& title,
                            bool positive_is_worse, double width, const std::vector<std::string>& tooltips) {
  const double row = 22.0;
  const double l = 200.0, r = width - 170.0, t = 40.0;
  const double b = t + row * static_cast<double>(std::max<std::size_t>(1, categories.size()));
  const double height = b + 74.0;
  fit_axis(x, values, true);
  const auto px = [&](double v) { return l + (r - l) * axis_fraction(x, v); };
  std::string out = frame(title, width, height, l, t, r, b);
  const std::vector<double> xt = axis_ticks(x, 6);
  const double xstep = xt.size() >= 2 ? xt[1] - xt[0] : 1.0;
  for (const double v : xt) {
    out += "<line class=\"fc-grid\" x1=\"" + num(px(v)) + "\" y1=\"" + num(t) + "\" x2=\"" + num(px(v)) +
           "\" y2=\"" + num(b) + "\"/>\n<text class=\"fc-tick\" x=\"" + num(px(v)) + "\" y=\"" +
           num(b + 16.0) + "\" text-anchor=\"middle\">" + xml_escape(tick_label(v, x.format, xstep)) +
           "</text>\n";
  }
  const double zero = px(0.0);
  for (std::size_t i = 0; i < categories.size(); ++i) {
    const double v = i < values.size() ? values[i] : NAN;
    const double y = t + row * static_cast<double>(i);
    out += "<text class=\"fc-tick\" x=\"" + num(l - 6.0) + "\" y=\"" + num(y + row * 0.68) +
           "\" text-anchor=\"end\">" + xml_escape(categories[i]) + "</text>\n";
    if (!std::isfinite(v)) continue;
    const double x0 = std::min(zero, px(v)), x1 = std::max(zero, px(v));
    const std::string label = i < value_labels.size() ? value_labels[i] : std::string();
    out += "<rect class=\"" +
           std::string((v >= 0.0) == positive_is_worse ? "fc-bar-worse" : "fc-bar-better") + "\" x=\"" +
           num(x0) + "\" y=\"" + num(y + 4.0) + "\" width=\"" + num(std::max(0.5, x1 - x0)) + "\" height=\"" +
           num(row - 8.0) + "\"><title>" +
           xml_escape((i < tooltips.size() && !tooltips[i].empty() ? tooltips[i] : categories[i]) + ": " +
                      label) +
           "</title></rect>\n";
    if (!label.empty()) {
      // Beside the bar's right end (for bars left of zero, right of the zero line), clear of the names.
      out += "<text class=\"fc-bar-label\" x=\"" + num(std::max(x1, zero) + 4.0) + "\" y=\"" +
             num(y + row * 0.68) + "\">" + xml_escape(label) + "</text>\n";
    }
  }
  out += "<line class=\"fc-zero\" x1=\"" + num(zero) + "\" y1=\"" + num(t) + "\" x2=\"" + num(zero) +
         "\" y2=\"" + num(b) + "\"/>\n";
  out += "<path class=\"fc-axis\" d=\"M" + num(l) + " " + num(b) + " H" + num(r) + "\"/>\n";
  out += "<text class=\"fc-axis-title\" x=\"" + num((l + r) / 2) + "\" y=\"" + num(b + 40.0) +
         "\" text-anchor=\"middle\">" + xml_escape(x.label) + "</text>\n";
  // The key says in words which side is worse: the meaning is never carried by colour alone (the
  // worse bars are also solid, the better ones outlined and dashed; fc-bar-* in the page's CSS).
  const std::string worse_side = positive_is_worse ? "right" : "left";
  const std::string better_side = positive_is_worse ? "left" : "right";
  const double ky = height - 12.0;
  out += "<rect class=\"fc-bar-worse fc-key\" x=\"" + num(l) + "\" y=\"" + num(ky - 9.0) +
         "\" width=\"14\" height=\"10\"/>\n<text class=\"fc-legend\" x=\"" + num(l + 18.0) + "\" y=\"" +
         num(ky) + "\">worse (bar to the " + worse_side + " of zero, solid)</text>\n";
  const double kx =
      l + 18.0 + text_width("worse (bar to the " + worse_side + " of zero, solid)", 11.0) + 24.0;
  out += "<rect class=\"fc-bar-better fc-key\" x=\"" + num(kx) + "\" y=\"" + num(ky - 9.0) +
         "\" width=\"14\" height=\"10\"/>\n<text class=\"fc-legend\" x=\"" + num(kx + 18.0) + "\" y=\"" +
         num(ky) + "\">better (bar to the " + better_side + " of zero, outlined)</text>\n";
  out += "</svg>\n";
  return out;
}

}  // namespace firmcall
