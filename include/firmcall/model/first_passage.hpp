// First-passage model of default (Black and Cox, 1976): the firm defaults the first time its
// assets touch a barrier, not only at the horizon as in Merton (1974).
//
// Assets follow V_t = V exp((m - sV^2/2) t + sV W_t), with m = r under the risk-neutral measure and
// m = mu under the physical one. The barrier is H(t) = H0 exp(g t), H0 = ratio x DP (default: the
// default point itself, not growing). With X_t = ln(V_t / H(t)), a Brownian motion with drift
// nu = m - g - sV^2/2 started at x0 = ln(V/H0) > 0, the probability of default by t is
// (the first-passage law of Brownian motion with drift, from the reflection principle):
//
//   P(tau <= t) = N(-(x0 + nu t)/(sV sqrt t)) + exp(-2 nu x0 / sV^2) N(-(x0 - nu t)/(sV sqrt t)).
//
// Equity is a down-and-out call on the assets: it pays (V_T - DP)^+ at T unless the assets touched
// the barrier before, and nothing otherwise. With Y_t = V_t exp(-g t) (a constant barrier H0 for an
// asset with carry b = r - g) and the reflection principle for any payoff f vanishing below H0,
//
//   DOC(V) = F(V) - (H0/V)^(2 k) F(H0^2 / V),   k = (b - sV^2/2) / sV^2,
//   F(S)   = S N(d1(S)) - DP e^(-rT) N(d2(S)),
//   d1(S)  = [ln(S/L) + (b + sV^2/2) T] / (sV sqrt T),  d2 = d1 - sV sqrt T,  L = max(DP e^(-gT), H0),
//
// the standard barrier formulas (Merton 1973; Reiner and Rubinstein 1991; Haug, The Complete Guide
// to Option Pricing Formulas, 2nd ed., "Standard barrier options") in the form the calibration
// needs. Its delta is
//
//   dDOC/dV = F'(V) + (H0/V)^(2k) [2k F(V*) + V* F'(V*)] / V,   V* = H0^2 / V,
//   F'(S)   = N(d1(S)) + (L e^(gT) - DP) e^(-rT) phi(d2(S)) / (S sV sqrt T).
//
// Calibration solves the two equations of the Merton approach with this equity value:
//   E = DOC(V, sV),   sE E = (dDOC/dV) sV V.
// A damped Newton iteration in (ln V, ln sV) with a central-difference Jacobian starts from the
// Merton solution; if it falls short, a bracketed nested 1-D solve (Boost.Math TOMS 748) takes over.
// The system need not have a solution for every input. As sV -> 0 a path that starts just above a
// barrier that grows no faster than r is never knocked out, so equity is then worth at least about
// H0 - DP e^(-rT); an equity value below that floor often has no solution (reported as
// not_bracketed), and just above it the equations are ill-conditioned.
//
// Nothing here allocates or throws; results carry a status.
//
// **Example**:
//   firmcall::FirstPassageInputs in{.merton = {.equity_value = 400, .equity_vol_annual = 0.45,
//                                              .default_point = 700, .risk_free_rate_cc = 0.03,
//                                              .horizon_years = 1, .drift_annual = 0.05},
//                                   .barrier = {.default_point_ratio = 1.0, .growth_rate_cc = 0.0}};
//   firmcall::FirstPassageSolution s = firmcall::solve_first_passage(in);
//   if (s.usable()) pd = firmcall::first_passage_probability(firmcall::path_of(in, s), 5.0).pd;
#pragma once

#include <cstdint>
#include <string_view>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"

