// A small writer of charts as inline SVG for the HTML report (html_report.hpp): plot frames with
// linear or logarithmic axes, ticks and grid lines, points with labels, lines, vertical markers, and
// grouped or signed bar charts. The output is well-formed XML (every element closed, attributes
// quoted, text escaped) with no scripts, fonts or links; the look comes from CSS classes that the
// page defines (fc-*), so the charts also print in black and white.
//
// **Example**:
//   firmcall::SvgPlot plot({.label = "leverage DP/V", .min = 0, .max = 1},
//                          {.label = "distance to default (standard deviations)", .min = 0, .max = 8},
//                          "Distance to default against leverage");
//   plot.point(0.42, 4.77, "fc-dot", "ALD-01: DD 4.77", "");
//   std::string svg = plot.str();
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace firmcall {

/// `s` with &, <, >, " and ' replaced by entities; controls below 0x20 other than tab and line
/// breaks (not allowed in XML 1.0), DEL, the C1 controls, the bidirectional embedding, override and
/// isolate controls, and each byte that is not well-formed UTF-8 become U+FFFD, so the page stays
/// UTF-8 and reads in its own order.
std::string xml_escape(std::string_view s);

/// How tick labels are written.
enum class TickFormat : std::uint8_t {
  plain,    ///< as few decimals as the tick step needs
  percent,  ///< a probability shown in percent: 0.05 -> "5%", 1e-5 -> "0.001%"
  amount,   ///< thousands separators: 12500 -> "12,500"
};

/// One axis of a plot. With `log`, min and max must be positive; ticks fall on powers of ten.
struct SvgAxis {
  std::string label;  ///< with its unit, e.g. "PD (percent, log scale)"
  double min = 0.0;
  double max = 1.0;
  bool log = false;
  TickFormat format = TickFormat::plain;
};

/// Tick positions: "nice" steps (1, 2, 2.5 or 5 times a power of ten) covering [min, max] with about
/// `target` ticks; on a log axis, the powers of ten within [min, max].
std::vector<double> axis_ticks(const SvgAxis& axis, int target = 6);
/// A tick label in the axis's format.
std::string tick_label(double v, TickFormat format, double step);

/// An axis range padded to nice bounds that holds every value of `values` (finite ones; positive
/// ones on a log axis); `floor` keeps a log axis from reaching below it.
void fit_axis(SvgAxis& axis, const std::vector<double>& values, bool include_zero, double floor = 1e-12);

/// A plot with numeric x and y axes.
class SvgPlot {
 public:
  SvgPlot(SvgAxis x, SvgAxis y, std::string title, double width = 720.0, double height = 400.0);

  /// A marker at (x, y) with a CSS class, a tooltip (SVG title) and an optional visible label.
  /// Points outside the axes are drawn at the edge.
  void point(double x, double y, std::string_view css_class, std::string_view tooltip,
             std::string_view label);
  /// A polyline through the points (x[i], y[i]), with a marker at each point when `markers`;
  /// non-finite points are skipped.
  void line(const std::vector<double>& x, const std::vector<double>& y, std::string_view css_class,
            std::string_view name, bool markers = true);
  /// A polyline through (x[i], y[i]) written in the axes' own units (both axes linear): the points
  /// are the values themselves in shortest round-trip form, placed on the plot by a transform, so
  /// a reader of the page gets the curve exactly; drawn without markers, not held to the axes.
  void exact_line(const std::vector<double>& x, const std::vector<double>& y, std::string_view css_class,
                  std::string_view name);
  /// A vertical marker at x with a label at its top.
  void vline(double x, std::string_view css_class, std::string_view label);
  /// A horizontal reference line at y with a label at its right end.
  void hline(double y, std::string_view css_class, std::string_view label);
  /// A legend entry (drawn in order, top right, or bottom right after legend_at_bottom(true)).
  void legend(std::string_view css_class, std::string_view name);
  void legend_at_bottom(bool bottom) { legend_bottom_ = bottom; }
  /// The whole <svg> element.
  std::string str() const;

  /// Position of a value in SVG units (inside the plot area).
  double px(double x) const;
  double py(double y) const;

 private:
  SvgAxis x_, y_;
  std::string title_;
  double width_, height_;
  double left_ = 78.0, right_ = 24.0, top_ = 40.0, bottom_ = 56.0;
  std::string body_;
  std::string labels_;
  bool legend_bottom_ = false;  ///< drawn above the markers
  std::vector<std::pair<std::string, std::string>> legend_;
  std::vector<std::array<double, 4>>
      label_boxes_;  ///< labels placed so far (x0, y0, x1, y1), to avoid overlaps
};

/// One series of a bar chart.
struct BarSeries {
  std::string name;       ///< legend text
  std::string css_class;  ///< e.g. "fc-bar-base"
  std::vector<double> values;
  std::vector<std::string> value_labels;  ///< text above each bar (empty: none)
};

/// Vertical bars, one group per category with one bar per series, on a linear y axis from 0.
std::string svg_bar_chart(const std::vector<std::string>& categories, const std::vector<BarSeries>& series,
                          const std::string& x_label, SvgAxis y, const std::string& title,
                          double width = 720.0, double height = 360.0);

/// Horizontal bars for signed values, one row per category, from a zero line; `value_labels` are
/// written beside the bars' ends. Bars on the worse side (positive values, or negative ones when
/// `positive_is_worse` is false) get class fc-bar-worse, the others fc-bar-better; a key under the
/// axis says in words which side is worse. `tooltips` (per category, e.g. the full name where the
/// category is cut to fit) replace the category in the bars' tooltips.
std::string svg_signed_bars(const std::vector<std::string>& categories, const std::vector<double>& values,
                            const std::vector<std::string>& value_labels, SvgAxis x, const std::string& title,
                            bool positive_is_worse = true, double width = 720.0,
                            const std::vector<std::string>& tooltips = {});

/// One category of an interval chart: a predicted value, an observed value and its interval.
struct IntervalMark {
  double predicted = 0.0;
  double observed = 0.0;
  double lower = 0.0;
  double upper = 0.0;
  std::string tooltip;
};

/// One column per category on a y axis (log or linear): a square at the predicted value, a dot at
/// the observed value and a whisker from lower to upper. Values below a log axis are drawn on its
/// bottom edge. Each category is a group (class fc-interval-mark) carrying its values in
/// shortest round-trip form (data-category, data-predicted, data-observed, data-lower,
/// data-upper), so the exact figures can be read off the page.
std::string svg_interval_chart(const std::vector<std::string>& categories,
                               const std::vector<IntervalMark>& marks, const std::string& x_label, SvgAxis y,
                               const std::string& title, const std::string& predicted_name,
                               const std::string& observed_name, double width = 720.0, double height = 400.0);

/// `v` with `decimals` decimals and commas between thousands: 1234567.5 -> "1,234,567.50".
std::string group_thousands(double v, int decimals);

}  // namespace firmcall
