// Default-probability term structure. See include/firmcall/term_structure.hpp.
#include "firmcall/model/term_structure.hpp"

#include <cmath>

#include "firmcall/model/normal.hpp"

namespace firmcall {

std::string_view to_string(TermModel model) noexcept {
  return model == TermModel::merton ? "merton" : "first-passage";
}

std::optional<TermModel> term_model_from_string(std::string_view s) noexcept {
  if (s == "merton") return TermModel::merton;
  if (s == "first-passage") return TermModel::first_passage;
  return std::nullopt;
}

std::string_view to_string(Calibration calibration) noexcept {
  return calibration == Calibration::once ? "once" : "per-horizon";
}

std::optional<Calibration> calibration_from_string(std::string_view s) noexcept {
  if (s == "once") return Calibration::once;
  if (s == "per-horizon") return Calibration::per_horizon;
  return std::nullopt;
}

std::string_view to_string(TermStatus status) noexcept {
  switch (status) {
    case TermStatus::ok:
      return "ok";
    case TermStatus::invalid_input:
      return "invalid_input";
    case TermStatus::max_iterations:
      return "max_iterations";
    case TermStatus::not_bracketed:
      return "not_bracketed";
    case TermStatus::not_finite:
      return "not_finite";
  }
  return "";
}

namespace {

bool all_finite(const TermPoint& p, bool with_barrier) noexcept {
  const double v[] = {p.asset_value,     p.asset_vol_annual, p.distance_to_default, p.pd, p.survival,
                      p.pd_risk_neutral, p.spread_bp};
  for (double x : v) {
    if (!std::isfinite(x)) return false;
  }
  return !with_barrier || std::isfinite(p.barrier);
}

// Completes a point's status once its measures are set.
void settle(TermPoint& p, bool with_barrier) noexcept {
  p.status = all_finite(p, with_barrier) ? TermStatus::ok : TermStatus::not_finite;
}

}  // namespace

TermPoint merton_point(const MertonInputs& in, double v, double sv, double t) noexcept {
  TermPoint p;
  MertonInputs at = in;
  at.horizon_years = t;
  const MertonMeasures m = merton_measures(at, v, sv);
  p.horizon_years = t;
  p.calibration_horizon_years = in.horizon_years;
  p.asset_value = v;
  p.asset_vol_annual = sv;
  p.barrier = std::nan("");
  p.distance_to_default = m.distance_to_default;
  p.pd = m.pd;
  p.survival = norm_cdf(m.distance_to_default);
  p.pd_risk_neutral = m.pd_risk_neutral;
  p.spread_bp = m.spread_bp;
  settle(p, false);
  return p;
}

TermPoint first_passage_point(const FirstPassageInputs& in, double v, double sv, double t,
                              double lgd) noexcept {
  TermPoint p;
  const double h0 = in.barrier.default_point_ratio * in.merton.default_point;
  const double g = in.barrier.growth_rate_cc;
  FirstPassagePath path{.asset_value = v,
                        .asset_vol_annual = sv,
                        .drift_annual = in.merton.drift_annual,
                        .barrier = h0,
                        .barrier_growth_cc = g};
  const FirstPassageProbability physical = first_passage_probability(path, t);
  path.drift_annual = in.merton.risk_free_rate_cc;
  const FirstPassageProbability neutral = first_passage_probability(path, t);
  p.horizon_years = t;
  p.calibration_horizon_years = in.merton.horizon_years;
  p.asset_value = v;
  p.asset_vol_annual = sv;
  p.barrier = h0 * std::exp(g * t);
  p.distance_to_default =
      (std::log(v / h0) + (in.merton.drift_annual - g - 0.5 * sv * sv) * t) / (sv * std::sqrt(t));
  p.pd = physical.pd;
  p.survival = physical.survival;
  p.pd_risk_neutral = neutral.pd;
  // Recovery of face: the bond pays 1 - LGD Q(t) in expectation at t; log1p keeps tiny spreads exact.
  p.spread_bp = 1e4 * (-std::log1p(-lgd * neutral.pd) / t);
  settle(p, true);
  return p;
}

void fill_forward_pds(TermPoint* pts, std::size_t n) noexcept {
  const double nan = std::nan("");
  for (std::size_t i = 0; i < n; ++i) {
    TermPoint& p = pts[i];
    if (!p.ok()) {
      p.pd_annualised = nan;
      p.pd_forward = nan;
      continue;
    }
    const double t = p.horizon_years;
    // 1 - (1 - pd)^(1/t) through logs, from whichever of pd and survival is the accurate one.
    if (!(p.survival > 0.0)) {
      p.pd_annualised = 1.0;
    } else {
      const double log_survival = p.pd < 0.5 ? std::log1p(-p.pd) : std::log(p.survival);
      p.pd_annualised = -std::expm1(log_survival / t);
    }
    if (i == 0) {
      p.pd_forward = p.pd;
      continue;
    }
    const TermPoint& q = pts[i - 1];
    if (!q.ok() || !(q.survival > 0.0)) {
      p.pd_forward = nan;
      continue;
    }
    // Small PDs: the difference of PDs keeps its digits; large ones: the ratio of survivals.
    p.pd_forward = (p.pd < 0.5 && q.pd < 0.5) ? (p.pd - q.pd) / q.survival : 1.0 - p.survival / q.survival;
  }
}

namespace {

TermStatus status_of(SolveStatus s) noexcept {
  switch (s) {
    case SolveStatus::converged:
      return TermStatus::ok;
    case SolveStatus::max_iterations:
      return TermStatus::max_iterations;
    case SolveStatus::invalid_input:
      return TermStatus::invalid_input;
  }
  return TermStatus::invalid_input;
}

TermStatus status_of(FirstPassageStatus s) noexcept {
  switch (s) {
    case FirstPassageStatus::converged:
      return TermStatus::ok;
    case FirstPassageStatus::max_iterations:
      return TermStatus::max_iterations;
    case FirstPassageStatus::not_bracketed:
      return TermStatus::not_bracketed;
    case FirstPassageStatus::invalid_input:
      return TermStatus::invalid_input;
  }
  return TermStatus::invalid_input;
}

// Calibration at inputs `at` (its horizon is the debt maturity), then the point at t.
TermPoint solve_and_measure(const MertonInputs& at, const TermRequest& req, double t) noexcept {
  TermPoint p;
  TermStatus status;
  int iterations;
  double residual;
  if (req.model == TermModel::merton) {
    const AssetSolution s = solve_asset(at, req.solver);
    status = status_of(s.status);
    iterations = s.iterations;
    residual = s.residual;
    if (status == TermStatus::ok) p = merton_point(at, s.asset_value, s.asset_vol_annual, t);
  } else {
    const FirstPassageInputs fp{at, req.barrier};
    const FirstPassageSolution s = solve_first_passage(fp, req.solver);
    status = status_of(s.status);
    iterations = s.iterations;
    residual = s.residual;
    if (status == TermStatus::ok) p = first_passage_point(fp, s.asset_value, s.asset_vol_annual, t, req.lgd);
  }
  if (status != TermStatus::ok) {
    p = TermPoint{};
    p.status = status;
  }
  p.horizon_years = t;
  p.calibration_horizon_years = at.horizon_years;
  p.iterations = status == TermStatus::invalid_input ? -1 : iterations;
  p.residual = status == TermStatus::invalid_input ? -1.0 : residual;
  return p;
}

}  // namespace

void term_structure(const MertonInputs& in, const TermRequest& req, const double* horizons, std::size_t n,
                    TermPoint* out) noexcept {
  if (n == 0) return;
  if (req.calibration == Calibration::per_horizon) {
    for (std::size_t i = 0; i < n; ++i) {
      MertonInputs at = in;
      at.horizon_years = horizons[i];
      out[i] = solve_and_measure(at, req, horizons[i]);
    }
  } else {
    out[0] = solve_and_measure(in, req, horizons[0]);
    const TermPoint& first = out[0];
    for (std::size_t i = 1; i < n; ++i) {
      if (!first.ok() && first.status != TermStatus::not_finite) {
        out[i] = first;
        out[i].horizon_years = horizons[i];
        continue;
      }
      TermPoint p = req.model == TermModel::merton
                        ? merton_point(in, first.asset_value, first.asset_vol_annual, horizons[i])
                        : first_passage_point({in, req.barrier}, first.asset_value, first.asset_vol_annual,
                                              horizons[i], req.lgd);
      p.iterations = first.iterations;
      p.residual = first.residual;
      out[i] = p;
    }
  }
  fill_forward_pds(out, n);
}

}  // namespace firmcall
