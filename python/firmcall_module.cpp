// The native part of the Python module `firmcall` (python/firmcall/__init__.py is the public
// face): scores columns of obligor fields with the library's resolver, the batch solver and the
// measures of the score command, so that every number equals the CLI's CSV for the same rows.
//
// _score_arrays(n, numbers, texts, options) takes
//   numbers  {field: float64 array of n}, NaN where a value is absent (an empty CSV cell)
//   texts    {field: list of n str}
//   options  {"rate", "horizon", "default_point_weight": float or None, "measure": str or None,
//             "config", "pd_calibration": path or None, "sensitivities": bool, "threads": int}
// and returns a dict of numpy arrays (see score() in __init__.py for the columns).
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cmath>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/book/obligor.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/calibration_io.hpp"
#include "firmcall/io/id_registry.hpp"
#include "firmcall/io/settings_io.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/pd_horizon.hpp"
#include "firmcall/util/parallel.hpp"

namespace py = pybind11;

namespace firmcall {
namespace {

using DoubleArray = py::array_t<double, py::array::c_style | py::array::forcecast>;

constexpr std::size_t kBlockRows = 1024;  // rows resolved and solved together by one thread

// The numeric score columns after status, in score_columns() order (equity_value .. spread_bp),
// then residual.
namespace col {
enum Out : std::size_t {
  equity_value,
  default_point,
  asset_value,
  asset_vol,
  leverage,
  distance_to_default,
  pd,
  horizon,
  pd_one_year,
  pd_risk_neutral,
  debt_value,
  spread_bp,
  residual,
  kOutCount
};
}  // namespace col
using col::kOutCount;
constexpr const char* kOutNames[kOutCount] = {
    "equity_value", "default_point", "asset_value", "asset_vol",       "leverage",   "distance_to_default",
    "pd",           "horizon",       "pd_one_year", "pd_risk_neutral", "debt_value", "spread_bp",
    "residual"};

struct Inputs {
  std::size_t n = 0;
  std::vector<std::pair<NumField, const double*>> numbers;
  std::vector<std::pair<TextField, std::vector<std::string>>> texts;
  std::vector<std::string> duplicate_error;  // per row: "field 'id': duplicate ..." or empty
};

struct Outputs {
  std::vector<double*> num;  // kOutCount columns of n
  std::int64_t* iterations = nullptr;
  std::uint8_t* status = nullptr;
  std::vector<std::vector<std::pair<std::size_t, std::string>>> messages;  // per worker
  bool sensitivities = false;
  std::int8_t* sensitivity_status = nullptr;  // -1: not scored
  std::vector<double*> sensitivity;           // 12 columns
  const PdCalibration* calibration = nullptr;
  std::vector<double*> calibrated;      // pd, lower, upper
  std::int8_t* extrapolated = nullptr;  // -1: not scored
};

// Per worker, reused from block to block.
struct Scratch {
  std::vector<ObligorRecord> recs = std::vector<ObligorRecord>(kBlockRows);
  std::vector<ResolvedObligor> resolved = std::vector<ResolvedObligor>(kBlockRows);
  std::vector<MertonInputs> inputs;
  std::vector<AssetSolution> solutions;
};

// The row's status and message as the score command sets them (score_book.cpp), "row N: "
// standing where the CLI says "line N: ".
RowStatus finish_row(std::size_t row, const ResolvedObligor& r, const AssetSolution& s, MertonMeasures& m,
                     std::string& message) {
  const std::string where = "row " + std::to_string(row) + ": ";
  if (!r.ok()) {
    message = where + r.error;
    return RowStatus::invalid_input;
  }
  if (!s.usable()) {
    char buf[160];
    if (std::isfinite(s.residual)) {
      std::snprintf(buf, sizeof buf, "solver did not converge (residual %.3g after %d iterations)",
                    s.residual, s.iterations);
    } else {
      std::snprintf(buf, sizeof buf, "solver did not converge (no finite residual after %d iterations)",
                    s.iterations);
    }
    message = where + buf;
    return RowStatus::not_converged;
  }
  m = merton_measures(r.inputs, s.asset_value, s.asset_vol_annual);
  const double all[] = {m.asset_value, m.asset_vol_annual, m.leverage,   m.distance_to_default,
                        m.pd,          m.pd_risk_neutral,  m.debt_value, m.spread_bp};
  for (double x : all) {
    if (!std::isfinite(x)) {
      message = where + "a derived measure is not finite for these inputs";
      return RowStatus::not_converged;
    }
  }
  return RowStatus::ok;
}

void write_row(std::size_t i, const ResolvedObligor& r, const AssetSolution& s, const MertonMeasures& m,
               RowStatus status, Outputs& out) {
  const double nan = std::nan("");
  const bool resolved = r.ok();
  const bool scored = status == RowStatus::ok;
  double v[kOutCount];
  v[col::equity_value] = resolved ? r.inputs.equity_value : nan;
  v[col::default_point] = resolved ? r.inputs.default_point : nan;
  v[col::horizon] = resolved ? r.inputs.horizon_years : nan;
  v[col::asset_value] = scored ? m.asset_value : nan;
  v[col::asset_vol] = scored ? m.asset_vol_annual : nan;
  v[col::leverage] = scored ? m.leverage : nan;
  v[col::distance_to_default] = scored ? m.distance_to_default : nan;
  v[col::pd] = scored ? m.pd : nan;
  v[col::pd_one_year] = scored ? pd_one_year(m.pd, r.inputs.horizon_years) : nan;
  v[col::pd_risk_neutral] = scored ? m.pd_risk_neutral : nan;
  v[col::debt_value] = scored ? m.debt_value : nan;
  v[col::spread_bp] = scored ? m.spread_bp : nan;
  v[col::residual] = s.residual >= 0.0 ? s.residual : nan;
  for (std::size_t k = 0; k < kOutCount; ++k) out.num[k][i] = v[k];
  out.iterations[i] = s.residual >= 0.0 ? s.iterations : -1;
  out.status[i] = static_cast<std::uint8_t>(status);
  if (out.sensitivities) {
    MertonSensitivities sens;
    if (scored) sens = sensitivities_of(r, s);
    out.sensitivity_status[i] = scored ? static_cast<std::int8_t>(sens.status) : std::int8_t{-1};
    const MeasureChange* groups[] = {&sens.equity, &sens.equity_vol, &sens.default_point, &sens.rate};
    for (std::size_t g = 0; g < 4; ++g) {
      const bool shown = scored && sens.ok();
      out.sensitivity[3 * g][i] = shown ? groups[g]->distance_to_default : nan;
      out.sensitivity[3 * g + 1][i] = shown ? groups[g]->pd : nan;
      out.sensitivity[3 * g + 2][i] = shown ? groups[g]->spread_bp : nan;
    }
  }
  if (out.calibration) {
    const CalibratedPd p =
        scored ? out.calibration->evaluate(m.distance_to_default) : CalibratedPd{nan, nan, nan, false};
    out.calibrated[0][i] = p.pd;
    out.calibrated[1][i] = p.lower;
    out.calibrated[2][i] = p.upper;
    out.extrapolated[i] = std::isfinite(p.pd) ? static_cast<std::int8_t>(p.extrapolated) : std::int8_t{-1};
  }
}

// Scores rows [begin, end) in blocks: fill records, resolve, solve the valid ones together.
void score_slice(const Inputs& in, const ScoreSettings& settings, std::size_t begin, std::size_t end,
                 Scratch& sc, Outputs& out, std::vector<std::pair<std::size_t, std::string>>& messages) {
  const BookDefaults no_defaults;
  std::string message;
  MertonMeasures measures;
  for (std::size_t b = begin; b < end; b += kBlockRows) {
    const std::size_t n = std::min(kBlockRows, end - b);
    sc.inputs.clear();
    for (std::size_t k = 0; k < n; ++k) {
      const std::size_t i = b + k;
      ObligorRecord& rec = sc.recs[k];
      rec.clear();
      rec.line = i;
      for (const auto& [field, values] : in.numbers) {
        if (!std::isnan(values[i])) rec.set(field, values[i]);
      }
      for (const auto& [field, values] : in.texts) rec.get(field).assign(values[i]);
      if (!in.duplicate_error.empty() && !in.duplicate_error[i].empty())
        rec.read_error = in.duplicate_error[i];
      resolve_obligor(rec, no_defaults, settings, sc.resolved[k]);
      if (sc.resolved[k].ok()) sc.inputs.push_back(sc.resolved[k].inputs);
    }
    sc.solutions.resize(sc.inputs.size());
    solve_asset_batch(sc.inputs.data(), sc.solutions.data(), sc.inputs.size(), settings.solver);
    std::size_t solved = 0;
    for (std::size_t k = 0; k < n; ++k) {
      const ResolvedObligor& r = sc.resolved[k];
      const AssetSolution s = r.ok() ? sc.solutions[solved++] : AssetSolution{};
      message.clear();
      const RowStatus status = finish_row(b + k, r, s, measures, message);
      write_row(b + k, r, s, measures, status, out);
      if (!message.empty()) messages.emplace_back(b + k, message);
    }
  }
}

// The later of two rows with the same id is invalid, as in the score command.
std::vector<std::string> duplicate_errors(const std::vector<std::string>& ids) {
  std::vector<std::string> errors;
  IdRegistry seen;
  seen.reserve(ids.size());
  for (std::size_t i = 0; i < ids.size(); ++i) {
    if (ids[i].empty()) continue;
    const std::size_t first = seen.insert(IdRegistry::hash(ids[i]), i + 1);  // 0 means "new"
    if (first != 0) {
      if (errors.empty()) errors.resize(ids.size());
      errors[i] = "field 'id': duplicate of the obligor at row " + std::to_string(first - 1);
    }
  }
  return errors;
}

template <typename T>
T* column(py::dict& result, const char* name, std::size_t n) {
  py::array_t<T> a(static_cast<py::ssize_t>(n));
  result[name] = a;
  return a.mutable_data();
}

py::dict score_arrays(std::size_t n, const py::dict& numbers, const py::dict& texts,
                      const py::dict& options) {
  Inputs in;
  in.n = n;
  std::vector<DoubleArray> keep;  // the arrays stay alive while the threads read them
  for (const auto& [key, value] : numbers) {
    const std::string name = py::cast<std::string>(key);
    std::optional<NumField> num;
    std::optional<TextField> text;
    if (!field_from_string(name, num, text) || !num)
      throw py::value_error("unknown numeric field '" + name + "'");
    keep.push_back(py::cast<DoubleArray>(value));
    if (static_cast<std::size_t>(keep.back().size()) != n)
      throw py::value_error("field '" + name + "': wrong length");
    in.numbers.emplace_back(*num, keep.back().data());
  }
  for (const auto& [key, value] : texts) {
    const std::string name = py::cast<std::string>(key);
    std::optional<NumField> num;
    std::optional<TextField> text;
    if (!field_from_string(name, num, text) || !text)
      throw py::value_error("unknown text field '" + name + "'");
    in.texts.emplace_back(*text, py::cast<std::vector<std::string>>(value));
    if (in.texts.back().second.size() != n) throw py::value_error("field '" + name + "': wrong length");
  }
  for (const auto& [field, values] : in.texts) {
    if (field == TextField::id) in.duplicate_error = duplicate_errors(values);
  }

  Config config;
  if (!options["config"].is_none()) config = load_config(py::cast<std::string>(options["config"]));
  ScoreSettings settings = config.score;
  if (!options["rate"].is_none()) settings.rate_override = py::cast<double>(options["rate"]);
  if (!options["horizon"].is_none()) settings.horizon_override = py::cast<double>(options["horizon"]);
  if (!options["default_point_weight"].is_none())
    settings.weight_override = py::cast<double>(options["default_point_weight"]);
  if (!options["measure"].is_none()) {
    const auto m = measure_from_string(py::cast<std::string>(options["measure"]));
    if (!m) throw py::value_error("measure: expected 'physical' or 'risk-neutral'");
    settings.measure = *m;
  }
  CalibrationRecord calibration;
  const bool calibrated = !options["pd_calibration"].is_none();
  if (calibrated) calibration = read_calibration(py::cast<std::string>(options["pd_calibration"]));
  const unsigned threads = std::max(1U, py::cast<unsigned>(options["threads"]));

  py::dict result;
  Outputs out;
  for (const char* name : kOutNames) out.num.push_back(column<double>(result, name, n));
  out.iterations = column<std::int64_t>(result, "iterations", n);
  out.status = column<std::uint8_t>(result, "status_code", n);
  out.sensitivities = py::cast<bool>(options["sensitivities"]);
  if (out.sensitivities) {
    out.sensitivity_status = column<std::int8_t>(result, "sensitivity_status_code", n);
    const auto& names = sensitivity_columns();
    for (std::size_t k = 1; k < names.size(); ++k)
      out.sensitivity.push_back(column<double>(result, std::string(names[k]).c_str(), n));
  }
  if (calibrated) {
    out.calibration = &calibration.calibration;
    for (const char* name : {"pd_calibrated", "pd_calibrated_lower", "pd_calibrated_upper"})
      out.calibrated.push_back(column<double>(result, name, n));
    out.extrapolated = column<std::int8_t>(result, "pd_calibrated_extrapolated_code", n);
  }

  std::vector<Scratch> scratch(threads);
  std::vector<std::vector<std::pair<std::size_t, std::string>>> messages(threads);
  {
    py::gil_scoped_release unlocked;
    parallel_slices(
        n, threads,
        [&](unsigned w, std::size_t b, std::size_t e) {
          score_slice(in, settings, b, e, scratch[w], out, messages[w]);
        },
        kBlockRows);
  }
  py::list rows, texts_out;
  for (const auto& list : messages) {
    for (const auto& [row, text] : list) {
      rows.append(row);
      texts_out.append(text);
    }
  }
  result["message_rows"] = rows;
  result["message_texts"] = texts_out;
  return result;
}

}  // namespace
}  // namespace firmcall

