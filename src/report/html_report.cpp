#include "firmcall/report/html_report.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numeric>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/estimate/calibration.hpp"
#include "firmcall/format/cells.hpp"
#include "firmcall/format/row_writer.hpp"
#include "firmcall/model/normal.hpp"
#include "firmcall/model/pd_horizon.hpp"
#include "firmcall/monitor/store_outcomes.hpp"
#include "firmcall/report/svg.hpp"

namespace firmcall {

namespace {

constexpr std::size_t kRocChartPoints = 400;  // points of the ROC chart at most (about)
constexpr const char* kChartCaution =
    " Model estimates under the Merton assumptions; not a credit decision on their own.";

std::string h(std::string_view s) {
  return xml_escape(s);
}

std::string fixed(double v, int decimals) {
  if (!std::isfinite(v)) return "-";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  return buf;
}

std::string count(std::size_t n) {
  return group_thousands(static_cast<double>(n), 0);
}

std::string pp(double change) {
  return std::isfinite(change) ? format_cell(change, CellStyle::signed_pp) + " pp" : "-";
}

std::string level_text(double level) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g%%", 100.0 * level);
  return buf;
}

std::string plain(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g", v);
  return buf;
}

const std::string& id_of(const ObligorRecord& rec) {
  return rec.get(TextField::id);
}

// "ALD-01 Alder Freight Lines" in full, for tooltips (never cut).
std::string full_name(const ObligorRecord& rec) {
  std::string s = id_of(rec);
  if (!rec.get(TextField::name).empty()) s.append(" ").append(rec.get(TextField::name));
  return s;
}

// The full name cut to `width` characters, for chart labels (the tooltip keeps it whole).
std::string short_name(const ObligorRecord& rec, std::size_t width = 28) {
  return fit_text(full_name(rec), width);
}

// A table: header cells, then rows; cells whose text starts with '\x01' are numbers (right-aligned).
class HtmlTable {
 public:
  HtmlTable(std::string css_class, std::vector<std::string> heads)
      : css_class_(std::move(css_class)), heads_(std::move(heads)) {}
  // `attributes`: per cell, attribute text already escaped (" data-value=\"0.1\""), or empty.
  void row(const std::vector<std::string>& cells, bool numeric_from_second, std::string_view row_class = "",
           const std::vector<std::string>& attributes = {}) {
    rows_ += row_class.empty() ? "<tr>" : "<tr class=\"" + h(row_class) + "\">";
    for (std::size_t i = 0; i < cells.size(); ++i) {
      const bool numeric = numeric_from_second && i >= numeric_start_ && i < numeric_end_;
      const std::string attr = i < attributes.size() ? attributes[i] : std::string();
      rows_ += numeric ? "<td class=\"fc-num\"" + attr + ">" : "<td" + attr + ">";
      rows_ += h(cells[i]) + "</td>";
    }
    rows_ += "</tr>\n";
  }
  void numeric_from(std::size_t column, std::size_t end = 999) {
    numeric_start_ = column;
    numeric_end_ = end;
  }
  std::string str() const {
    std::string out = "<table class=\"" + h(css_class_) + "\">\n<thead><tr>";
    for (std::size_t i = 0; i < heads_.size(); ++i) {
      out += i >= numeric_start_ && i < numeric_end_ ? "<th class=\"fc-num\">" : "<th>";
      out += h(heads_[i]) + "</th>";
    }
    return out + "</tr></thead>\n<tbody>\n" + rows_ + "</tbody>\n</table>\n";
  }

 private:
  std::string css_class_;
  std::vector<std::string> heads_;
  std::string rows_;
  std::size_t numeric_start_ = 1;
  std::size_t numeric_end_ = 999;
};

std::string figure(const std::string& svg, const std::string& caption) {
  return "<figure class=\"fc-figure\">\n" + svg + "<figcaption>" + h(caption) + h(kChartCaution) +
         "</figcaption>\n</figure>\n";
}

std::string card(const std::string& label, const std::string& value, const std::string& note) {
  return "<div class=\"fc-card\"><div class=\"fc-card-label\">" + h(label) +
         "</div><div class=\"fc-card-value\">" + h(value) + "</div><div class=\"fc-card-note\">" + h(note) +
         "</div></div>\n";
}

std::string section_open(const std::string& id, const std::string& title, const std::string& lead) {
  return "<section id=\"" + id + "\" class=\"fc-section\">\n<h2>" + h(title) +
         "</h2>\n<p class=\"fc-lead\">" + h(lead) + "</p>\n";
}

// A number in shortest round-trip form, for data- attributes (empty when not finite).
std::string exact(double v) {
  std::string out;
  append_number(out, v);
  return out;
}

bool calibrated_drives(const ReportData& d) {
  return d.calibration != nullptr && d.options.driving_pd == DrivingPd::calibrated;
}

// The currency of the book-wide sums of EAD and expected loss: the portfolio run's reporting
// currency (each EAD at its FX rate) when there is one, else the book's one currency. `usable` is
// false for a book in several currencies without a portfolio run: its EADs do not add up.
struct TotalsCurrency {
  std::string code;  // "" when no obligor states a currency
  bool usable = true;
  std::string note;  // for the cards
};

TotalsCurrency totals_currency(const ReportData& d) {
  TotalsCurrency c;
  if (d.portfolio) {
    const PortfolioResult& run = *d.portfolio;
    c.code = run.reporting_currency;
    c.note = c.code.empty() ? std::string("in the book's unit (no currency stated)") : "in " + c.code;
    if (!run.fx_origin.empty()) c.note += " at the rates of " + run.fx_origin + " as of " + run.fx_as_of;
    return c;
  }
  const std::vector<std::string> all = book_currencies(d.book, d.config.score);
  if (all.size() <= 1) {
    c.code = all.empty() ? std::string() : all.front();
    c.note = c.code.empty() ? std::string("in the book's unit (no currency stated)") : "in " + c.code;
    return c;
  }
  c.usable = false;
  c.note = "not added up: the book is in " + count(all.size()) +
           " currencies (the portfolio section with FX rates gives the total)";
  return c;
}

// The rate of obligor i to the totals' currency (1 without a portfolio run).
double totals_rate(const ReportData& d, std::size_t i) {
  return d.portfolio ? d.portfolio->scenarios.front().obligors[i].fx_rate : 1.0;
}

// Book-wide figures over the scored obligors.
struct BookFigures {
  std::size_t obligors = 0, scored = 0, invalid = 0, not_converged = 0;
  std::size_t with_ead = 0;
  double ead_total = 0.0;
  double ead_weighted_pd = NAN;
  double mean_pd = NAN;
  double expected_loss = 0.0;
  std::size_t above_threshold = 0;
};

BookFigures book_figures(const ReportData& d) {
  BookFigures f;
  f.obligors = d.scored.size();
  double pd_sum = 0.0, ead_pd = 0.0;
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    const ScoredObligor& s = d.scored[i];
    if (s.status == RowStatus::invalid_input) ++f.invalid;
    if (s.status == RowStatus::not_converged) ++f.not_converged;
    if (s.status != RowStatus::ok) continue;
    ++f.scored;
    const double pd = driving_pd_of(d, i);
    pd_sum += pd;
    if (pd > d.config.stress.pd_threshold) ++f.above_threshold;
    if (!s.resolved.has_ead) continue;
    ++f.with_ead;
    const double ead = s.resolved.ead * totals_rate(d, i);
    f.ead_total += ead;
    ead_pd += ead * pd;
    f.expected_loss += pd * s.resolved.lgd * ead;
  }
  if (f.scored > 0) f.mean_pd = pd_sum / static_cast<double>(f.scored);
  if (f.ead_total > 0.0) f.ead_weighted_pd = ead_pd / f.ead_total;
  if (!totals_currency(d).usable) f.ead_total = f.ead_weighted_pd = f.expected_loss = NAN;
  return f;
}

// ---------------------------------------------------------------------------------------------
// Sections

// The obligors not scored with the reason (empty when every obligor was scored).
std::string not_scored_table(const ReportData& d) {
  std::vector<std::size_t> failed;
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    if (d.scored[i].status != RowStatus::ok) failed.push_back(i);
  }
  if (failed.empty()) return {};
  HtmlTable t("fc-table fc-failed", {"obligor", "status", "why"});
  t.numeric_from(99);
  for (const std::size_t i : failed) {
    t.row({id_of(d.book.obligors[i]), std::string(to_string(d.scored[i].status)), d.scored[i].message},
          false);
  }
  return "<h3>Not scored (" + count(failed.size()) + ")</h3>\n" + t.str();
}

}  // namespace

std::string report_lead_counts(const ReportData& d) {
  std::vector<std::size_t> failed;
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    if (d.scored[i].status != RowStatus::ok) failed.push_back(i);
  }
  const std::size_t total = d.scored.size();
  std::string out = count(total - failed.size());
  out.append(" of ").append(count(total)).append(total == 1 ? " obligor scored; " : " obligors scored; ");
  if (failed.empty()) return out.append("none failed");
  out.append(count(failed.size())).append(" failed: ");
  constexpr std::size_t kNamed = 5;
  for (std::size_t k = 0; k < failed.size() && k < kNamed; ++k) {
    const std::size_t i = failed[k];
    const std::string& id = id_of(d.book.obligors[i]);
    out.append(k > 0 ? ", " : "").append(id.empty() ? "(no id)" : id);
    out.append(" (").append(to_string(d.scored[i].status)).append(")");
  }
  if (failed.size() > kNamed) out.append(" and ").append(count(failed.size() - kNamed)).append(" more");
  return out;
}

namespace {

std::string summary_section(const ReportData& d, const BookFigures& f) {
  const GradeScale& scale = d.config.grades;
  std::string lead = report_lead_counts(d);
  lead.append(" (")
      .append(d.book.origin)
      .append(f.scored < f.obligors ? "; the reasons are under Not scored)" : ")");
  lead.append(". Each obligor is scored with the Merton model at its own horizon");
  if (!d.book.as_of.empty()) lead.append(", figures as of ").append(d.book.as_of);
  lead.append("; PDs, grades and expected loss on the ")
      .append(calibrated_drives(d) ? "calibrated PD (one-year, over each obligor's horizon for expected loss)"
                                   : "model PD over each obligor's horizon")
      .append(".");
  std::string out = section_open("summary", "Book summary", lead);
  out += "<div class=\"fc-cards\">\n";
  out += card("obligors", count(f.obligors),
              count(f.scored) + " scored, " + count(f.invalid) + " invalid input, " + count(f.not_converged) +
                  " not converged");
  out += card("exposure-weighted PD", std::isfinite(f.ead_weighted_pd) ? report_pd(f.ead_weighted_pd) : "-",
              "sum of EAD x PD over sum of EAD; " + count(f.with_ead) + " obligors give ead");
  out +=
      card("mean PD", std::isfinite(f.mean_pd) ? report_pd(f.mean_pd) : "-", "simple mean over scored names");
  const TotalsCurrency currency = totals_currency(d);
  out += card("total EAD", std::isfinite(f.ead_total) ? report_amount(f.ead_total) : "-",
              "exposure at default, " + currency.note);
  out += card("expected loss", std::isfinite(f.expected_loss) ? report_amount(f.expected_loss) : "-",
              "sum of PD x LGD x EAD, over each obligor's horizon, " + currency.note);
  out += card("PD above " + level_text(d.config.stress.pd_threshold), count(f.above_threshold),
              "names over the stress PD threshold");
  out += "</div>\n";
  // With no obligor scored there are no name tables: the reasons go here.
  if (f.scored == 0) out += not_scored_table(d);

  // PD distribution by grade.
  const std::size_t grades = scale.bands.size();
  std::vector<double> names(grades, 0.0), ead(grades, 0.0), ead_pd(grades, 0.0);
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    const ScoredObligor& s = d.scored[i];
    if (s.status != RowStatus::ok) continue;
    const int g = driving_grade_of(d, i);
    if (g < 0) continue;
    const auto gi = static_cast<std::size_t>(g);
    names[gi] += 1.0;
    if (s.resolved.has_ead) {
      ead[gi] += s.resolved.ead * totals_rate(d, i);
      ead_pd[gi] += s.resolved.ead * totals_rate(d, i) * driving_pd_of(d, i);
    }
  }
  std::vector<std::string> labels, value_labels;
  for (std::size_t g = 0; g < grades; ++g) {
    labels.push_back(scale.bands[g].label);
    value_labels.push_back(names[g] > 0.0 ? fixed(names[g], 0) : "");
  }
  SvgAxis y{.label = "obligors (count)", .min = 0, .max = 1, .log = false, .format = TickFormat::plain};
  const std::string chart =
      svg_bar_chart(labels, {{"obligors", "fc-bar-base", names, value_labels}},
                    "grade on the master scale (best on the left)", y, "Obligors by grade");
  out += figure(
      chart,
      "Each bar counts the scored obligors whose one-year PD falls in a grade's band (table below). A book "
      "leaning to the right holds more weak names; compare the EAD column to see where the money is.");
  HtmlTable t("fc-table",
              {"grade", "PD band", "obligors", currency.code.empty() ? "EAD" : "EAD (" + currency.code + ")",
               "share of EAD", "exposure-weighted PD"});
  t.numeric_from(2);
  double lower = 0.0;
  for (std::size_t g = 0; g < grades; ++g) {
    const std::string band =
        (g == 0 ? "up to " : "above " + level_text(lower) + " to ") + level_text(scale.bands[g].max_pd);
    lower = scale.bands[g].max_pd;
    const bool sums = currency.usable;
    t.row({scale.bands[g].label, band, fixed(names[g], 0), sums ? report_amount(ead[g]) : "-",
           sums && f.ead_total > 0.0 ? fixed(100.0 * ead[g] / f.ead_total, 1) + "%" : "-",
           sums && ead[g] > 0.0 ? report_pd(ead_pd[g] / ead[g]) : "-"},
          true);
  }
  out += t.str();
  return out + "</section>\n";
}

