// Inversion of the Merton (1974) model: from the observed equity value E and equity volatility sE,
// find the unobserved asset value V and asset volatility sV that solve
//
//   E       = V N(d1) - K N(d2)          (equity is a call on the assets, K = DP exp(-rT))
//   sE * E  = N(d1) sV V                 (Ito's lemma on E = C(V))
//
// For every valid input the system has exactly one solution, inside the box
//   E < V < E + K,   sE E / (E + K) < sV < sE.
// The solver runs a damped Newton iteration on the 2x2 system in (ln V, ln sV) with the analytic
// Jacobian and Chebyshev's third-order correction near the solution, projected into that box, from
// the start V0 = E + K, sV0 = sE E / V0. It stops at an iterate whose next Newton step would be at
// most 1e-15 in log units (relative error of that order), at a residual at the rounding floor, or
// when a step is below rounding. If Newton does not converge within its budget, a bracketed nested 1-D solve
// (Boost.Math TOMS 748, Alefeld, Potra and Shi 1995) on the same box takes over; it cannot fail to bracket.
//
// Nothing here throws, and nothing allocates for valid options (only options that fail validate()
// build its message); the result carries a status and diagnostics.
//
// **Example**:
//   firmcall::MertonInputs in{.equity_value = 400, .equity_vol_annual = 0.45, .default_point = 700,
//                             .risk_free_rate_cc = 0.03, .horizon_years = 1, .drift_annual = 0.03};
//   firmcall::AssetSolution s = firmcall::solve_asset(in);
//   if (s.usable()) use(s.asset_value, s.asset_vol_annual);
#pragma once

#include <cstddef>
#include <cstdint>
#include <string_view>

#include "firmcall/model/merton.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

struct MertonSolveOptions {
  int max_newton_iterations = 60;     ///< damped Newton steps before the bracketed fallback
  int max_fallback_iterations = 200;  ///< TOMS 748 evaluations per 1-D level in the fallback
  /// A solution is accepted ("converged") when
  ///   max(|E_model - E| / (E + K), |N(d1) sV V / (sE E) - 1|) <= residual_tolerance.
  double residual_tolerance = 1e-12;
  /// Both budgets positive (as the settings reader requires), residual_tolerance positive (NaN is
  /// refused). solve_asset() and solve_asset_batch() return invalid_input when this fails.
  OptionCheck validate() const;
};

/// converged: residual within tolerance. max_iterations: budget spent, last iterate not usable.
/// invalid_input: validate() rejected the inputs (input_check says why) or the options failed
/// MertonSolveOptions::validate() (input_check then stays ok); the solver did not run.
enum class SolveStatus : std::uint8_t { converged, max_iterations, invalid_input };

/// Which method produced the final iterate.
enum class SolveMethod : std::uint8_t { none, newton, bracketed };

std::string_view to_string(SolveStatus status) noexcept;
std::string_view to_string(SolveMethod method) noexcept;

struct AssetSolution {
  double asset_value = 0.0;       ///< V, currency units (valid only when usable())
  double asset_vol_annual = 0.0;  ///< sV, annualised decimal (valid only when usable())
  SolveStatus status = SolveStatus::invalid_input;
  SolveMethod method = SolveMethod::none;
  int iterations = 0;            ///< Newton steps plus, if used, fallback function evaluations
  double residual = -1.0;        ///< same measure as MertonSolveOptions::residual_tolerance; -1: not run
  MertonInputCheck input_check;  ///< set when status == invalid_input
  bool usable() const noexcept { return status == SolveStatus::converged; }
};

/// Solves the Merton system for (V, sV). Never throws; allocates nothing for valid options.
AssetSolution solve_asset(const MertonInputs& in, const MertonSolveOptions& options = {}) noexcept;

/// Solves n obligors: out[i] is exactly what solve_asset(in[i], options) returns, but up to
/// sixteen obligors are iterated side by side as vector instructions and blocks of vector math
/// (vector_math.hpp); no obligor's arithmetic depends on the others. Much faster than a loop of
/// solve_asset calls.
void solve_asset_batch(const MertonInputs* in, AssetSolution* out, std::size_t n,
                       const MertonSolveOptions& options = {}) noexcept;

/// The residual measure used for acceptance, at an arbitrary (V, sV).
double solve_residual(const MertonInputs& in, double asset_value, double asset_vol_annual) noexcept;

}  // namespace firmcall