PYBIND11_MODULE(_native, m) {
  m.doc() = "firmcall's native scorer; use firmcall.score()";
  py::register_exception<firmcall::InputError>(m, "InputError", PyExc_ValueError);
  m.def("_score_arrays", &firmcall::score_arrays, py::arg("n"), py::arg("numbers"), py::arg("texts"),
        py::arg("options"));
  py::list status_names, sensitivity_status_names;
  for (auto s :
       {firmcall::RowStatus::ok, firmcall::RowStatus::invalid_input, firmcall::RowStatus::not_converged})
    status_names.append(std::string(firmcall::to_string(s)));
  for (auto s : {firmcall::SensitivityStatus::ok, firmcall::SensitivityStatus::singular,
                 firmcall::SensitivityStatus::invalid_input})
    sensitivity_status_names.append(std::string(firmcall::to_string(s)));
  m.attr("status_names") = status_names;
  m.attr("sensitivity_status_names") = sensitivity_status_names;
  py::list score_columns, sensitivity_columns;
  for (auto c : firmcall::score_columns()) score_columns.append(std::string(c));
  for (auto c : firmcall::sensitivity_columns()) sensitivity_columns.append(std::string(c));
  m.attr("score_columns") = score_columns;
  m.attr("sensitivity_columns") = sensitivity_columns;
  py::list fields;
  for (const auto& f : firmcall::obligor_field_names()) fields.append(f);
  m.attr("obligor_fields") = fields;
}