std::string scatter_section(const ReportData& d) {
  const double threshold = d.config.stress.pd_threshold;
  const GradeScale& scale = d.config.grades;
  std::string out = section_open(
      "dd-leverage", "Distance to default against leverage",
      "Leverage is the default point over the implied asset value (DP/V); distance to default is how many "
      "standard deviations of asset value lie between the assets and the default point at the horizon.");
  std::vector<std::size_t> ok;
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    if (d.scored[i].status == RowStatus::ok) ok.push_back(i);
  }
  // Very large books: the 2,000 weakest names are drawn (said in the caption).
  constexpr std::size_t kMaxPoints = 2000;
  std::stable_sort(ok.begin(), ok.end(), [&](std::size_t a, std::size_t b) {
    return d.scored[a].measures.pd > d.scored[b].measures.pd;
  });
  const std::size_t drawn = std::min(ok.size(), kMaxPoints);
  std::vector<double> xs, ys;
  for (std::size_t k = 0; k < drawn; ++k) {
    xs.push_back(d.scored[ok[k]].measures.leverage);
    ys.push_back(d.scored[ok[k]].measures.distance_to_default);
  }
  const double dd_threshold = norm_quantile_upper(threshold);
  ys.push_back(dd_threshold);
  SvgAxis x{.label = "leverage DP/V (ratio)", .min = 0, .max = 1, .log = false, .format = TickFormat::plain};
  SvgAxis y{.label = "distance to default (standard deviations)",
            .min = 0,
            .max = 1,
            .log = false,
            .format = TickFormat::plain};
  xs.push_back(0.0);
  fit_axis(x, xs, true);
  fit_axis(y, ys, true);
  SvgPlot plot(x, y, "Distance to default against leverage", 720.0, 440.0);
  plot.hline(dd_threshold, "fc-ref", "DD at PD " + level_text(threshold));
  std::size_t labelled = 0;
  // Weakest last, so that their markers and labels are drawn on top.
  for (std::size_t k = drawn; k-- > 0;) {
    const ScoredObligor& s = d.scored[ok[k]];
    const ObligorRecord& rec = d.book.obligors[ok[k]];
    const int g = scale.index_of_pd_at(s.measures.pd, s.resolved.inputs.horizon_years);
    const bool distressed = s.measures.pd > threshold;
    const int n = static_cast<int>(scale.bands.size());
    const char* cls = distressed      ? "fc-dot-distressed"
                      : g * 3 < n     ? "fc-dot-strong"
                      : g * 3 < 2 * n ? "fc-dot-middle"
                                      : "fc-dot-weak";
    const std::string tip = full_name(rec) + ": DD " +
                            format_cell(s.measures.distance_to_default, CellStyle::decimal3) + ", DP/V " +
                            fixed(s.measures.leverage, 3) + ", PD " + report_pd(s.measures.pd);
    if (distressed) ++labelled;
    plot.point(s.measures.leverage, s.measures.distance_to_default, cls, tip, distressed ? id_of(rec) : "");
  }
  const int n = static_cast<int>(scale.bands.size());
  plot.legend("fc-dot-strong",
              "grades " + std::string(scale.label_at(0)) + " to " + std::string(scale.label_at((n - 1) / 3)));
  plot.legend("fc-dot-middle", "grades " + std::string(scale.label_at((n + 2) / 3)) + " to " +
                                   std::string(scale.label_at((2 * n - 1) / 3)));
  plot.legend("fc-dot-weak", "grades " + std::string(scale.label_at((2 * n + 2) / 3)) + " and worse");
  plot.legend("fc-dot-distressed", "PD above " + level_text(threshold) + " (labelled)");
  std::string caption =
      "One dot per scored obligor. Names further right carry more debt against their assets; names lower "
      "down are closer to default. Dots below the dashed line have a PD above " +
      level_text(threshold) + " and are labelled with their id (" + count(labelled) + " here).";
  if (drawn < ok.size())
    caption += " Only the " + count(drawn) + " weakest of " + count(ok.size()) + " are drawn.";
  out += figure(plot.str(), caption);
  return out + "</section>\n";
}

// A name row with the calibrated one-year PD beside the model PD (its cell carries the exact PD
// and interval as data-value, data-lower and data-upper).
std::vector<std::string> calibrated_name_row(const ReportData& d, std::size_t i,
                                             std::vector<std::string>& attrs) {
  const ScoredObligor& s = d.scored[i];
  const ObligorRecord& rec = d.book.obligors[i];
  const MertonMeasures& m = s.measures;
  const CalibratedPd& c = d.calibrated[i];
  const bool ead = s.resolved.has_ead;
  const int g = driving_grade_of(d, i);
  const double horizon = s.resolved.inputs.horizon_years;
  attrs.assign(17, std::string());
  attrs[7] = " data-value=\"" + exact(c.pd) + "\" data-lower=\"" + exact(c.lower) + "\" data-upper=\"" +
             exact(c.upper) + "\"";
  return {id_of(rec),
          rec.get(TextField::name),
          rec.get(TextField::sector),
          g >= 0 ? std::string(d.config.grades.label_at(g)) : std::string(),
          format_cell(m.distance_to_default, CellStyle::decimal3),
          fixed(horizon, horizon == std::floor(horizon) ? 0 : 2),
          report_pd(m.pd),
          report_pd(c.pd),
          report_pd(c.lower) + " to " + report_pd(c.upper),
          c.extrapolated ? "yes" : "no",
          report_spread_bp(m.spread_bp),
          fixed(m.leverage, 3),
          report_amount(m.asset_value),
          ead ? report_amount(s.resolved.ead) : "-",
          ead ? report_amount(driving_pd_of(d, i) * s.resolved.lgd * s.resolved.ead) : "-",
          std::string(obligor_currency(rec, d.config.score))};
}

std::vector<std::string> name_row(const ReportData& d, std::size_t i) {
  const ScoredObligor& s = d.scored[i];
  const ObligorRecord& rec = d.book.obligors[i];
  const MertonMeasures& m = s.measures;
  const bool ead = s.resolved.has_ead;
  return {id_of(rec),
          rec.get(TextField::name),
          rec.get(TextField::sector),
          std::string(d.config.grades.label_of_pd_at(m.pd, s.resolved.inputs.horizon_years)),
          format_cell(m.distance_to_default, CellStyle::decimal3),
          report_pd(m.pd),
          report_spread_bp(m.spread_bp),
          fixed(m.leverage, 3),
          report_amount(m.asset_value),
          ead ? report_amount(s.resolved.ead) : "-",
          ead ? report_amount(m.pd * s.resolved.lgd * s.resolved.ead) : "-",
          std::string(obligor_currency(rec, d.config.score))};
}

std::string names_section(const ReportData& d) {
  std::vector<std::size_t> ok;
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    if (d.scored[i].status == RowStatus::ok) ok.push_back(i);
  }
  // Highest driving PD first (the model PD breaks ties of the calibrated one).
  std::stable_sort(ok.begin(), ok.end(), [&](std::size_t a, std::size_t b) {
    const double pa = driving_pd_of(d, a), pb = driving_pd_of(d, b);
    if (pa != pb) return pa > pb;
    return d.scored[a].measures.pd > d.scored[b].measures.pd;
  });
  const std::size_t n = std::min(d.options.top, ok.size());
  const bool cal = d.calibration != nullptr;
  std::string lead = "The " + count(n) + " highest and " + count(n) + " lowest PDs of the book. ";
  if (cal) {
    lead += std::string("Ranked and graded on the ") +
            (calibrated_drives(d) ? "calibrated one-year PD" : "model PD") +
            " (the driving PD). Model PD at each obligor's horizon (column horizon, years); calibrated PD "
            "over one year with its " +
            level_text(d.calibration->calibration.confidence_level) +
            " interval, 'yes' where the DD lies outside the calibration sample's range (extrapolated); "
            "expected loss on the driving PD over each obligor's horizon. Spread in basis points; amounts "
            "(asset value, EAD, expected loss) in each obligor's currency, the last column.";
  } else {
    lead +=
        "Model PD (the driving PD) at each obligor's horizon, spread in basis points; amounts (asset value, "
        "EAD, expected loss) in "
        "each obligor's currency, the last column.";
  }
  std::string out = section_open("names", "Weakest and strongest names", lead);
  const std::vector<std::string> heads =
      cal ? std::vector<std::string>{"obligor",
                                     "name",
                                     "sector",
                                     "grade",
                                     "DD",
                                     "horizon (years)",
                                     "model PD (horizon)",
                                     "calibrated PD (one year)",
                                     "calibrated PD interval",
                                     "DD outside sample",
                                     "spread bp",
                                     "DP/V",
                                     "asset value",
                                     "EAD",
                                     "expected loss",
                                     "currency"}
          : std::vector<std::string>{"obligor",     "name", "sector",        "grade",
                                     "DD",          "PD",   "spread bp",     "DP/V",
                                     "asset value", "EAD",  "expected loss", "currency"};
  const auto table = [&](const std::string& title, auto first, auto last, const char* cls) {
    HtmlTable t(std::string("fc-table ") + cls, heads);
    t.numeric_from(4, heads.size() - 1);  // the currency column is text
    std::vector<std::string> attrs;
    for (auto it = first; it != last; ++it) {
      if (cal) {
        const std::vector<std::string> cells = calibrated_name_row(d, *it, attrs);
        t.row(cells, true, "", attrs);
      } else {
        t.row(name_row(d, *it), true);
      }
    }
    return "<h3>" + h(title) + "</h3>\n" + t.str();
  };
  out += table("Weakest " + count(n) + " (highest PD first)", ok.begin(),
               ok.begin() + static_cast<std::ptrdiff_t>(n), "fc-names-weak");
  out += table("Strongest " + count(n) + " (lowest PD first)", ok.rbegin(),
               ok.rbegin() + static_cast<std::ptrdiff_t>(n), "fc-names-strong");
  return out + not_scored_table(d) + "</section>\n";
}

// The PD-by-scenario chart's figures: the book as it stands, then each scenario.
struct ScenarioPds {
  std::vector<std::string> categories{"as it stands"};
  std::vector<double> weighted, mean;
  std::vector<std::string> weighted_labels, mean_labels;
  void add(double w, double m) {
    weighted.push_back(w);
    mean.push_back(m);
    weighted_labels.push_back(std::isfinite(w) ? fixed(100.0 * w, 2) + "%" : "");
    mean_labels.push_back(std::isfinite(m) ? fixed(100.0 * m, 2) + "%" : "");
  }
};

ScenarioPds scenario_pds(const ReportStress& st) {
  ScenarioPds p;
  const DrivingPd driving = st.summary.driving_pd;
  if (!st.summary.scenarios.empty()) {
    const ScenarioPdFigures f = driving_figures(st.summary.scenarios.front(), driving);
    p.add(f.ead_weighted_pd, f.mean_pd);
  }
  for (std::size_t k = 0; k < st.scenarios.size() && k < st.summary.scenarios.size(); ++k) {
    p.categories.push_back(st.scenarios[k].name);
    const ScenarioPdFigures f = driving_figures(st.summary.scenarios[k], driving);
    p.add(f.ead_weighted_pd_stressed, f.mean_pd_stressed);
  }
  return p;
}

// The PD the stress section shows: the model PD over the obligor's horizon, or with the
// calibrated PD driving the calibrated one-year PD of the DD.
std::string stress_pd_name(const ReportStress& st) {
  return st.summary.driving_pd == DrivingPd::calibrated ? "calibrated one-year PD" : "model PD";
}

std::string scenario_pd_chart(const ScenarioPds& p, const std::string& pd_name) {
  SvgAxis y{.label = "PD (percent)", .min = 0, .max = 1, .log = false, .format = TickFormat::percent};
  return figure(svg_bar_chart(p.categories,
                              {{"exposure-weighted PD", "fc-bar-base", p.weighted, p.weighted_labels},
                               {"mean PD", "fc-bar-alt", p.mean, p.mean_labels}},
                              "scenario", y, "PD of the book by scenario (" + pd_name + ")"),
                "The first group is the book as it stands; each further group is the same book under one "
                "scenario. Exposure-weighted PD (sum of EAD x PD over sum of EAD) tracks where the money is; "
                "the mean PD treats every name alike.");
}

// The per-scenario summary table and the list of scenarios with their descriptions.
std::string scenario_summary_table(const ReportData& d) {
  const ReportStress& st = *d.stress;
  const std::string above = "PD > " + level_text(d.config.stress.pd_threshold);
  HtmlTable t("fc-table fc-stress-summary",
              {"scenario", "compared", "mean PD base", "mean PD stressed", "EAD-weighted PD base",
               "EAD-weighted PD stressed", above + " base", above + " stressed", "expected loss base",
               "expected loss stressed"});
  for (std::size_t k = 0; k < st.scenarios.size() && k < st.summary.scenarios.size(); ++k) {
    const ScenarioPdFigures s = driving_figures(st.summary.scenarios[k], st.summary.driving_pd);
    t.row({st.scenarios[k].name, count(st.summary.scenarios[k].compared), report_pd(s.mean_pd),
           report_pd(s.mean_pd_stressed), report_pd(s.ead_weighted_pd), report_pd(s.ead_weighted_pd_stressed),
           count(s.above_threshold), count(s.above_threshold_stressed), report_amount(s.expected_loss),
           report_amount(s.expected_loss_stressed)},
          true);
  }
  std::string out = t.str();
  out += "<ul class=\"fc-scenarios\">\n";
  for (const Scenario& sc : st.scenarios) {
    out += "<li><strong>" + h(sc.name) + "</strong>" +
           (sc.description.empty() ? "" : ": " + h(sc.description)) + "</li>\n";
  }
  return out + "</ul>\n";
}

// PD of book obligor i as it stands in the stress section (stress_pd_name).
double base_stress_pd(const ReportData& d, std::size_t i) {
  return calibrated_drives(d) ? d.calibrated[i].pd : d.scored[i].measures.pd;
}

