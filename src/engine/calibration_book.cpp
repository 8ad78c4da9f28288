#include "firmcall/engine/calibration_book.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iterator>

#include <fmt/format.h>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/format/json_writer.hpp"
#include "firmcall/format/table_text.hpp"

namespace firmcall {

namespace {

constexpr std::size_t kSolveBlock = 4096;  // rows resolved and solved together

// What score requires of a solved obligor before it prints its measures (status ok).
bool scored_ok(const AssetSolution& solution, const MertonInputs& inputs, double& dd) {
  if (!solution.usable()) return false;
  const MertonMeasures m = merton_measures(inputs, solution.asset_value, solution.asset_vol_annual);
  const double all[] = {m.asset_value, m.asset_vol_annual, m.leverage,   m.distance_to_default,
                        m.pd,          m.pd_risk_neutral,  m.debt_value, m.spread_bp};
  dd = m.distance_to_default;
  return std::all_of(std::begin(all), std::end(all), [](double x) { return std::isfinite(x); });
}

}  // namespace

std::vector<double> history_distances(const DefaultHistory& history, const ScoreSettings& settings) {
  const std::vector<BookFieldRow>& rows = history.book_rows;
  const BookDefaults no_defaults;  // a CSV book has no run-wide defaults
  std::vector<double> dd(rows.size(), 0.0);
  ObligorRecord rec;
  std::vector<ResolvedObligor> resolved(std::min(rows.size(), kSolveBlock));
  std::vector<MertonInputs> inputs;
  std::vector<std::size_t> solved_row;
  std::vector<AssetSolution> solutions;
  std::size_t first_bad = rows.size(), bad = 0;
  for (std::size_t begin = 0; begin < rows.size(); begin += kSolveBlock) {
    const std::size_t n = std::min(kSolveBlock, rows.size() - begin);
    inputs.clear();
    solved_row.clear();
    for (std::size_t i = 0; i < n; ++i) {
      history.book_record(begin + i, rec);
      resolve_obligor(rec, no_defaults, settings, resolved[i]);
      if (resolved[i].ok()) {
        inputs.push_back(resolved[i].inputs);
        solved_row.push_back(begin + i);
      } else {
        first_bad = std::min(first_bad, begin + i);
        ++bad;
      }
    }
    solutions.resize(inputs.size());
    solve_asset_batch(inputs.data(), solutions.data(), inputs.size(), settings.solver);
    for (std::size_t k = 0; k < inputs.size(); ++k) {
      if (!scored_ok(solutions[k], inputs[k], dd[solved_row[k]])) {
        first_bad = std::min(first_bad, solved_row[k]);
        ++bad;
      }
    }
  }
  if (bad > 0) {
    // score's own words for the first such row: score it alone.
    history.book_record(first_bad, rec);
    ScoredObligor scored;
    score_obligor(rec, no_defaults, settings, scored);
    const std::string why = scored.message.empty() ? "a derived measure is not finite" : scored.message;
    std::string what = obligor_problem(history.origin, rec, why);
    if (bad == 2) what += " (1 more row cannot be scored either)";
    if (bad > 2) what += " (" + std::to_string(bad - 1) + " more rows cannot be scored either)";
    throw InputError(what + "; a calibration uses every observation: correct or remove such rows");
  }
  return dd;
}

CalibrationRecord calibrate_history(const DefaultHistory& history, const CalibrationOptions& options,
                                    const ScoreSettings& settings) {
  CalibrationRecord rec;
  CalibrationSample sample = history.sample();
  std::vector<double> computed;
  if (history.dd_from_book_fields()) {
    computed = history_distances(history, settings);
    sample.distance_to_default = computed;
  }
  rec.calibration = calibrate_pd(sample, options);
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
