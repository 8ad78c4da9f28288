#include "firmcall/engine/calibration_book.hpp"

#include <cstdio>
#include <iterator>

#include <fmt/format.h>

#include "firmcall/book/errors.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"

namespace firmcall {

CalibrationRecord calibrate_history(const DefaultHistory& history, const CalibrationOptions& options) {
  CalibrationRecord rec;
  rec.calibration = calibrate_pd(history.sample(), options);
  if (!rec.calibration.ok()) {
    throw InputError(history.origin + ": " + std::string(to_string(options.method)) +
                     " calibration not usable: " + rec.calibration.message);
  }
  rec.as_of_first = history.as_of_first;
  rec.as_of_last = history.as_of_last;
  rec.data_sha256 = history.data_sha256;
  return rec;
}

namespace {

constexpr std::string_view kOneYearNote = "one-year calibrated PD (default within one year of as_of)";

void append_blocks_json(std::string& out, const PdCalibration& c) {
  out += "[";
  for (std::size_t k = 0; k < c.blocks.size(); ++k) {
    const CalibrationBlock& b = c.blocks[k];
    out += k == 0 ? "\n    {" : ",\n    {";
    JsonFields(out)
        .number("dd_lower", b.dd_lower)
        .number("dd_upper", b.dd_upper)
        .number("observations", b.observations)
        .number("defaults", b.defaults)
        .number("pd_raw", b.pd_raw)
        .number("pd", b.pd)
        .number("pd_lower", b.pd_lower)
        .number("pd_upper", b.pd_upper);
    out += "}";
  }
  out += c.blocks.empty() ? "]" : "\n  ]";
}

std::string json_report(const CalibrationRecord& rec, const std::string& origin) {
  const PdCalibration& c = rec.calibration;
  std::string out = "{\n  ";
  JsonFields f(out);
  f.text("input", origin)
      .text("method", to_string(c.method))
      .text("pd", kOneYearNote)
      .number("pd_horizon_years", 1.0)
      .number("confidence_level", c.confidence_level)
      .count("observations", c.observations)
      .count("defaults", c.defaults)
      .text("as_of_first", rec.as_of_first)
      .text("as_of_last", rec.as_of_last)
      .number("dd_min", c.dd_min)
      .number("dd_max", c.dd_max)
      .text("data_sha256", rec.data_sha256);
  if (c.method == CalibrationMethod::logistic) {
    const LogisticFit& l = c.logistic;
    f.number("intercept", l.intercept)
        .number("slope", l.slope)
        .number("intercept_se", l.intercept_se)
        .number("slope_se", l.slope_se)
        .number("covariance", l.covariance)
        .number("log_likelihood", l.log_likelihood)
        .count("iterations", static_cast<std::size_t>(l.iterations));
  } else {
    out += ",\n  ";
    append_blocks_json(JsonFields(out).key("blocks"), c);
  }
  out += "\n}\n";
  return out;
}

std::string csv_report(const CalibrationRecord& rec) {
  const PdCalibration& c = rec.calibration;
  std::string out;
  if (c.method == CalibrationMethod::logistic) {
    const LogisticFit& l = c.logistic;
    out += "method,observations,defaults,intercept,slope,intercept_se,slope_se,covariance,log_likelihood\n";
    out += "logistic," + std::to_string(c.observations) + "," + std::to_string(c.defaults);
    append_csv_numbers(out, std::initializer_list<double>{l.intercept, l.slope, l.intercept_se, l.slope_se,
                                                          l.covariance, l.log_likelihood});
    out += "\n";
    return out;
  }
  out += "method,dd_lower,dd_upper,observations,defaults,pd_raw,pd,pd_lower,pd_upper\n";
  for (const CalibrationBlock& b : c.blocks) {
    out += to_string(c.method);
    append_csv_numbers(out, std::initializer_list<double>{b.dd_lower, b.dd_upper, b.observations, b.defaults,
                                                          b.pd_raw, b.pd, b.pd_lower, b.pd_upper});
    out += "\n";
  }
  return out;
}

std::string table_report(const CalibrationRecord& rec, const std::string& origin) {
  const PdCalibration& c = rec.calibration;
  std::string out;
  auto o = std::back_inserter(out);
  fmt::format_to(o, "PD calibration ({}) of {}: {} obligor-years, {} defaults ({:.2f}%), as of {} to {}\n",
                 to_string(c.method), origin, c.observations, c.defaults,
                 100.0 * static_cast<double>(c.defaults) / static_cast<double>(c.observations),
                 rec.as_of_first, rec.as_of_last);
  fmt::format_to(o, "PDs are {}; DD seen {:.3f} to {:.3f}; intervals {:g}%\n", kOneYearNote, c.dd_min,
                 c.dd_max, 100.0 * c.confidence_level);
  if (c.method == CalibrationMethod::logistic) {
    const LogisticFit& l = c.logistic;
    out += "PD(DD) = 1 / (1 + exp(-(intercept + slope x DD)))\n";
    append_rule(out, 44);
    fmt::format_to(o, "{:<12} {:>14} {:>14}\n", "", "estimate", "std. error");
    fmt::format_to(o, "{:<12} {:>14.6f} {:>14.6f}\n", "intercept", l.intercept, l.intercept_se);
    fmt::format_to(o, "{:<12} {:>14.6f} {:>14.6f}\n", "slope", l.slope, l.slope_se);
    append_rule(out, 44);
    fmt::format_to(o, "log-likelihood {:.4f} after {} Newton steps\n", l.log_likelihood, l.iterations);
    for (double dd : {0.0, 1.0, 2.0, 3.0, 4.0, 6.0}) {
      const CalibratedPd p = c.evaluate(dd);
      fmt::format_to(o, "  DD {:4.1f}: PD {:8.4f}%  [{:.4f}%, {:.4f}%]{}\n", dd, 100.0 * p.pd,
                     100.0 * p.lower, 100.0 * p.upper, p.extrapolated ? "  (extrapolated)" : "");
    }
  } else {
    fmt::format_to(o, "{:>9} {:>9} {:>12} {:>9} {:>10} {:>10} {:>10} {:>10}\n", "DD from", "DD to",
                   "obligor-yrs", "defaults", "rate %", "PD %", "lower %", "upper %");
    append_rule(out, 84);
    for (const CalibrationBlock& b : c.blocks) {
      fmt::format_to(o, "{:>9.3f} {:>9.3f} {:>12g} {:>9g} {:>10.4f} {:>10.4f} {:>10.4f} {:>10.4f}\n",
                     b.dd_lower, b.dd_upper, b.observations, b.defaults, 100.0 * b.pd_raw, 100.0 * b.pd,
                     100.0 * b.pd_lower, 100.0 * b.pd_upper);
    }
    append_rule(out, 84);
  }
  out += "Calibrated to this history; check it ranks and fits out of sample before relying on it.\n";
  return out;
}

}  // namespace

std::string calibration_report(const CalibrationRecord& record, OutputFormat format,
                               const std::string& origin) {
  switch (format) {
    case OutputFormat::json:
      return json_report(record, origin);
    case OutputFormat::csv:
      return csv_report(record);
    case OutputFormat::table:
      break;
  }
  return table_report(record, origin);
}

}  // namespace firmcall