// PD of book obligor i under scenario k in the stress section (stress_pd_name).
double stressed_pd(const ReportData& d, std::size_t k, std::size_t i) {
  const StressedObligor& r = d.stress->rows[k][i];
  if (!calibrated_drives(d)) return r.measures.pd;
  return d.calibration->calibration.evaluate(r.measures.distance_to_default).pd;
}

// PD change of book obligor i under scenario k.
double stressed_pd_change(const ReportData& d, std::size_t k, std::size_t i) {
  return stressed_pd(d, k, i) - base_stress_pd(d, i);
}

// Book positions of the obligors whose PD scenario k moved, largest change first, at most `shown`.
std::vector<std::size_t> largest_pd_changes(const ReportData& d, std::size_t k, std::size_t shown) {
  const std::vector<StressedObligor>& rows = d.stress->rows[k];
  std::vector<std::size_t> idx;
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (rows[i].status == StressStatus::ok && d.scored[i].status == RowStatus::ok && rows[i].shocked() &&
        stressed_pd(d, k, i) != base_stress_pd(d, i)) {
      idx.push_back(i);
    }
  }
  std::stable_sort(idx.begin(), idx.end(), [&](std::size_t a, std::size_t b) {
    return std::fabs(stressed_pd_change(d, k, a)) > std::fabs(stressed_pd_change(d, k, b));
  });
  idx.resize(std::min(idx.size(), shown));
  return idx;
}

std::string pd_change_chart(const ReportData& d, std::size_t k, const std::vector<std::size_t>& idx) {
  const ReportStress& st = *d.stress;
  std::vector<std::string> names, labels, tooltips;
  std::vector<double> values;
  for (const std::size_t i : idx) {
    names.push_back(short_name(d.book.obligors[i]));
    tooltips.push_back(full_name(d.book.obligors[i]));
    values.push_back(100.0 * stressed_pd_change(d, k, i));
    labels.push_back(report_pd(base_stress_pd(d, i)) + " to " + report_pd(stressed_pd(d, k, i)));
  }
  SvgAxis x{.label = "change of PD (percentage points)",
            .min = 0,
            .max = 1,
            .log = false,
            .format = TickFormat::plain};
  return figure(
      svg_signed_bars(names, values, labels, x,
                      "Largest PD changes under '" + st.scenarios[k].name + "' (" + stress_pd_name(st) + ")",
                      true, 720.0, tooltips),
      "The " + count(idx.size()) +
          " obligors whose PD moved most under this scenario (names no shock hits are left out). Bars to "
          "the "
          "right are rises in percentage points; the text beside each bar gives the PD as it stands and "
          "stressed.");
}

// The names hit hardest in any scenario: each scored obligor's largest PD rise (-inf when no
// scenario stressed it), and the book positions of the `limit` largest.
struct HardestHit {
  std::vector<double> worst;
  std::vector<std::size_t> idx;
};

HardestHit hardest_hit(const ReportData& d, std::size_t limit) {
  const ReportStress& st = *d.stress;
  HardestHit hit;
  hit.worst.assign(d.scored.size(), -INFINITY);
  for (std::size_t i = 0; i < d.scored.size(); ++i) {
    if (d.scored[i].status != RowStatus::ok) continue;
    for (std::size_t k = 0; k < st.rows.size(); ++k) {
      if (st.rows[k][i].status == StressStatus::ok) {
        hit.worst[i] = std::max(hit.worst[i], stressed_pd_change(d, k, i));
      }
    }
    hit.idx.push_back(i);
  }
  std::stable_sort(hit.idx.begin(), hit.idx.end(),
                   [&](std::size_t a, std::size_t b) { return hit.worst[a] > hit.worst[b]; });
  hit.idx.resize(std::min(hit.idx.size(), limit));
  return hit;
}

std::string hardest_hit_table(const ReportData& d, const HardestHit& hit) {
  const ReportStress& st = *d.stress;
  std::vector<std::string> heads{"obligor", "name", stress_pd_name(st) + " as it stands"};
  for (const Scenario& s : st.scenarios) heads.push_back("PD " + s.name);
  heads.push_back("largest change");
  HtmlTable per("fc-table fc-stress-names", heads);
  per.numeric_from(2);
  for (const std::size_t i : hit.idx) {
    std::vector<std::string> cells{id_of(d.book.obligors[i]), d.book.obligors[i].get(TextField::name),
                                   report_pd(base_stress_pd(d, i))};
    for (std::size_t k = 0; k < st.rows.size(); ++k) {
      const StressedObligor& r = st.rows[k][i];
      cells.push_back(r.status == StressStatus::ok ? report_pd(stressed_pd(d, k, i))
                                                   : std::string(to_string(r.status)));
    }
    cells.push_back(pp(hit.worst[i]));
    per.row(cells, true);
  }
  return "<h3>Names hit hardest (" + count(hit.idx.size()) + ", by their largest PD rise)</h3>\n" + per.str();
}

std::string stress_section(const ReportData& d) {
  const ReportStress& st = *d.stress;
  std::string out = section_open(
      "stress", "Stress results",
      "Each scenario of " + st.origin +
          " shocks the observed inputs (equity value and volatility, rate, default point), and every hit "
          "obligor is solved again, " +
          (d.config.stress.hold == StressHold::asset_vol
               ? std::string("holding its asset volatility (its equity volatility is then the model's; "
                             "stress.hold asset-vol)")
               : std::string("holding its equity volatility (stress.hold equity-vol)")) +
          ". Figures over the obligors scored both as they stand and stressed; " +
          (st.summary.currency.empty()
               ? std::string("EAD weights and expected losses add each obligor's amounts as they stand")
               : "EAD weights and expected losses in " + st.summary.currency) +
          ".");
  out += scenario_pd_chart(scenario_pds(st), stress_pd_name(st));
  out += scenario_summary_table(d);
  // Per-obligor change, one chart per scenario: the names whose PD moved most.
  const std::size_t shown = std::max<std::size_t>(d.options.top, 10);
  for (std::size_t k = 0; k < st.scenarios.size() && k < st.rows.size(); ++k) {
    out += pd_change_chart(d, k, largest_pd_changes(d, k, shown));
  }
  out += hardest_hit_table(d, hardest_hit(d, 2 * shown));
  return out + "</section>\n";
}

std::string term_section(const ReportData& d) {
  const std::vector<double>& hz = d.term_run.horizons;
  std::string out =
      section_open("term", "PD term structures",
                   "Cumulative Merton PD by each horizon for the chosen names, each solved once at "
                   "its own horizon and projected (firmcall score --horizons).");
  SvgAxis x{.label = "horizon (years)", .min = 0, .max = 1, .log = false, .format = TickFormat::plain};
  SvgAxis y{.label = "cumulative PD (percent, log scale)",
            .min = 1e-8,
            .max = 1,
            .log = true,
            .format = TickFormat::percent};
  std::vector<double> xs{0.0}, ys;
  for (const double t : hz) xs.push_back(t);
  constexpr double kFloor = 1e-8;
  for (const TermScoredObligor& t : d.terms) {
    for (const TermPoint& p : t.points) {
      if (p.ok()) ys.push_back(p.pd);
    }
  }
  fit_axis(x, xs, true);
  fit_axis(y, ys, false, kFloor);
  SvgPlot plot(x, y, "Cumulative PD by horizon", 720.0, 420.0);
  plot.legend_at_bottom(true);
  HtmlTable t("fc-table fc-term", [&] {
    std::vector<std::string> heads{"obligor", "name"};
    for (const double v : hz) heads.push_back(fixed(v, v == std::floor(v) ? 0 : 2) + " y");
    return heads;
  }());
  t.numeric_from(2);
  for (std::size_t k = 0; k < d.terms.size(); ++k) {
    const TermScoredObligor& term = d.terms[k];
    const ObligorRecord& rec = d.book.obligors[d.term_index[k]];
    std::vector<double> px, py;
    std::vector<std::string> cells{id_of(rec), rec.get(TextField::name)};
    for (std::size_t j = 0; j < term.points.size() && j < term.horizons.size(); ++j) {
      const TermPoint& p = term.points[j];
      px.push_back(p.horizon_years);
      py.push_back(p.ok() ? std::max(p.pd, kFloor) : NAN);
      cells.push_back(p.ok() ? report_pd(p.pd) : std::string(to_string(p.status)));
    }
    const std::string cls = "fc-s" + std::to_string(k % 6 + 1);
    plot.line(px, py, cls, full_name(rec));
    plot.legend(cls, short_name(rec));
    t.row(cells, true);
  }
  out += figure(
      plot.str(),
      "One line per chosen name: the probability of default by each horizon, on a log scale so that "
      "safe and weak names share one chart. Steeper lines mean risk that builds with time; PDs below "
      "0.000001% are drawn on the bottom edge (the table gives them). The Merton PD at t is the chance "
      "of being below the default point at t, not of having reached it before, so for weak names whose "
      "assets drift upwards it can fall at long horizons (the first-passage model of firmcall score "
      "--model first-passage does not).");
  out += t.str();
  return out + "</section>\n";
}

// Why obligors are not in the portfolio: the first five problems, then how many more.
std::string left_out_text(const PortfolioResult& run) {
  std::string left_out;
  for (std::size_t i = 0; i < run.problems.size() && i < 5; ++i)
    left_out += (i > 0 ? "; " : "") + run.problems[i];
  const std::size_t more = run.problems.size() > 5 ? run.problems.size() - 5 + run.problems_not_listed : 0;
  if (more > 0) left_out += "; and " + count(more) + " more";
  return left_out;
}

// The exceedance curve drawn: P(loss > x) on the loss grid up to a little past the top ES,
// floored for the log scale (NaN where it is 0).
struct ExceedanceCurve {
  std::vector<double> loss, probability;
  double floor = 0.0;
};

ExceedanceCurve exceedance_curve(const LossDistribution& dist) {
  const LossTail& top = dist.tails.back();
  const double x_end = std::max(1.3 * top.es, 2.0 * dist.expected_loss);
  ExceedanceCurve c;
  c.floor = std::min(1e-5, 0.1 * (1.0 - top.confidence_level));
  for (std::size_t k = 0; k < dist.exceedance.size(); ++k) {
    const double loss = static_cast<double>(k) * dist.loss_unit;
    if (loss > x_end) break;
    c.loss.push_back(loss);
    c.probability.push_back(dist.exceedance[k] > 0.0 ? std::max(dist.exceedance[k], c.floor) : NAN);
  }
  return c;
}

std::string exceedance_chart(const LossDistribution& dist, const ExceedanceCurve& c,
                             const std::string& currency) {
  const LossTail& top = dist.tails.back();
  SvgAxis x{.label = currency.empty() ? std::string("portfolio loss") : "portfolio loss (" + currency + ")",
            .min = 0,
            .max = 1,
            .log = false,
            .format = TickFormat::amount};
  SvgAxis y{.label = "P(loss > x), percent, log scale",
            .min = c.floor,
            .max = 1,
            .log = true,
            .format = TickFormat::percent};
  std::vector<double> xfit = c.loss;
  xfit.push_back(top.es);
  fit_axis(x, xfit, true);
  fit_axis(y, c.probability, false, c.floor);
  SvgPlot plot(x, y, "Loss distribution: chance of losing more than x", 720.0, 420.0);
  // Drawn without point markers: one line through every grid point.
  plot.line(c.loss, c.probability, "fc-s1", "P(L > x)", false);
  plot.vline(dist.expected_loss, "fc-mark-el", "EL " + report_amount(dist.expected_loss));
  plot.vline(top.var, "fc-mark-var",
             "VaR " + level_text(top.confidence_level) + " " + report_amount(top.var));
  plot.vline(top.es, "fc-mark-es", "ES " + level_text(top.confidence_level) + " " + report_amount(top.es));
  plot.hline(1.0 - top.confidence_level, "fc-ref", "tail " + level_text(1.0 - top.confidence_level));
  return figure(
      plot.str(),
      "Read across from a probability to the loss it exceeds: the curve gives the chance that the "
      "portfolio loses more than x over the horizon. Marked: expected loss (EL), and at " +
          level_text(top.confidence_level) +
          " the value at risk (the loss exceeded with the tail probability) and the expected shortfall "
          "(the mean loss beyond it).");
}

// VaR and ES at each confidence level, then EL, EAD and IRB capital of the book.
std::string loss_levels_table(const PortfolioScenarioResult& base, bool calibrated) {
  const LossDistribution& dist = base.exact;
  HtmlTable t("fc-table fc-portfolio-levels", {"confidence level", "VaR", "ES", "VaR less EL"});
  for (const LossTail& tail : dist.tails) {
    t.row({level_text(tail.confidence_level), report_amount(tail.var), report_amount(tail.es),
           report_amount(tail.var - dist.expected_loss)},
          true);
  }
  return t.str() + "<p class=\"fc-note\">Expected loss " + h(report_amount(base.total.expected_loss)) +
         " over each obligor's horizon on EAD " + h(report_amount(base.total.ead)) +
         (calibrated ? "; Basel IRB capital on the calibrated one-year PDs "
                     : "; Basel IRB capital on one-year PDs ") +
         h(report_amount(base.total.irb_capital)) + " (risk-weighted assets " +
         h(report_amount(base.total.rwa)) + ").</p>\n";
}

// Contributions to ES at the top confidence level, and the positions of the `limit` largest
// (empty when the distribution has no contributions).
struct EsContributors {
  const double* contribution = nullptr;  // per obligor, at the top level
  std::vector<std::size_t> idx;
};

EsContributors es_contributors(const PortfolioScenarioResult& base, std::size_t limit) {
  const LossDistribution& dist = base.exact;
  const std::size_t n = base.obligors.size();
  const std::size_t level = dist.tails.size() - 1;
  EsContributors top;
  if (!(dist.es_contributions.size() >= (level + 1) * n && n > 0)) return top;
  top.contribution = dist.es_contributions.data() + level * n;
  top.idx.resize(n);
  std::iota(top.idx.begin(), top.idx.end(), std::size_t{0});
  std::stable_sort(top.idx.begin(), top.idx.end(),
                   [&](std::size_t a, std::size_t b) { return top.contribution[a] > top.contribution[b]; });
  top.idx.resize(std::min(top.idx.size(), limit));
  return top;
}

