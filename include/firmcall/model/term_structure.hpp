// Default-probability term structure of one obligor: the cumulative, annualised and forward PD and
// the model spread at each of a list of horizons, under the Merton (1974) model or the
// first-passage model of Black and Cox (1976) (first_passage.hpp).
//
// Calibration. By default (V, sV) is solved once, at the obligor's own horizon T (the debt maturity
// of the model; 1 year unless the obligor, the book or --horizon says otherwise), and every other
// horizon t is projected from that one asset process. Calibration::per_horizon instead re-solves
// at each horizon with T = t, as if the debt matured there; the curve then mixes calibrations.
//
// Merton at horizon t (default can only happen at t):
//   DD(t) = [ln(V/DP) + (mu - sV^2/2) t] / (sV sqrt t),   PD(t) = N(-DD(t)) = P(V_t < DP)
//   spread(t) = Merton spread of zero-coupon debt with face DP due at t (merton_measures at T = t).
//   P(V_t < DP) is not a probability of default *by* t: when mu - sV^2/2 > 0 it falls once
//   t > ln(V/DP) / (mu - sV^2/2), and the forward PD is then negative.
// First passage at horizon t (default the first time V touches H(t) = H0 e^(g t)):
//   DD(t) = [ln(V/H0) + (mu - g - sV^2/2) t] / (sV sqrt t)   (expected log distance to H(t), in sd)
//   PD(t) = P(tau <= t), non-decreasing in t.
//   spread(t) = -ln(1 - LGD Q(t)) / t, Q(t) the risk-neutral PD(t): zero-coupon debt that pays its
//   face at t, or (1 - LGD) of it at t after a default (recovery of face; common practice). The
//   model's own recovery (the assets at the barrier) is not used: with the barrier at the face
//   value, bondholders would be paid the face early, worth more than riskless debt.
// Both: annualised PD a(t) = 1 - (1 - PD(t))^(1/t); forward (conditional) PD between consecutive
// horizons f_i = [PD(t_i) - PD(t_{i-1})] / [1 - PD(t_{i-1})], and f_1 = PD(t_1) (from now).
//
// Nothing here allocates or throws.
//
// **Example**:
//   const double horizons[] = {0.5, 1, 2, 3, 5, 7, 10};
//   firmcall::TermPoint curve[7];
//   firmcall::TermRequest request;
//   request.model = firmcall::TermModel::first_passage;
//   firmcall::term_structure(inputs, request, horizons, 7, curve);
//   if (curve[4].ok()) use(curve[4].pd);   // probability of default within 5 years
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string_view>

#include "firmcall/model/first_passage.hpp"
#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"

namespace firmcall {

enum class TermModel : std::uint8_t { merton, first_passage };
/// "merton" or "first-passage".
std::string_view to_string(TermModel model) noexcept;
std::optional<TermModel> term_model_from_string(std::string_view s) noexcept;

/// once: (V, sV) solved at the obligor's horizon and projected. per_horizon: re-solved at each horizon.
enum class Calibration : std::uint8_t { once, per_horizon };
/// "once" or "per-horizon".
std::string_view to_string(Calibration calibration) noexcept;
std::optional<Calibration> calibration_from_string(std::string_view s) noexcept;

/// ok: every value of the point is finite. invalid_input: the inputs (or barrier) were rejected.
/// max_iterations, not_bracketed: the calibration failed (see the solvers). not_finite: a derived
/// value overflowed or is undefined.
enum class TermStatus : std::uint8_t { ok, invalid_input, max_iterations, not_bracketed, not_finite };
std::string_view to_string(TermStatus status) noexcept;

/// One horizon of one obligor under one model.
struct TermPoint {
  double horizon_years = 0.0;              ///< t, years
  double calibration_horizon_years = 0.0;  ///< T at which (V, sV) was solved, years
  TermStatus status = TermStatus::invalid_input;
  int iterations = -1;               ///< solver steps of the calibration; -1: not run
  double residual = -1.0;            ///< calibration residual (solver's measure); -1: not run
  double asset_value = 0.0;          ///< V, currency units
  double asset_vol_annual = 0.0;     ///< sV, annualised decimal
  double barrier = 0.0;              ///< H(t), currency units (first passage; NaN for Merton)
  double distance_to_default = 0.0;  ///< DD(t), standard deviations (see the file comment)
  double pd = 0.0;                   ///< cumulative PD by t (measure's drift), probability
  double survival = 1.0;             ///< 1 - pd, computed so that it keeps its relative accuracy
  double pd_annualised = 0.0;        ///< 1 - (1 - pd)^(1/t), probability per year
  double pd_forward = 0.0;           ///< PD between the previous horizon and t given survival to it
  double pd_risk_neutral = 0.0;      ///< cumulative PD by t under the risk-neutral measure
  double spread_bp = 0.0;            ///< model spread of debt due at t, basis points
  bool ok() const noexcept { return status == TermStatus::ok; }
};

/// What to compute for one obligor.
struct TermRequest {
  TermModel model = TermModel::merton;
  Calibration calibration = Calibration::once;
  Barrier barrier;            ///< first passage only
  double lgd = 0.45;          ///< loss given default for the first-passage spread, in [0, 1]
  MertonSolveOptions solver;  ///< used by both calibrations
};

/// The term structure at horizons[0..n) (each > 0, strictly increasing) into out[0..n). Under
/// Calibration::once the calibration horizon is in.horizon_years.
void term_structure(const MertonInputs& in, const TermRequest& request, const double* horizons, std::size_t n,
                    TermPoint* out) noexcept;

/// Merton measures at horizon t from a known (V, sV); annualised and forward PDs are left to
/// fill_forward_pds.
TermPoint merton_point(const MertonInputs& in, double asset_value, double asset_vol_annual,
                       double horizon_years) noexcept;

/// First-passage measures at horizon t from a known (V, sV); drift and rate from in.merton.
TermPoint first_passage_point(const FirstPassageInputs& in, double asset_value, double asset_vol_annual,
                              double horizon_years, double lgd) noexcept;

/// Sets pd_annualised and pd_forward of consecutive points from their pd and survival. A forward
/// PD whose point or predecessor is not ok, or whose predecessor has survival 0, is NaN.
void fill_forward_pds(TermPoint* points, std::size_t n) noexcept;

}  // namespace firmcall