namespace firmcall {

/// Where the default barrier sits: H(t) = default_point_ratio x DP x exp(growth_rate_cc t).
struct Barrier {
  double default_point_ratio = 1.0;  ///< H(0) / DP (> 0); 1 puts the barrier at the default point
  double growth_rate_cc = 0.0;       ///< g, continuously compounded decimal per year (|g| <= 1)
};

/// The first broken constraint of a barrier as a static message ("" when valid).
const char* barrier_problem(const Barrier& barrier) noexcept;

/// A down-and-out call on an asset without payouts: pays (V_T - K)^+ at T unless the asset touched
/// the barrier H(t) = H0 exp(g t) at some t in [0, T].
struct DownAndOutCall {
  double asset_value = 0.0;        ///< V, currency units (> 0)
  double asset_vol_annual = 0.0;   ///< sV, annualised decimal (> 0)
  double strike = 0.0;             ///< K, currency units (> 0)
  double barrier = 0.0;            ///< H0, currency units (> 0)
  double barrier_growth_cc = 0.0;  ///< g, continuously compounded decimal per year
  double risk_free_rate_cc = 0.0;  ///< r, continuously compounded decimal
  double maturity_years = 1.0;     ///< T, years (> 0)
};

/// Value and delta (dValue/dV) of a down-and-out call; both 0 when V <= H0 (knocked out).
struct BarrierCallValue {
  double value = 0.0;
  double delta = 0.0;
};

/// Closed-form value and delta of a down-and-out call (see the file comment).
BarrierCallValue down_and_out_call(const DownAndOutCall& option) noexcept;

/// Assets against a barrier, for first-passage probabilities.
struct FirstPassagePath {
  double asset_value = 0.0;        ///< V at time 0, currency units
  double asset_vol_annual = 0.0;   ///< sV, annualised decimal (> 0)
  double drift_annual = 0.0;       ///< m: mu (physical) or r (risk-neutral), cc decimal
  double barrier = 0.0;            ///< H0, currency units (> 0)
  double barrier_growth_cc = 0.0;  ///< g: H(t) = H0 exp(g t)
};

/// Probability that the assets touch the barrier by t, and its complement (each computed so that it
/// keeps its relative accuracy when small). V <= H0 gives pd 1; t <= 0 gives pd 0.
struct FirstPassageProbability {
  double pd = 0.0;        ///< P(tau <= t)
  double survival = 1.0;  ///< P(tau > t) = 1 - pd
};

/// Closed-form first-passage probability by horizon t in years (see the file comment).
FirstPassageProbability first_passage_probability(const FirstPassagePath& path,
                                                  double horizon_years) noexcept;

/// An obligor under the first-passage model: its Merton inputs (E, sE, DP, r, T, mu) and a barrier.
struct FirstPassageInputs {
  MertonInputs merton;
  Barrier barrier;
};

/// Equity value of the obligor (a down-and-out call struck at DP, maturity T) at (V, sV), with delta.
BarrierCallValue first_passage_equity(const FirstPassageInputs& in, double asset_value,
                                      double asset_vol_annual) noexcept;

/// converged: residual within tolerance. max_iterations: budget spent, last iterate not usable.
/// not_bracketed: the fallback found no interval on which the equations change sign (the inputs
/// may have no solution under this barrier). invalid_input: inputs or barrier rejected; not run.
enum class FirstPassageStatus : std::uint8_t { converged, max_iterations, not_bracketed, invalid_input };
std::string_view to_string(FirstPassageStatus status) noexcept;

struct FirstPassageSolution {
  double asset_value = 0.0;       ///< V, currency units (valid only when usable())
  double asset_vol_annual = 0.0;  ///< sV, annualised decimal (valid only when usable())
  FirstPassageStatus status = FirstPassageStatus::invalid_input;
  SolveMethod method = SolveMethod::none;
  int iterations = 0;              ///< Newton steps plus, if used, fallback function evaluations
  double residual = -1.0;          ///< as MertonSolveOptions::residual_tolerance; -1: not run
  MertonInputCheck input_check;    ///< set when a Merton input is invalid
  const char* barrier_check = "";  ///< non-empty when the barrier is invalid
  bool usable() const noexcept { return status == FirstPassageStatus::converged; }
};

/// Solves E = DOC(V, sV), sE E = DOC'(V) sV V for (V, sV). Never throws, never allocates.
/// Acceptance: max(|DOC - E| / (E + DP e^(-rT)), |DOC'(V) sV V / (sE E) - 1|) <= residual_tolerance.
FirstPassageSolution solve_first_passage(const FirstPassageInputs& in,
                                         const MertonSolveOptions& options = {}) noexcept;

/// The acceptance residual at an arbitrary (V, sV).
double first_passage_residual(const FirstPassageInputs& in, double asset_value,
                              double asset_vol_annual) noexcept;

/// The path of a solved obligor under its own drift (in.merton.drift_annual) and barrier.
FirstPassagePath path_of(const FirstPassageInputs& in, const FirstPassageSolution& s) noexcept;

/// ln N(x), accurate also where N(x) underflows (x < -37: asymptotic series).
double log_norm_cdf(double x) noexcept;

}  // namespace firmcall