std::string es_contributors_table(const ReportData& d, const PortfolioScenarioResult& base,
                                  const EsContributors& top) {
  const LossTail& level = base.exact.tails.back();
  const bool cal = calibrated_drives(d);
  HtmlTable c("fc-table fc-contributions", {"obligor", "name", cal ? "calibrated PD (own horizon)" : "PD",
                                            "EAD", "expected loss", "ES contribution", "share of ES"});
  c.numeric_from(2);
  for (const std::size_t i : top.idx) {
    const PortfolioObligor& o = base.obligors[i];
    if (!o.ok()) continue;
    c.row({id_of(d.book.obligors[i]), d.book.obligors[i].get(TextField::name),
           report_pd(cal ? o.pd_driving : o.pd), report_amount(o.ead), report_amount(o.expected_loss),
           report_amount(top.contribution[i]), fixed(100.0 * top.contribution[i] / level.es, 1) + "%"},
          true);
  }
  return "<h3>Largest contributors to ES at " + h(level_text(level.confidence_level)) + "</h3>\n" + c.str();
}

// The currency of the portfolio figures, with the FX file, its date and the rates used.
std::string portfolio_currency_text(const PortfolioResult& run) {
  if (run.reporting_currency.empty()) return "amounts in the book's unit (no obligor states a currency)";
  std::string s = "every amount (EAD, losses, capital, contributions) in " + run.reporting_currency;
  if (run.fx_origin.empty()) return s + ", the currency of every obligor";
  s += ", each EAD converted at the rates of " + run.fx_origin + " as of " + run.fx_as_of + " (" +
       run.reporting_currency + " per unit:";
  for (const FxRate& r : run.fx_used)
    s += " " + r.currency + " " + exact(r.rate) + (&r == &run.fx_used.back() ? ")" : ",");
  return s;
}

std::string portfolio_section(const ReportData& d) {
  const PortfolioResult& run = *d.portfolio;
  const PortfolioScenarioResult& base = run.scenarios.front();
  const LossDistribution& dist = base.exact;
  std::string out = section_open(
      "portfolio", "Portfolio loss distribution",
      std::string("Exact one-factor (Vasicek) loss distribution of the book as it stands: each obligor's ") +
          (calibrated_drives(d) ? "calibrated PD over its horizon (1 - (1 - PD1)^T from the one-year PD PD1)"
                                : "Merton PD") +
          ", its LGD and EAD, and its asset correlation (" +
          std::string(run.correlation_origin.empty() ? "no correlation file" : run.correlation_origin) +
          "). " + count(base.included) + " of " + count(base.obligors.size()) +
          " obligors are in the portfolio; " + portfolio_currency_text(run) + ".");
  if (base.included < base.obligors.size()) {
    out += "<p class=\"fc-note\">Left out of the portfolio: " + h(left_out_text(run)) + ".</p>\n";
  }
  if (base.included == 0) {
    out +=
        "<p class=\"fc-note\">No obligor is in the portfolio, so there is no loss distribution to "
        "show.</p>\n";
    return out + "</section>\n";
  }
  const bool usable = !dist.tails.empty() && !dist.exceedance.empty();
  if (!usable) {
    out += "<p class=\"fc-note\">The loss distribution could not be computed: " + h(dist.message) + "</p>\n";
    return out + "</section>\n";
  }
  out += exceedance_chart(dist, exceedance_curve(dist), run.reporting_currency);
  out += loss_levels_table(base, calibrated_drives(d));
  const EsContributors top = es_contributors(base, d.options.top);
  if (top.contribution != nullptr) out += es_contributors_table(d, base, top);
  return out + "</section>\n";
}

// The ROC curve of the validation section.
std::string roc_chart(const ReportData& d) {
  const ValidationRun& v = *d.validation;
  SvgPlot plot({.label = "false alarm rate (share of non-defaulters called)", .min = 0, .max = 1},
               {.label = "hit rate (share of defaulters called)", .min = 0, .max = 1}, "ROC curve", 560.0,
               420.0);
  std::vector<double> x, y;
  for (const CurvePoint& c : d.roc) {
    x.push_back(c.false_positive_rate);
    y.push_back(c.hit_rate);
  }
  plot.line({0.0, 1.0}, {0.0, 1.0}, "fc-ref", "random ranking", false);
  plot.line(x, y, "fc-s1", "PD " + v.pd_column, false);
  plot.legend("fc-s1", "PD column " + v.pd_column + ", AUC " + fixed(v.discrimination.auc, 4));
  plot.legend("fc-ref", "random ranking, AUC 0.5");
  return figure(
      plot.str(),
      "Each point calls every obligor with a PD at or above a threshold a defaulter; the curve runs "
      "from the highest threshold (bottom left) to the lowest (top right). ");
}

// The CAP curve (cumulative accuracy profile; Engelmann, Hayden and Tasche 2003) with the random
// and the perfect model. The curve is written in its own units (exact_line).
std::string cap_chart(const ReportData& d) {
  const ValidationRun& v = *d.validation;
  const Discrimination& dis = v.discrimination;
  SvgPlot plot({.label = "share of obligors, riskiest first (highest PD first)", .min = 0, .max = 1},
               {.label = "share of defaulters among them", .min = 0, .max = 1}, "CAP curve", 560.0, 420.0);
  std::vector<double> x, y;
  for (const CurvePoint& c : d.roc) {
    x.push_back(c.population_share);
    y.push_back(c.hit_rate);
  }
  const double rate = static_cast<double>(dis.defaults) / static_cast<double>(dis.observations);
  plot.line({0.0, 1.0}, {0.0, 1.0}, "fc-ref", "random model", false);
  plot.line({0.0, rate, 1.0}, {0.0, 1.0, 1.0}, "fc-s4", "perfect model", false);
  plot.exact_line(x, y, "fc-s1", "CAP curve of PD column " + v.pd_column);
  plot.legend("fc-s1", "PD column " + v.pd_column + ", accuracy ratio " + fixed(dis.accuracy_ratio, 4));
  plot.legend("fc-s4", "perfect model (defaulters first)");
  plot.legend("fc-ref", "random model");
  plot.legend_at_bottom(true);
  return figure(
      plot.str(),
      "Obligors sorted from the highest PD to the lowest; the curve gives the share of all defaulters "
      "among the riskiest x of the sample (one point per distinct PD, ties taken together). The "
      "perfect model puts every defaulter first (a kink at the default rate " +
          report_pd(rate) +
          "), a random one lies on the diagonal; the accuracy ratio is the area between the curve and "
          "the diagonal over that of the perfect model, 2 AUC - 1 (Engelmann, Hayden and Tasche "
          "2003). ");
}

// Observed default rate against mean PD per grade, with the Jeffreys interval of the rate.
std::string grade_rate_chart(const ReportData& d) {
  const ValidationRun& v = *d.validation;
  const CalibrationTests& cal = v.calibration;
  std::vector<std::string> labels;
  std::vector<IntervalMark> marks;
  for (std::size_t i = 0; i < cal.grades.size(); ++i) {
    const GroupCalibration& g = cal.grades[i];
    if (g.observations == 0) continue;
    IntervalMark m;
    m.predicted = g.mean_pd;
    m.observed = g.default_rate;
    jeffreys_interval(static_cast<double>(g.defaults), static_cast<double>(g.observations),
                      kGradeIntervalLevel, m.lower, m.upper);
    m.tooltip = v.grade_labels[i] + ": " + count(g.defaults) + " defaults of " + count(g.observations) +
                ", default rate " + report_pd(g.default_rate) + " (" + level_text(kGradeIntervalLevel) +
                " Jeffreys interval " + report_pd(m.lower) + " to " + report_pd(m.upper) + "), mean PD " +
                report_pd(g.mean_pd);
    labels.push_back(v.grade_labels[i]);
    marks.push_back(std::move(m));
  }
  SvgAxis y{.label = "default rate and PD (percent, log scale)",
            .min = 1e-5,
            .max = 1,
            .log = true,
            .format = TickFormat::percent};
  const std::string svg = svg_interval_chart(labels, marks, "grade on the master scale (best on the left)", y,
                                             "Observed default rate against mean PD by grade", "mean PD",
                                             "observed default rate with its interval");
  return figure(svg,
                "Per grade: the mean PD of its obligors (square) and the observed default rate (dot) with "
                "its " +
                    level_text(kGradeIntervalLevel) +
                    " Jeffreys interval (the 2.5% and 97.5% quantiles of Beta(d + 1/2, n - d + 1/2) for d "
                    "defaults of n obligors, lower bound 0 when d = 0; Brown, Cai and DasGupta 2001; "
                    "ECB instructions for reporting validation results). A square outside the whisker "
                    "says the grade's PD does not match its defaults. Rates of 0 and values below 0.001% "
                    "are drawn on the bottom edge.");
}

// The per-grade calibration table with the traffic lights.
std::string grade_table(const ValidationRun& v) {
  const CalibrationTests& cal = v.calibration;
  HtmlTable t("fc-table fc-validation-grades",
              {"grade", "obligors", "defaults", "mean PD", "default rate",
               "default rate interval (" + level_text(kGradeIntervalLevel) + ", Jeffreys)", "binomial p",
               "Jeffreys p", "light"});
  for (std::size_t i = 0; i < cal.grades.size(); ++i) {
    const GroupCalibration& g = cal.grades[i];
    if (g.observations == 0) continue;
    double lower = NAN, upper = NAN;
    jeffreys_interval(static_cast<double>(g.defaults), static_cast<double>(g.observations),
                      kGradeIntervalLevel, lower, upper);
    t.row({v.grade_labels[i], count(g.observations), count(g.defaults), report_pd(g.mean_pd),
           report_pd(g.default_rate), report_pd(lower) + " to " + report_pd(upper), fixed(g.binomial_p, 4),
           fixed(g.jeffreys_p, 4), std::string(to_string(g.light))},
          true, "fc-light-" + std::string(to_string(g.light)));
  }
  return t.str() +
         "<p class=\"fc-note\">Traffic light on the one-sided binomial p-value: green p &gt; 5%, yellow "
         "0.01% "
         "&lt; p &#8804; 5%, red p &#8804; 0.01%.</p>\n";
}

// The grade migration matrix against the earlier sample (validate --against).
std::string migration_table(const ValidationRun& v) {
  const StabilityResult& s = *v.stability;
  const std::size_t g = v.grade_labels.size();
  std::vector<std::size_t> used;  // grades with obligors in either sample
  for (std::size_t a = 0; a < g && a < s.actual.size(); ++a) {
    if (s.actual[a] > 0 || s.expected[a] > 0) used.push_back(a);
  }
  std::vector<std::string> heads{"grade before \u2192 now"};
  for (const std::size_t b : used) heads.push_back(v.grade_labels[b]);
  heads.emplace_back("obligors in both");
  HtmlTable t("fc-table fc-migration", heads);
  for (const std::size_t a : used) {
    std::vector<std::string> cells{v.grade_labels[a]};
    std::size_t row_total = 0;
    for (const std::size_t b : used) {
      cells.push_back(count(s.migration[a * g + b]));
      row_total += s.migration[a * g + b];
    }
    cells.push_back(count(row_total));
    t.row(cells, true);
  }
  return "<h3>Grade migration against " + h(s.origin) + "</h3>\n<p class=\"fc-note\">Rows: the grade in " +
         h(s.origin) + "; columns: the grade in " + h(v.origin) + "; " + h(count(s.matched)) +
         " obligors in both samples (matched on id). Population stability index " + h(fixed(s.psi, 4)) +
         " over the grades (docs/validation.md).</p>\n" + t.str();
}

// The validation section: discrimination cards, the ROC and CAP curves, calibration per grade
// with intervals and traffic lights, and the migration matrix against an earlier sample.
std::string validation_section(const ReportData& d) {
  const ValidationRun& v = *d.validation;
  const Discrimination& dis = v.discrimination;
  const CalibrationTests& cal = v.calibration;
  std::string out = section_open(
      "validation", "Validation against observed defaults",
      "PD column '" + v.pd_column + "' of " + v.origin + ": " + count(dis.observations) + " observations, " +
          count(dis.defaults) + " defaults (default rate " + report_pd(cal.overall.default_rate) +
          ", mean PD " + report_pd(cal.overall.mean_pd) +
          (d.options.validation_defaults_path.empty()
               ? "). The PDs are those of the outcomes file, not of the book above."
               : "). The PDs are those recorded in the history store, each run's against the defaults of " +
                     d.options.validation_defaults_path + " in the year after its as-of date.") +
          " Formulas and sources in docs/validation.md.");
  out += "<div class=\"fc-cards\">\n";
  out += card("AUC", fixed(dis.auc, 4),
              "95% interval " + fixed(dis.auc_lower, 4) + " to " + fixed(dis.auc_upper, 4) + " (DeLong)");
  out += card("accuracy ratio", fixed(dis.accuracy_ratio, 4), "2 AUC - 1");
  out += card("Kolmogorov-Smirnov", fixed(dis.ks, 4), "largest gap of the PD distributions");
  out +=
      card("Hosmer-Lemeshow p", fixed(cal.hosmer_lemeshow_p, 4),
           "chi-square " + fixed(cal.hosmer_lemeshow, 3) + " with " + count(cal.hosmer_lemeshow_df) + " df");
  out += card("binomial p, all", fixed(cal.overall.binomial_p, 4),
              std::string("traffic light ") + std::string(to_string(cal.overall.light)));
  out += card("Brier score", fixed(cal.brier, 5), "mean of (PD - outcome) squared");
  if (v.stability) {
    out += card("PSI", fixed(v.stability->psi, 4), "population stability against " + v.stability->origin);
  }
  out += "</div>\n";
  out += roc_chart(d);
  out += cap_chart(d);
  out += grade_rate_chart(d);
  out += grade_table(v);
  if (v.stability && !v.stability->migration.empty()) out += migration_table(v);
  return out + "</section>\n";
}

std::string grade_move(const GradeScale& scale, const Mover& m) {
  const std::string a = m.grade_before >= 0 ? std::string(scale.label_at(m.grade_before)) : "-";
  const std::string b = m.grade_now >= 0 ? std::string(scale.label_at(m.grade_now)) : "-";
  return a == b ? a : a + " to " + b;
}

// The grade migration between the two runs of the monitoring section (validate --migration
// BEFORE,NOW): rows the grade in the earlier run, columns the grade in the later one. Each count
// cell carries data-from and data-to (the labels).
std::string run_migration_table(const ReportMonitoring& mon) {
  const RunMigration& m = mon.migration;
  const std::size_t n = m.grades() + 2;
  const auto row_total = [&m, n](std::size_t i) {
    std::size_t t = 0;
    for (std::size_t j = 0; j < n; ++j) t += m.at(i, j);
    return t;
  };
  std::vector<std::string> heads{"grade in run " + std::to_string(m.from.run_id) + " \u2192 run " +
                                 std::to_string(m.to.run_id)};
  for (std::size_t j = 0; j < n; ++j) heads.emplace_back(m.column_label(j));
  heads.emplace_back("total");
  HtmlTable t("fc-table fc-run-migration", heads);
  for (std::size_t i = 0; i < n; ++i) {
    const std::size_t total = row_total(i);
    if (i >= m.grades() && total == 0) continue;  // no new or ungraded obligors
    std::vector<std::string> cells{std::string(m.row_label(i))};
    std::vector<std::string> attrs{""};
    for (std::size_t j = 0; j < n; ++j) {
      cells.push_back(count(m.at(i, j)));
      attrs.push_back(" data-from=\"" + h(m.row_label(i)) + "\" data-to=\"" + h(m.column_label(j)) + "\"");
    }
    cells.push_back(count(total));
    t.row(cells, true, "", attrs);
  }
  const auto basis = [](const RunInfo& r) {
    return r.driving_pd == DrivingPd::calibrated ? std::string("calibrated one-year PD")
                                                 : std::string("model PD converted to one year");
  };
  std::string note = "Rows: the grade in run " + std::to_string(m.from.run_id) + " (as of " + m.from.as_of +
                     "), graded on its " + basis(m.from) + "; columns: the grade in run " +
                     std::to_string(m.to.run_id) + " (as of " + m.to.as_of + "), on its " + basis(m.to) +
                     "; matched on id ('new': only in the later run, 'gone': only in the earlier, "
                     "'ungraded': not scored). Population stability index " +
                     fixed(m.psi, 4) + ". The same counts as firmcall validate --migration " +
                     std::to_string(m.from.run_id) + "," + std::to_string(m.to.run_id) +
                     " (CSV and JSON there).";
  if (!m.note.empty()) note += " " + m.note;
  return "<h3>Grade migration between the two runs</h3>\n<p class=\"fc-note\">" + h(note) + "</p>\n" +
         t.str();
}

std::string monitoring_section(const ReportData& d) {
  const ReportMonitoring& mon = *d.monitoring;
  const Comparison& c = mon.comparison;
  const GradeScale& scale = d.config.grades;
  const auto run_text = [](const RunInfo& r) {
    return "run " + std::to_string(r.run_id) + " (as of " + r.as_of + ")";
  };
  std::string out =
      section_open("monitoring", "Movers and alerts",
                   "From the history store " + mon.store_path + " (" + count(mon.runs_in_store) +
                       " runs): " + run_text(mon.runs.now) + " against " + run_text(mon.runs.before) +
                       ". Alert rules from the settings (monitoring.alerts).");
  if (mon.runs.now.book_path != d.book.origin) {
    const std::string label = mon.runs.now.book_label.empty() ? "" : " (" + mon.runs.now.book_label + ")";
    out += "<p class=\"fc-note\">The store's runs are of " + h(mon.runs.now.book_path + label) +
           ", not of this report's book " + h(d.book.origin) +
           ": names and figures here can differ from the "
           "sections above.</p>\n";
  }
  out += "<div class=\"fc-cards\">\n";
  out += card("continuing", count(c.continuing), count(c.added) + " new, " + count(c.dropped) + " dropped");
  out += card("downgraded", count(c.downgraded),
              count(c.upgraded) + " upgraded, " + count(c.unchanged_grade) + " unchanged");
  out += card("on the watchlist", count(c.flagged), "obligors with at least one alert");
  out += "</div>\n";
  // DD change of the names that moved most.
  std::vector<const Mover*> moved;
  for (const Mover& m : c.movers) {
    if (std::isfinite(m.dd_change())) moved.push_back(&m);
  }
  std::stable_sort(moved.begin(), moved.end(), [](const Mover* a, const Mover* b) {
    return std::fabs(a->dd_change()) > std::fabs(b->dd_change());
  });
  moved.resize(std::min(moved.size(), std::max<std::size_t>(d.options.top, 10)));
  std::vector<std::string> names, labels, tooltips;
  std::vector<double> values;
  for (const Mover* m : moved) {
    names.push_back(fit_text(m->id + " " + m->name, 28));
    tooltips.push_back(m->name.empty() ? m->id : m->id + " " + m->name);
    values.push_back(m->dd_change());
    labels.push_back(format_cell(m->dd_before, CellStyle::decimal3) + " to " +
                     format_cell(m->dd_now, CellStyle::decimal3));
  }
  SvgAxis x{.label = "change of distance to default (standard deviations)",
            .min = 0,
            .max = 1,
            .log = false,
            .format = TickFormat::plain};
  out += figure(svg_signed_bars(names, values, labels, x, "Largest moves in distance to default", false,
                                720.0, tooltips),
                "The names whose distance to default moved most between the two runs. Bars to the left "
                "(solid) mean the obligor came closer to default, bars to the right (outlined) that it "
                "moved away; the text gives DD before and now.");
  // Watchlist first (most severe first, as compare_runs orders them), then the other movers.
  HtmlTable t("fc-table fc-movers", {"obligor", "name", "DD before", "DD now", "DD change", "PD before",
                                     "PD now", "grade", "alerts"});
  t.numeric_from(2, 7);
  std::size_t rows = 0;
  for (const Mover& m : c.movers) {
    if (m.severity == 0 && rows >= std::max<std::size_t>(d.options.top, 10)) break;
    std::string alerts = m.alert_list();
    std::replace(alerts.begin(), alerts.end(), ';', ' ');
    if (m.kind != MoveKind::continuing)
      alerts = std::string(to_string(m.kind)) + (alerts.empty() ? "" : " " + alerts);
    t.row({m.id, m.name, format_cell(m.dd_before, CellStyle::decimal3),
           format_cell(m.dd_now, CellStyle::decimal3), format_cell(m.dd_change(), CellStyle::signed3),
           std::isfinite(m.pd_before) ? report_pd(m.pd_before) : "-",
           std::isfinite(m.pd_now) ? report_pd(m.pd_now) : "-", grade_move(scale, m), alerts},
          true, m.severity > 0 ? "fc-alert-row" : "");
    ++rows;
  }
  out += "<h3>Watchlist and movers (most severe first)</h3>\n" + t.str();
  const AlertRules& r = d.config.monitor.alerts;
  out += "<p class=\"fc-note\">Alerts: dd_drop, DD fell by more than " + h(plain(r.dd_drop)) +
         "; pd_jump, PD grew more than " + h(plain(r.pd_ratio)) + " times to at least " +
         h(level_text(r.pd_ratio_min_pd)) + "; downgrade, " + h(std::to_string(r.downgrade_notches)) +
         " notches or more; pd_ceiling, PD above " + h(level_text(r.pd_ceiling)) +
         "; not_scored, in the run but not scored.</p>\n";
  out += run_migration_table(mon);
  return out + "</section>\n";
}

// ---------------------------------------------------------------------------------------------
// Tear sheets (--sheet ID): a page per named obligor. Each figure's cell carries the exact value
// (data-value, shortest round-trip form) under the name of the CSV column it equals (data-field).

std::string exact_attr(std::string_view field, double v) {
  std::string out = " data-field=\"";
  out.append(h(field)).append("\"");
  if (std::isfinite(v)) out.append(" data-value=\"").append(exact(v)).append("\"");
  return out;
}

// "1 year", "2.5 years".
std::string years_text(double t) {
  return plain(t) + (t == 1.0 ? " year" : " years");
}

// The unit of an amount of obligor `rec`: its currency when the book names one.
std::string currency_of(const ObligorRecord& rec) {
  const std::string& c = rec.get(TextField::currency);
  return c.empty() ? std::string("the obligor's currency units (the book names no currency)") : c;
}

// A table of (quantity, value, unit) rows, each value cell naming its CSV column.
class SheetTable {
 public:
  explicit SheetTable(std::string css_class) : table_(std::move(css_class), {"quantity", "value", "unit"}) {
    table_.numeric_from(1, 2);
  }
  void add(const std::string& label, std::string_view field, const std::string& text, double v,
           const std::string& unit) {
    table_.row({label, text, unit}, true, "", {"", exact_attr(field, v), ""});
  }
  std::string str() const { return table_.str(); }

 private:
  HtmlTable table_;
};

std::string sheet_inputs(const ReportData& d, const ReportSheet& sh) {
  const ObligorRecord& rec = d.book.obligors[sh.index];
  const ScoredObligor& s = d.scored[sh.index];
  const std::string ccy = currency_of(rec);
  if (!s.resolved.ok()) {
    return "<h3>Inputs</h3>\n<p class=\"fc-note\">The inputs could not be resolved: " + h(s.message) +
           "</p>\n";
  }
  const MertonInputs& in = s.resolved.inputs;
  SheetTable t("fc-table fc-sheet-inputs");
  t.add("equity value E", "equity_value", report_amount(in.equity_value), in.equity_value, ccy);
  t.add("equity volatility", "equity_vol", fixed(100.0 * in.equity_vol_annual, 2) + "%", in.equity_vol_annual,
        "annualised");
  t.add("default point DP", "default_point", report_amount(in.default_point), in.default_point, ccy);
  t.add("risk-free rate", "rate", fixed(100.0 * in.risk_free_rate_cc, 3) + "%", in.risk_free_rate_cc,
        "continuously compounded");
  t.add("asset drift", "drift", fixed(100.0 * in.drift_annual, 3) + "%", in.drift_annual,
        s.resolved.drift_follows_rate ? "the rate (no drift given, or risk-neutral)" : "annualised");
  t.add("horizon", "horizon", plain(in.horizon_years), in.horizon_years, "years");
  t.add("EAD", "ead", s.resolved.has_ead ? report_amount(s.resolved.ead) : "-",
        s.resolved.has_ead ? s.resolved.ead : NAN, "the book's EAD unit");
  t.add("LGD", "lgd", fixed(100.0 * s.resolved.lgd, 1) + "%", s.resolved.lgd, "share of EAD");
  return "<h3>Inputs</h3>\n" + t.str();
}

std::string sheet_results(const ReportData& d, const ReportSheet& sh) {
  const ObligorRecord& rec = d.book.obligors[sh.index];
  const ScoredObligor& s = d.scored[sh.index];
  if (s.status != RowStatus::ok) {
    return "<h3>Results</h3>\n<p class=\"fc-note\">Not scored (" + h(to_string(s.status)) +
           "): " + h(s.message) + "</p>\n";
  }
  const MertonMeasures& m = s.measures;
  const double horizon = s.resolved.inputs.horizon_years;
  const std::string ccy = currency_of(rec);
  const int g = driving_grade_of(d, sh.index);
  SheetTable t("fc-table fc-sheet-results");
  t.add("asset value V", "asset_value", report_amount(m.asset_value), m.asset_value, ccy);
  t.add("asset volatility", "asset_vol", fixed(100.0 * m.asset_vol_annual, 2) + "%", m.asset_vol_annual,
        "annualised");
  t.add("leverage DP/V", "leverage", fixed(m.leverage, 3), m.leverage, "ratio");
  t.add("distance to default", "distance_to_default", format_cell(m.distance_to_default, CellStyle::decimal3),
        m.distance_to_default, "standard deviations");
  t.add("model PD", "pd", report_pd(m.pd), m.pd, "over " + years_text(horizon) + " (Merton)");
  t.add("model PD, one year", "pd_one_year", report_pd(pd_one_year(m.pd, horizon)),
        pd_one_year(m.pd, horizon), "one year");
  t.add("risk-neutral PD", "pd_risk_neutral", report_pd(m.pd_risk_neutral), m.pd_risk_neutral,
        "over " + years_text(horizon));
  t.add("credit spread", "spread_bp", report_spread_bp(m.spread_bp), m.spread_bp, "basis points");
  if (d.calibration) {
    const CalibratedPd& c = d.calibrated[sh.index];
    t.add("calibrated PD", "pd_calibrated", report_pd(c.pd), c.pd,
          "one year (" + d.options.pd_calibration_path + ")");
  }
  const double pd = driving_pd_of(d, sh.index);
  t.add("expected loss", "expected_loss",
        s.resolved.has_ead ? report_amount(pd * s.resolved.lgd * s.resolved.ead) : "-",
        s.resolved.has_ead ? pd * s.resolved.lgd * s.resolved.ead : NAN,
        "the book's EAD unit; PD x LGD x EAD on the driving PD over " + years_text(horizon));
  std::string out = "<h3>Results</h3>\n" + t.str();
  out += "<p class=\"fc-note\">Grade " + h(g >= 0 ? std::string(d.config.grades.label_at(g)) : "-") +
         " on the master scale, from the " +
         (calibrated_drives(d) ? "calibrated one-year PD" : "model PD converted to one year") +
         " (the driving PD).</p>\n";
  return out;
}

// Days since 1970-01-01 of a YYYY-MM-DD date (the proleptic Gregorian calendar; the civil-date
// algorithm of Howard Hinnant's date library, from memory); NaN when `date` is not one.
double days_of(const std::string& date) {
  if (!is_calendar_date(date)) return NAN;
  int y = std::stoi(date.substr(0, 4));
  const int m = std::stoi(date.substr(5, 2)), dd = std::stoi(date.substr(8, 2));
  y -= m <= 2 ? 1 : 0;
  const int era = y / 400;  // years 1000-9999: never negative
  const int yoe = y - era * 400;
  const int doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + dd - 1;
  const int doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return static_cast<double>(era * 146097 + doe - 719468);
}

// The obligor's DD in every recorded run against the days since the first, with the DD of the
// stress PD threshold at a one-year horizon.
std::string sheet_history_chart(const ReportData& d, const ReportSheet& sh) {
  std::vector<double> xs, ys;
  std::vector<std::string> tips;
  const double day0 = days_of(sh.history.front().run.as_of);
  for (const RunStore::SeriesPoint& p : sh.history) {
    const double x = days_of(p.run.as_of) - day0;
    if (!p.obligor.has_measures || !std::isfinite(x)) continue;
    xs.push_back(x);
    ys.push_back(p.obligor.measures.distance_to_default);
    tips.push_back("run " + std::to_string(p.run.run_id) + ", as of " + p.run.as_of + ": DD " +
                   format_cell(p.obligor.measures.distance_to_default, CellStyle::decimal3) + ", PD " +
                   report_pd(p.obligor.measures.pd));
  }
  if (xs.size() < 2) return {};
  const double threshold = d.config.stress.pd_threshold;
  const double dd_threshold = norm_quantile_upper(threshold);
  SvgAxis x{.label = "days since " + sh.history.front().run.as_of + " (first run)",
            .min = 0,
            .max = 1,
            .log = false,
            .format = TickFormat::plain};
  SvgAxis y{
      .label = "DD (standard deviations)", .min = 0, .max = 1, .log = false, .format = TickFormat::plain};
  std::vector<double> yfit = ys;
  yfit.push_back(dd_threshold);
  fit_axis(x, xs, true);
  fit_axis(y, yfit, true);
  SvgPlot plot(x, y, "Distance to default by recorded run", 560.0, 250.0);
  plot.hline(dd_threshold, "fc-ref", "DD at PD " + level_text(threshold) + " (one year)");
  // In the chart's own units (days, DD), so that a reader of the page gets the figures exactly.
  plot.exact_line(xs, ys, "fc-s1 fc-sheet-dd", full_name(d.book.obligors[sh.index]));
  for (std::size_t k = 0; k < xs.size(); ++k) plot.point(xs[k], ys[k], "fc-dot-strong", tips[k], "");
  return figure(
      plot.str(),
      "One dot per recorded run that scored the obligor, from the history store; lower means closer to "
      "default. The dashed line is the DD of a one-year PD of " +
          level_text(threshold) + ".");
}

std::string sheet_history(const ReportData& d, const ReportSheet& sh) {
  if (d.options.store_path.empty()) {
    return "<h3>DD and PD history</h3>\n<p class=\"fc-note\">No history store given (give --db STORE).</p>\n";
  }
  if (sh.history.empty()) {
    return "<h3>DD and PD history</h3>\n<p class=\"fc-note\">No run of " + h(d.options.store_path) +
           " holds this obligor.</p>\n";
  }
  HtmlTable t("fc-table fc-sheet-history",
              {"as of", "run", "status", "DD", "model PD", "spread bp", "grade (recorded)", "driving PD"});
  t.numeric_from(3, 6);
  for (const RunStore::SeriesPoint& p : sh.history) {
    const StoredObligor& o = p.obligor;
    const bool ok = o.has_measures;
    t.row({p.run.as_of, std::to_string(p.run.run_id), std::string(to_string(o.status)),
           ok ? format_cell(o.measures.distance_to_default, CellStyle::decimal3) : "-",
           ok ? report_pd(o.measures.pd) : "-", ok ? report_spread_bp(o.measures.spread_bp) : "-",
           o.grade.empty() ? "-" : o.grade, std::string(to_string(p.run.driving_pd))},
          true, "",
          {" data-field=\"as_of\"", " data-field=\"run_id\"", "",
           exact_attr("distance_to_default", ok ? o.measures.distance_to_default : NAN),
           exact_attr("pd", ok ? o.measures.pd : NAN),
           exact_attr("spread_bp", ok ? o.measures.spread_bp : NAN), " data-field=\"grade_recorded\"", ""});
  }
  return "<h3>DD and PD history (" + h(count(sh.history.size())) + " runs of " + h(d.options.store_path) +
         ")</h3>\n<p class=\"fc-note\">As firmcall track: the model PD over each run's horizon; each run's "
         "grade as "
         "recorded, on that run's driving PD (the chart above).</p>\n" +
         t.str();
}

std::string sheet_stress(const ReportData& d, const ReportSheet& sh) {
  if (!d.stress) {
    return "<h3>Stress results</h3>\n<p class=\"fc-note\">No scenarios given (give --scenarios FILE).</p>\n";
  }
  const ReportStress& st = *d.stress;
  const ScoredObligor& base = d.scored[sh.index];
  const std::string ccy = currency_of(d.book.obligors[sh.index]);
  const bool cal = calibrated_drives(d);
  std::vector<std::string> heads{"scenario",    "shocked",   "DD stressed",        "DD change",
                                 "PD stressed", "PD change", "spread bp stressed", "asset value stressed"};
  if (cal) heads.emplace_back("calibrated PD stressed (one year)");
  HtmlTable t("fc-table fc-sheet-stress", heads);
  t.numeric_from(2);
  for (std::size_t k = 0; k < st.rows.size() && k < st.scenarios.size(); ++k) {
    const StressedObligor& r = st.rows[k][sh.index];
    const bool ok = base.status == RowStatus::ok && r.status == StressStatus::ok;
    const MertonMeasures& m0 = base.measures;
    const MertonMeasures& m1 = r.measures;
    const double dd = ok ? m1.distance_to_default : NAN,
                 ddc = ok ? m1.distance_to_default - m0.distance_to_default : NAN;
    const double pd = ok ? m1.pd : NAN, pdc = ok ? m1.pd - m0.pd : NAN;
    const double spread = ok ? m1.spread_bp : NAN, v = ok ? m1.asset_value : NAN;
    std::vector<std::string> cells{
        st.scenarios[k].name,
        r.shocked() ? "yes" : "no",
        ok ? format_cell(dd, CellStyle::decimal3) : std::string(to_string(r.status)),
        ok ? format_cell(ddc, CellStyle::signed3) : "-",
        report_pd(pd),
        pp(pdc),
        report_spread_bp(spread),
        report_amount(v)};
    std::vector<std::string> attrs{" data-field=\"scenario\"",
                                   "",
                                   exact_attr("distance_to_default_stressed", dd),
                                   exact_attr("distance_to_default_change", ddc),
                                   exact_attr("pd_stressed", pd),
                                   exact_attr("pd_change", pdc),
                                   exact_attr("spread_bp_stressed", spread),
                                   exact_attr("asset_value_stressed", v)};
    if (cal) {
      const double c = ok ? stressed_pd(d, k, sh.index) : NAN;
      cells.push_back(report_pd(c));
      attrs.push_back(exact_attr("pd_calibrated_stressed", c));
    }
    t.row(cells, true, "", attrs);
  }
  return "<h3>Stress results (" + h(st.origin) +
         ")</h3>\n<p class=\"fc-note\">As firmcall stress: each scenario's " +
         "shocks re-solved as the stress section says; model PD over the obligor's horizon, asset value in " +
         h(ccy) + ".</p>\n" + t.str();
}

std::string sheet_term(const ReportSheet& sh) {
  HtmlTable t("fc-table fc-sheet-term",
              {"horizon (years)", "cumulative PD", "annualised PD", "forward PD", "DD", "spread bp"});
  t.numeric_from(0);
  for (std::size_t j = 0; j < sh.term.points.size() && j < sh.term.horizons.size(); ++j) {
    const TermPoint& p = sh.term.points[j];
    const bool ok = p.ok();
    t.row({plain(p.horizon_years), ok ? report_pd(p.pd) : std::string(to_string(p.status)),
           ok ? report_pd(p.pd_annualised) : "-", ok ? report_pd(p.pd_forward) : "-",
           ok ? format_cell(p.distance_to_default, CellStyle::decimal3) : "-",
           ok ? report_spread_bp(p.spread_bp) : "-"},
          true, "",
          {exact_attr("horizon", p.horizon_years), exact_attr("pd", ok ? p.pd : NAN),
           exact_attr("pd_annualised", ok ? p.pd_annualised : NAN),
           exact_attr("pd_forward", ok ? p.pd_forward : NAN),
           exact_attr("distance_to_default", ok ? p.distance_to_default : NAN),
           exact_attr("spread_bp", ok ? p.spread_bp : NAN)});
  }
  std::string out =
      "<h3>PD term structure</h3>\n<p class=\"fc-note\">As firmcall score --horizons: the Merton "
      "model solved once at the obligor's horizon and projected; model PDs.</p>\n";
  const bool any_ok =
      std::any_of(sh.term.points.begin(), sh.term.points.end(), [](const TermPoint& p) { return p.ok(); });
  if (!any_ok) {
    const std::string why = sh.term.first_problem();
    return out + "<p class=\"fc-note\">No term structure" + (why.empty() ? std::string() : ": " + h(why)) +
           ".</p>\n";
  }
  return out + t.str();
}

std::string sheet_sensitivities(const ReportSheet& sh) {
  const MertonSensitivities& s = sh.sensitivities;
  std::string out = "<h3>Sensitivities</h3>\n";
  if (!s.ok()) {
    return out + "<p class=\"fc-note\">No sensitivities (" + h(to_string(s.status)) + ").</p>\n";
  }
  HtmlTable t("fc-table fc-sheet-sensitivities",
              {"input moved", "DD change", "model PD change", "spread change (bp)"});
  struct Move {
    const char* label;
    const char* key;
    const MeasureChange* change;
  };
  const Move moves[] = {{"equity value +1%", "equity_pct", &s.equity},
                        {"equity volatility +1 point", "equity_vol_pt", &s.equity_vol},
                        {"default point +1%", "default_point_pct", &s.default_point},
                        {"rate +1 bp", "rate_bp", &s.rate}};
  for (const Move& m : moves) {
    const std::string key = m.key;
    t.row(
        {m.label, format_cell(m.change->distance_to_default, CellStyle::signed3), pp(m.change->pd),
         report_spread_bp(m.change->spread_bp)},
        true, "",
        {"", exact_attr("dd_per_" + key, m.change->distance_to_default),
         exact_attr("pd_per_" + key, m.change->pd), exact_attr("spread_bp_per_" + key, m.change->spread_bp)});
  }
  return out +
         "<p class=\"fc-note\">As firmcall score --sensitivities: analytic first-order changes of the "
         "model measures for one move of each input, the others held.</p>\n" +
         t.str();
}

std::string sheet_section(const ReportData& d, std::size_t k) {
  const ReportSheet& sh = d.sheets[k];
  const ObligorRecord& rec = d.book.obligors[sh.index];
  std::string lead;
  const auto add = [&lead](const std::string& what, const std::string& v) {
    if (v.empty()) return;
    lead.append(lead.empty() ? "" : ", ").append(what).append(" ").append(v);
  };
  add("Sector", rec.get(TextField::sector));
  add("country", rec.get(TextField::country));
  lead = (lead.empty() ? std::string() : lead + ". ") + "Amounts in " + currency_of(rec) +
         " (EAD and expected loss in the book's EAD unit). Driving PD: " +
         (calibrated_drives(d) ? "the calibrated one-year PD (" + d.options.pd_calibration_path + ")"
                               : std::string("the model PD (Merton)")) +
         "; the model PD is over the obligor's horizon, the grade on the one-year PD.";
  std::string out = "<section id=\"sheet-" + std::to_string(k + 1) +
                    "\" class=\"fc-section fc-sheet\" data-obligor=\"" + h(id_of(rec)) + "\">\n<h2>" +
                    h("Tear sheet: " + full_name(rec)) + "</h2>\n<p class=\"fc-lead\">" + h(lead) + "</p>\n";
  out += "<div class=\"fc-sheet-cols\">\n<div>\n" + sheet_inputs(d, sh) + sheet_results(d, sh) +
         "</div>\n<div>\n" + sheet_sensitivities(sh) + sheet_term(sh) +
         (sh.history.empty() ? std::string() : sheet_history_chart(d, sh)) + "</div>\n</div>\n";
  out += "<div class=\"fc-sheet-cols\">\n<div>\n" + sheet_stress(d, sh) + "</div>\n<div>\n" +
         sheet_history(d, sh) + "</div>\n</div>\n";
  return out + "</section>\n";
}

constexpr const char* kStyle = R"(
/* Colours: the Okabe-Ito palette (Okabe and Ito 2008, Color Universal Design), told apart with the
   common forms of colour blindness; no meaning rests on red against green alone (bars also differ
   in fill and outline, lines in dashes, and keys and tables say it in words). */
:root { --ink: #1c2733; --muted: #5b6672; --paper: #fbfaf6; --rule: #d9d4c7; --blue: #0072b2; --orange: #e69f00;
  --vermillion: #d55e00; --sky: #56b4e9; --green: #009e73; --purple: #cc79a7; --yellow: #f0e442; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink);
  font: 14px/1.45 "DejaVu Sans", "Liberation Sans", "Helvetica Neue", Arial, sans-serif; }
.fc-masthead { background: var(--ink); color: #f4f1e8; padding: 22px 36px 18px; border-bottom: 6px solid var(--orange); }
.fc-masthead h1 { margin: 0 0 4px; font-size: 26px; letter-spacing: 0.01em; }
.fc-sub { margin: 0; color: #cfd6dc; }
.fc-caution { margin: 14px 0 0; padding: 8px 12px; border-left: 4px solid var(--orange); background: #2a3744;
  color: #f4f1e8; font-size: 13px; }
.fc-toc { margin: 12px 0 0; font-size: 13px; }
.fc-toc a { color: #f4f1e8; margin-right: 14px; text-decoration: none; border-bottom: 1px dotted #9fb0bf; }
.fc-absent { margin: 8px 0 0; color: #cfd6dc; font-size: 12.5px; }
main { padding: 8px 36px 24px; max-width: 1100px; }
.fc-section { padding: 18px 0 12px; border-bottom: 1px solid var(--rule); }
.fc-section h2 { font-size: 20px; margin: 6px 0 4px; color: var(--blue); }
.fc-section h3 { font-size: 15px; margin: 18px 0 6px; }
.fc-lead { margin: 0 0 12px; color: var(--muted); max-width: 860px; }
.fc-cards { display: flex; flex-wrap: wrap; gap: 10px; margin: 8px 0 14px; }
.fc-card { flex: 1 1 150px; background: #fff; border: 1px solid var(--rule); border-top: 3px solid var(--blue);
  padding: 8px 10px; }
.fc-card-label { font-size: 12px; color: var(--muted); text-transform: uppercase; letter-spacing: 0.04em; }
.fc-card-value { font-size: 21px; font-weight: bold; margin: 2px 0; }
.fc-card-note { font-size: 11.5px; color: var(--muted); }
.fc-figure { margin: 10px 0 14px; background: #fff; border: 1px solid var(--rule); padding: 8px 10px 6px;
  max-width: 760px; break-inside: avoid; }
.fc-figure figcaption { font-size: 12.5px; color: var(--muted); margin: 4px 2px 2px; }
svg.fc-chart { display: block; max-width: 100%; height: auto; font-size: 12px; font-family: inherit; }
.fc-chart-title { font-size: 14px; font-weight: bold; fill: var(--ink); }
.fc-plot-bg { fill: #fdfcf9; stroke: none; }
.fc-grid { stroke: #e6e1d5; stroke-width: 1; }
.fc-axis { fill: none; stroke: var(--ink); stroke-width: 1.2; }
.fc-tick { fill: #3e4a56; font-size: 11px; }
.fc-axis-title { fill: var(--ink); font-size: 12px; }
.fc-legend { fill: var(--ink); font-size: 11px; }
.fc-legend-bg { fill: #ffffff; fill-opacity: 0.85; stroke: var(--rule); }
.fc-point-label { fill: var(--vermillion); font-size: 11px; font-weight: bold; }
.fc-marker-label { font-size: 11px; font-weight: bold; fill: var(--ink); }
.fc-dot-strong { fill: var(--blue); fill-opacity: 0.75; stroke: #ffffff; stroke-width: 0.8; }
.fc-dot-middle { fill: var(--sky); fill-opacity: 0.85; stroke: #ffffff; stroke-width: 0.8; }
.fc-dot-weak { fill: var(--orange); stroke: var(--ink); stroke-width: 0.6; }
.fc-dot-distressed { fill: var(--vermillion); stroke: var(--ink); stroke-width: 1.6; }
.fc-ref { stroke: var(--vermillion); stroke-width: 1.2; stroke-dasharray: 6 4; }
.fc-ref-text { fill: var(--vermillion); }
.fc-bar-base { fill: var(--blue); }
.fc-bar-alt { fill: var(--orange); }
.fc-bar-worse { fill: var(--vermillion); stroke: var(--ink); stroke-width: 0.6; }
.fc-bar-better { fill: #d7ecf8; stroke: var(--blue); stroke-width: 1.4; stroke-dasharray: 3 2; }
.fc-bar-label { fill: var(--ink); font-size: 10.5px; }
.fc-zero { stroke: var(--ink); stroke-width: 1.2; }
.fc-line { fill: none; stroke-width: 2; }
.fc-mark { stroke: #ffffff; stroke-width: 0.8; }
.fc-s1 { stroke: var(--blue); fill: var(--blue); }
.fc-s2 { stroke: var(--vermillion); fill: var(--vermillion); }
.fc-s3 { stroke: var(--orange); fill: var(--orange); }
.fc-s4 { stroke: var(--sky); fill: var(--sky); }
.fc-s5 { stroke: var(--green); fill: var(--green); }
.fc-s6 { stroke: var(--purple); fill: var(--purple); }
.fc-line.fc-s2 { stroke-dasharray: 7 3; }
.fc-line.fc-s3 { stroke-dasharray: 2 2; }
.fc-line.fc-s4 { stroke-dasharray: 9 3 2 3; }
.fc-line.fc-s5 { stroke-dasharray: 4 4; }
.fc-line.fc-s6 { stroke-dasharray: 1 3; }
.fc-line.fc-s1, .fc-line.fc-s2, .fc-line.fc-s3, .fc-line.fc-s4, .fc-line.fc-s5, .fc-line.fc-s6 { fill: none; }
.fc-key { stroke: none; }
.fc-bar-better.fc-key { stroke: var(--blue); }
.fc-bar-worse.fc-key { stroke: var(--ink); }
.fc-mark-el { stroke: var(--green); stroke-width: 2; }
.fc-mark-var { stroke: var(--orange); stroke-width: 2; }
.fc-mark-es { stroke: var(--vermillion); stroke-width: 2; stroke-dasharray: 5 3; }
.fc-table { border-collapse: collapse; margin: 6px 0 10px; font-size: 12.5px; background: #fff; }
.fc-table th { text-align: left; border-bottom: 2px solid var(--ink); padding: 4px 8px; font-weight: bold; }
.fc-table td { border-bottom: 1px solid #ebe6da; padding: 3px 8px; }
.fc-table .fc-num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.fc-table th.fc-num { white-space: normal; vertical-align: bottom; }
.fc-table tbody tr:nth-child(even) td { background: #faf8f2; }
.fc-alert-row td { color: var(--vermillion); font-weight: bold; }
.fc-note { font-size: 12.5px; color: var(--muted); }
.fc-run-migration td:first-child { font-weight: bold; }
.fc-sheet-cols { display: flex; flex-wrap: wrap; gap: 0 28px; }
.fc-sheet-cols > div { flex: 1 1 420px; }
.fc-scenarios { font-size: 12.5px; color: var(--muted); margin: 4px 0 12px; padding-left: 18px; }
footer { padding: 14px 36px 28px; color: var(--muted); font-size: 12px; }
@page { size: A4 landscape; margin: 12mm; }
@media print {
  body { background: #ffffff; font-size: 11px; }
  .fc-masthead { background: #ffffff; color: var(--ink); border-bottom: 3px solid var(--ink); padding: 0 0 8px; }
  .fc-sub, .fc-absent { color: var(--muted); }
  .fc-caution { background: #ffffff; color: var(--ink); border: 1px solid var(--ink); }
  .fc-toc { display: none; }
  main { padding: 0; max-width: none; }
  .fc-section { break-before: page; border-bottom: none; }
  .fc-figure { border: none; padding: 0; }
  .fc-table { font-size: 10px; }
  tr { break-inside: avoid; }
  .fc-sheet { font-size: 9px; }
  .fc-sheet .fc-table { font-size: 8.5px; margin: 2px 0 4px; }
  .fc-sheet .fc-table td, .fc-sheet .fc-table th { padding: 1px 5px; }
  .fc-sheet h2 { font-size: 15px; margin: 0 0 2px; }
  .fc-sheet h3 { font-size: 10.5px; margin: 5px 0 2px; }
  .fc-sheet .fc-note, .fc-sheet .fc-lead, .fc-sheet figcaption { font-size: 8.5px; margin: 1px 0 2px; }
  .fc-sheet .fc-figure { max-width: 270px; margin: 2px 0; }
  .fc-sheet-cols > div { flex: 1 1 0; }
}
)";

// Rules used only by the validation section and the calibrated-PD header (kept out of pages
// without them, which stay as they were).
constexpr const char* kValidationStyle = R"(.fc-whisker { stroke: var(--ink); stroke-width: 1.4; }
.fc-predicted { fill: var(--orange); stroke: var(--ink); stroke-width: 0.8; }
.fc-observed { fill: var(--blue); stroke: #ffffff; stroke-width: 0.8; }
.fc-light-yellow td:last-child { color: #8a6d00; font-weight: bold; }
.fc-light-red td:last-child { color: var(--vermillion); font-weight: bold; }
.fc-migration td:first-child { font-weight: bold; }
)";
constexpr const char* kDrivingStyle = R"(.fc-driving { margin: 10px 0 0; font-size: 13px; color: #f4f1e8; }
.fc-driving code { font-size: 11.5px; word-break: break-all; }
@media print { .fc-driving { color: var(--ink); } }
)";

// The header's statement of which PD drives and the horizon of each PD (with a calibration).
std::string driving_statement(const ReportData& d) {
  const CalibrationRecord& rec = *d.calibration;
  const PdCalibration& c = rec.calibration;
  const bool cal = d.options.driving_pd == DrivingPd::calibrated;
  std::string out = "<p class=\"fc-driving\"><strong>Driving PD: ";
  out += cal ? "calibrated one-year PD" : "model PD (Merton)";
  out += "</strong> (grades, expected loss, the summary's PD figures, the ranking of the name tables";
  out += d.portfolio ? ", and the portfolio section's loss distribution and IRB capital" : "";
  out += "). Calibration " + h(d.options.pd_calibration_path) + ": " + h(to_string(c.method)) + ", " +
         h(count(c.observations)) + " obligor-years with " + h(count(c.defaults)) + " defaults, as of " +
         h(rec.as_of_first) + " to " + h(rec.as_of_last) + ", SHA-256 of its data <code>" +
         h(rec.data_sha256) +
         "</code>.<br/>Horizons: the model PD is over each obligor's own horizon (column 'horizon' of the "
         "name tables); the calibrated PD is over one year, with its " +
         h(level_text(c.confidence_level)) + " interval; grades are on one-year PDs (" +
         (cal ? "the calibrated PD" : "the model PD converted to one year") +
         "); expected loss is over each obligor's horizon" +
         (cal ? " (1 - (1 - PD1)^T from the calibrated one-year PD1)" : "") +
         (cal ? "; the stress section shows the calibrated one-year PD of the stressed DD" : "") +
         ". The DD chart, " + (cal ? "" : "stress, ") +
         "term structures and movers use the model PD; the validation section uses the outcomes file's "
         "PDs.</p>\n";
  return out;
}

}  // namespace

std::string report_pd(double pd) {
  return std::isfinite(pd) ? format_cell(pd, CellStyle::percent_pd) + "%" : "-";
}

std::string report_spread_bp(double v) {
  if (!std::isfinite(v)) return "-";
  char buf[64];
  if (v == 0.0) {
    std::snprintf(buf, sizeof buf, "0");
  } else if (std::fabs(v) >= 0.1 && std::fabs(v) < 1e7) {
    std::snprintf(buf, sizeof buf, "%.2f", v);
  } else {
    std::snprintf(buf, sizeof buf, "%.2e", v);
  }
  return buf;
}

std::string report_amount(double v, int decimals) {
  if (!std::isfinite(v)) return "-";
  // Below 1 the fixed decimals would lose the figure (an expected loss of 0.000218 is not 0.00):
  // three significant digits instead, scientific below 0.001 (as the spreads).
  const double a = std::fabs(v);
  if (v != 0.0 && a < 1.0) {
    char buf[64];
    std::snprintf(buf, sizeof buf, a >= 1e-3 ? "%#.3g" : "%.2e", v);
    return buf;
  }
  return group_thousands(v, decimals);
}

const std::vector<std::string>& report_section_ids() {
  static const std::vector<std::string> ids = {"summary", "dd-leverage", "names",      "stress",
                                               "term",    "portfolio",   "monitoring", "validation"};
  return ids;
}

OptionCheck ReportOptions::validate() const {
  if (book_path.empty()) return OptionProblem{"book_path", "", "must name the book"};
  for (std::size_t i = 0; i < term_ids.size(); ++i) {
    if (std::find(term_ids.begin(), term_ids.begin() + static_cast<std::ptrdiff_t>(i), term_ids[i]) !=
        term_ids.begin() + static_cast<std::ptrdiff_t>(i)) {
      return OptionProblem{"term_ids", term_ids[i], "must not name an obligor twice"};
    }
  }
  for (std::size_t i = 0; i < sheet_ids.size(); ++i) {
    if (std::find(sheet_ids.begin(), sheet_ids.begin() + static_cast<std::ptrdiff_t>(i), sheet_ids[i]) !=
        sheet_ids.begin() + static_cast<std::ptrdiff_t>(i)) {
      return OptionProblem{"sheet_ids", sheet_ids[i], "must not name an obligor twice"};
    }
  }
  if (!correlation_path.empty() && !portfolio) {
    return OptionProblem{"correlation_path", correlation_path,
                         "applies to the portfolio section: needs portfolio"};
  }
  if (!store_run.empty() && store_path.empty()) {
    return OptionProblem{"store_run", store_run, "applies to the monitoring section: needs store_path"};
  }
  if (!against.empty() && store_path.empty()) {
    return OptionProblem{"against", against, "applies to the monitoring section: needs store_path"};
  }
  if (!validation_against_path.empty() && validation_path.empty()) {
    return OptionProblem{"validation_against_path", validation_against_path,
                         "applies to the validation section: needs validation_path"};
  }
  if (!validation_defaults_path.empty() && store_path.empty()) {
    return OptionProblem{"validation_defaults_path", validation_defaults_path,
                         "builds the validation section from the history store: needs store_path"};
  }
  if (!validation_defaults_path.empty() && !validation_path.empty()) {
    return OptionProblem{"validation_defaults_path", validation_defaults_path,
                         "the validation section takes one source: an outcomes file or the history store"};
  }
  if (driving_pd == DrivingPd::calibrated && pd_calibration_path.empty()) {
    return OptionProblem{"driving_pd", "calibrated", "needs a PD calibration: needs pd_calibration_path"};
  }
  return std::nullopt;
}

double driving_pd_of(const ReportData& d, std::size_t i) {
  const ScoredObligor& s = d.scored[i];
  if (s.status != RowStatus::ok) return NAN;
  if (!calibrated_drives(d)) return s.measures.pd;
  return pd_over_horizon(d.calibrated[i].pd, s.resolved.inputs.horizon_years);
}

int driving_grade_of(const ReportData& d, std::size_t i) {
  const ScoredObligor& s = d.scored[i];
  if (s.status != RowStatus::ok) return -1;
  if (calibrated_drives(d)) return d.config.grades.index_of(d.calibrated[i].pd);
  return d.config.grades.index_of_pd_at(s.measures.pd, s.resolved.inputs.horizon_years);
}

namespace {

// The validation section's figures: every statistic of `firmcall validate` with its curves, and the
// ROC and CAP curve thinned for the charts.
void gather_validation(ReportData& d, const ReportOptions& options, const Config& config) {
  OutcomeReadOptions read;
  read.keep_ids = !options.validation_against_path.empty();
  const OutcomeSample sample = [&] {
    if (options.validation_defaults_path.empty())
      return load_outcomes(options.validation_path, read, config.grades);
    const RunStore store(options.store_path, StoreOpen::read_only, config.monitor.busy_timeout_seconds);
    const StoreOutcomeOptions from_store{.horizon_years = 1.0,
                                         .pd_column = calibrated_drives(d) ? "pd_calibrated" : "pd"};
    return outcomes_from_store(store, load_default_dates(options.validation_defaults_path), from_store,
                               config.grades);
  }();
  std::unique_ptr<OutcomeSample> earlier;
  if (read.keep_ids) {
    earlier =
        std::make_unique<OutcomeSample>(load_outcomes(options.validation_against_path, read, config.grades));
  }
  d.validation = std::make_unique<ValidationRun>(run_validation(sample, earlier.get(), true));
  const std::vector<CurvePoint>& curve = d.validation->discrimination.curve;
  const std::size_t step = std::max<std::size_t>(1, curve.size() / kRocChartPoints);
  for (std::size_t k = 0; k < curve.size(); k += step) d.roc.push_back(curve[k]);
  if (!curve.empty() && (curve.size() - 1) % step != 0) d.roc.push_back(curve.back());
}

// The position in the book of obligor `id`, named by the option `field`; an id not in the book is
// refused.
std::size_t position_of(const ReportData& d, const std::string& id, const char* field) {
  const auto it = std::find_if(d.book.obligors.begin(), d.book.obligors.end(),
                               [&id](const ObligorRecord& r) { return id_of(r) == id; });
  if (it == d.book.obligors.end())
    throw OptionError(field, "obligor '" + id + "' is not in " + d.book.origin);
  return static_cast<std::size_t>(it - d.book.obligors.begin());
}

// The term section's curves of the chosen names, and the horizons of the tear sheets' curves.
void gather_terms(ReportData& d, const ReportOptions& options, const Config& config) {
  if (options.term_ids.empty() && options.sheet_ids.empty()) return;
  TermOptionText choices;
  choices.horizons = options.horizons;
  d.term_run = term_book_options(config.term, choices);
  for (const std::string& id : options.term_ids) {
    const std::size_t pos = position_of(d, id, "term_ids");
    const auto it = d.book.obligors.begin() + static_cast<std::ptrdiff_t>(pos);
    if (std::find(d.term_index.begin(), d.term_index.end(), pos) != d.term_index.end()) {
      throw OptionError("term_ids", "obligor '" + id + "' is named twice");
    }
    d.term_index.push_back(pos);
    d.terms.emplace_back();
    score_term_obligor(*it, d.book.defaults, config.score, d.term_run, d.terms.back());
  }
}

// The tear sheets: each named obligor's term structure, sensitivities and recorded history (its
// inputs, results and stress rows are those of the other sections).
void gather_sheets(ReportData& d, const ReportOptions& options, const Config& config) {
  if (options.sheet_ids.empty()) return;
  std::unique_ptr<RunStore> store;
  if (!options.store_path.empty()) {
    store = std::make_unique<RunStore>(options.store_path, StoreOpen::read_only,
                                       config.monitor.busy_timeout_seconds);
  }
  for (const std::string& id : options.sheet_ids) {
    const std::size_t pos = position_of(d, id, "sheet_ids");
    const auto it = d.book.obligors.begin() + static_cast<std::ptrdiff_t>(pos);
    if (std::any_of(d.sheets.begin(), d.sheets.end(),
                    [pos](const ReportSheet& s) { return s.index == pos; })) {
      throw OptionError("sheet_ids", "obligor '" + id + "' is named twice");
    }
    ReportSheet sh;
    sh.index = pos;
    score_term_obligor(*it, d.book.defaults, config.score, d.term_run, sh.term);
    const ScoredObligor& s = d.scored[pos];
    if (s.status == RowStatus::ok) sh.sensitivities = sensitivities_of(s.resolved, s.solution);
    if (store) sh.history = store->series(id);
    d.sheets.push_back(std::move(sh));
  }
}

// The stress and portfolio runs convert to the reporting currency when the report was given FX
// rates.
template <class RunOptions>
void use_fx(const ReportOptions& options, const FxTable& fx, RunOptions& run) {
  if (options.fx_path.empty()) return;
  run.fx = &fx;
  run.reporting_currency = options.reporting_currency;
}

}  // namespace

ReportData gather_report(const ReportOptions& options, const Config& config) {
  ReportData d;
  d.options = options;
  d.config = config;
  d.book = load_book(options.book_path);
  if (options.driving_pd == DrivingPd::calibrated && options.pd_calibration_path.empty()) {
    throw OptionError("driving_pd", "calibrated needs a PD calibration");
  }
  if (!options.pd_calibration_path.empty()) {
    d.calibration = std::make_unique<CalibrationRecord>(read_calibration(options.pd_calibration_path));
  }
  const ScoreSettings& settings = config.score;
  d.scored.resize(d.book.obligors.size());
  for (std::size_t i = 0; i < d.book.obligors.size(); ++i) {
    score_obligor(d.book.obligors[i], d.book.defaults, settings, d.scored[i]);
  }
  if (d.calibration) {
    // As score --pd-calibration: the calibration at the obligor's DD, NaN when it was not scored.
    d.calibrated.resize(d.scored.size(), CalibratedPd{NAN, NAN, NAN, false});
    for (std::size_t i = 0; i < d.scored.size(); ++i) {
      if (d.scored[i].status == RowStatus::ok) {
        d.calibrated[i] = d.calibration->calibration.evaluate(d.scored[i].measures.distance_to_default);
      }
    }
  }
  gather_terms(d, options, config);
  const FxTable fx = options.fx_path.empty() ? FxTable{} : load_fx_rates(options.fx_path);
  if (!options.scenarios_path.empty()) {
    ScenarioSet set = load_scenarios(options.scenarios_path);
    check_filters(set, d.book);
    auto st = std::make_unique<ReportStress>();
    st->origin = set.origin;
    StressBookOptions run;
    run.format = OutputFormat::csv;
    use_fx(options, fx, run);
    if (d.calibration) {  // the summaries carry the calibrated figures, shown when they drive
      run.pd_calibration = &d.calibration->calibration;
      run.pd_calibration_origin = options.pd_calibration_path;
      run.driving_pd = d.options.driving_pd;
    }
    // The summaries and the rows below hold the same volatility, as `firmcall stress` (stress.hold).
    st->summary =
        run_stress(d.book, set.scenarios, set.origin, settings, config.stress, run, [](std::string_view) {});
    for (const Scenario& sc : set.scenarios) {
      std::vector<StressedObligor> rows(d.book.obligors.size());
      for (std::size_t i = 0; i < rows.size(); ++i) {
        stress_obligor(d.scored[i], sc.effect_for(d.book.obligors[i]), settings, false, rows[i],
                       config.stress.hold);
      }
      st->rows.push_back(std::move(rows));
    }
    st->scenarios = std::move(set.scenarios);
    d.stress = std::move(st);
  }
  if (options.portfolio) {
    std::unique_ptr<CorrelationFile> correlation;
    if (!options.correlation_path.empty()) {
      correlation = std::make_unique<CorrelationFile>(load_correlation_file(options.correlation_path));
    }
    PortfolioBookOptions ro;
    ro.threads = std::max(1U, options.threads);
    use_fx(options, fx, ro);
    if (calibrated_drives(d)) {
      // IRB capital, expected loss and the loss distribution on the calibrated PD.
      ro.pd_calibration = &d.calibration->calibration;
      ro.pd_calibration_origin = options.pd_calibration_path;
      ro.driving_pd = DrivingPd::calibrated;
    }
    d.portfolio =
        std::make_unique<PortfolioResult>(run_portfolio(d.book, {}, "", correlation.get(), config, ro));
  }
  if (!options.store_path.empty()) {
    auto mon = std::make_unique<ReportMonitoring>();
    const RunStore store(options.store_path, StoreOpen::read_only, config.monitor.busy_timeout_seconds);
    mon->store_path = options.store_path;
    mon->runs_in_store = store.runs().size();
    mon->runs = select_runs(store, options.store_run, options.against);
    mon->before = store.obligors(mon->runs.before.run_id, false);
    mon->now = store.obligors(mon->runs.now.run_id, false);
    mon->comparison = compare_runs(mon->before, mon->now, config.grades, config.monitor.alerts);
    mon->migration = run_grade_migration(store, std::to_string(mon->runs.before.run_id),
                                         std::to_string(mon->runs.now.run_id), config.grades);
    d.monitoring = std::move(mon);
  }
  gather_sheets(d, options, config);
  if (!options.validation_path.empty() || !options.validation_defaults_path.empty()) {
    gather_validation(d, options, config);
  }
  return d;
}

std::string html_report(const ReportData& d) {
  const BookFigures f = book_figures(d);
  std::string title = d.options.title;
  if (title.empty()) title = d.book.label.empty() ? "Credit book report: " + d.book.origin : d.book.label;
  std::string out =
      "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
      "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n<title>" +
      h(title) + "</title>\n<style>" + kStyle + (d.validation ? kValidationStyle : "") +
      (d.calibration ? kDrivingStyle : "") +
      "</style>\n</head>\n<body>\n<header class=\"fc-masthead\">\n<h1>" + h(title) +
      "</h1>\n<p class=\"fc-sub\">" + h(d.book.origin) +
      (d.book.as_of.empty() ? std::string() : " &#183; as of " + h(d.book.as_of)) + " &#183; " +
      h(count(f.obligors)) + " obligors &#183; " + h(to_string(d.config.score.measure)) + " measure</p>\n" +
      "<p class=\"fc-sub fc-made\">Generated " +
      h(d.options.generated_at.empty() ? "-" : d.options.generated_at) + " (UTC) by firmcall " +
      h(d.options.tool_version.empty() ? "-" : d.options.tool_version) +
      "</p>\n<p class=\"fc-caution\"><strong>Model caution.</strong> These figures are model "
      "estimates under stated assumptions (Merton 1974 and its extensions), not a credit decision on their "
      "own. "
      "Use them within your institution's model-risk policy and the regulation that applies to you.</p>\n";
  if (d.calibration) out += driving_statement(d);
  struct Part {
    std::string id, title, missing;
    bool present;
  };
  const std::vector<Part> parts = {
      {"summary", "Summary", "", true},
      {"dd-leverage", "DD and leverage", "", f.scored > 0},
      {"names", "Names", "", f.scored > 0},
      {"stress", "Stress", "stress results (give --scenarios FILE)", d.stress != nullptr},
      {"term", "Term structures", "PD term structures (give --names ID,ID)", !d.terms.empty()},
      {"portfolio", "Portfolio loss", "portfolio loss distribution (give --portfolio)",
       d.portfolio != nullptr},
      {"monitoring", "Movers and alerts", "movers and alerts (give --db STORE)", d.monitoring != nullptr},
      {"validation", "Validation", "", d.validation != nullptr}};
  out += "<nav class=\"fc-toc\">";
  std::string missing;
  for (const Part& p : parts) {
    if (p.present) out += "<a href=\"#" + p.id + "\">" + h(p.title) + "</a>";
    if (!p.present && !p.missing.empty()) missing += (missing.empty() ? "" : "; ") + p.missing;
  }
  for (std::size_t k = 0; k < d.sheets.size(); ++k) {
    out += "<a href=\"#sheet-" + std::to_string(k + 1) + "\">" +
           h(id_of(d.book.obligors[d.sheets[k].index])) + "</a>";
  }
  out += "</nav>\n";
  if (!missing.empty()) out += "<p class=\"fc-absent\">Not in this report: " + h(missing) + ".</p>\n";
  out += "</header>\n<main>\n";
  out += summary_section(d, f);
  if (f.scored > 0) {
    out += scatter_section(d);
    out += names_section(d);
  }
  if (d.stress) out += stress_section(d);
  if (!d.terms.empty()) out += term_section(d);
  if (d.portfolio && !d.portfolio->scenarios.empty()) out += portfolio_section(d);
  if (d.monitoring) out += monitoring_section(d);
  if (d.validation) out += validation_section(d);
  for (std::size_t k = 0; k < d.sheets.size(); ++k) out += sheet_section(d, k);
  out +=
      "</main>\n<footer>\n<p>Made by firmcall " + h(d.options.tool_version) + " at " +
      h(d.options.generated_at) + " (UTC) from " + h(d.book.origin) + ". PD: Merton model, " +
      h(to_string(d.config.score.measure)) +
      " measure, each obligor's own horizon; default point = short-term debt + w x long-term debt unless "
      "given (w from the command line, the book or the settings); grades on the master scale of the "
      "settings. Percentages of PD "
      "follow the score table's rounding (four decimals, scientific below 0.001%).</p>\n<p>Model caution: "
      "figures are model estimates, not a credit decision on their own.</p>\n</footer>\n</body>\n</html>\n";
  return out;
}

}  // namespace firmcall
