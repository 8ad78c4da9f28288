// Monte Carlo simulation of portfolio losses in the multi-factor default model (factor_model.hpp),
// with standard errors on every reported figure and optional importance sampling.
//
// Scenario s draws G ~ N(0, I), sets the sector factors Y = A G, and for each obligor an
// idiosyncratic e ~ N(0, 1); obligor i defaults when sqrt(rho_i) Y_s(i) + sqrt(1 - rho_i) e_i <=
// G(PD_i), losing l_i = LGD_i EAD_i. With importance sampling, every odd-numbered scenario draws
// G ~ N(mu, I) instead, and every scenario carries the weight w = phi(G) / (phi(G)/2 +
// phi(G - mu)/2): the model density over that of the half-and-half mixture (a deterministic
// defensive mixture: Hesterberg 1995, Owen and Zhou 2000), so w <= 2 and the estimators stay
// unbiased with reliable standard errors even where idiosyncratic defaults drive the tail, which
// a pure shift handles badly. Without importance sampling w = 1.
//
// Random numbers: xoshiro256++ (Blackman and Vigna 2018) seeded for each scenario from (seed,
// scenario index) by SplitMix64, normal variates by Boost.Random's ziggurat. A scenario's draws
// therefore depend only on the seed and its index: results are the same for any thread count,
// and the tail scenarios can be drawn again for the contributions.
//
// Estimators (weights w, n scenarios, tail t = 1 - level):
//   P(L > x)  ~ (1/n) sum w 1{L > x}, standard error sqrt((mean of w^2 1{L > x} - P^2) / n);
//   VaR       the smallest simulated loss v with P(L > v) <= t; standard error from the
//             order-statistic (Bahadur) interval: half the distance between the quantiles at
//             tails t -/+ the standard error of P(L > v);
//   ES        v + (1/(n t)) sum w (L - v)^+, standard error sd(w (L - v)^+) / (t sqrt(n));
//   ES_i      ((1/n) sum w X_i 1{L > v} + E[X_i | L = v] (t - P(L > v))) / t, adding up to ES.
// The shift is mu = G(a_max) u, u the unit direction in which the large-portfolio loss grows
// fastest at mu (a fixed point), i.e. towards the most likely factor outcome of a loss at the
// highest level (Glasserman and Li 2005, the factor-mean shift); in one factor, mu = G(1 - a_max).
//
// Across processes: with options.exchange, each process draws a contiguous share of the scenarios
// (scenario_range), the root (process 0) gathers every loss and weight and computes the expected
// loss and the tails exactly as one process would, the tail scenarios are drawn again for the
// contributions in blocks handed round the processes, and the root adds the blocks' sums in block
// order. Every process returns the root's result, identical to a one-process run of the same seed
// for any number of processes and threads. Communication per process: its draws (8 bytes per
// scenario, 16 with importance sampling) to the root, and 8 (3 L n + L) bytes per contribution
// block of 1024 tail scenarios it draws (L levels, n obligors).
//
// Pure numerics: no I/O, nothing throws.
//
// **Example**:
//   std::vector<firmcall::SectorExposure> book = {{0.01, 45.0, 0.12, 0}, {0.02, 30.0, 0.15, 1}};
//   firmcall::FactorCholesky a;
//   firmcall::cholesky_of_correlation(std::vector<double>{1, 0.5, 0.5, 1}, 2, a);
//   firmcall::SimulationOptions opt;
//   opt.scenarios = 200000;
//   firmcall::SimulationResult r = firmcall::simulate_losses(book, a, opt);
#pragma once

#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/portfolio/factor_model.hpp"
#include "firmcall/portfolio/scenario_exchange.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// One obligor in the multi-factor model.
struct SectorExposure {
  double pd = 0.0;                 ///< probability of default over the horizon, decimal in [0, 1]
  double loss_amount = 0.0;        ///< loss if it defaults, LGD x EAD, currency units (>= 0)
  double asset_correlation = 0.0;  ///< rho, the weight of its sector factor, decimal in [0, 1)
  std::uint32_t factor = 0;        ///< index of its sector factor
};

struct SimulationOptions {
  std::uint64_t scenarios = 100000;
  std::uint64_t seed = 1;
  std::vector<double> confidence_levels = {0.99, 0.995, 0.999};  ///< ascending, each in (0, 1)
  bool importance_sampling = false;       ///< shift the factor mean (Glasserman and Li 2005)
  bool contributions = true;              ///< ES contributions (draws the tail scenarios again)
  unsigned threads = 1;                   ///< results do not depend on it
  std::vector<double> exceedance_points;  ///< losses x at which to estimate P(L > x), ascending
  /// Called on the calling thread between batches with (scenarios done, scenarios in all).
  std::function<void(std::uint64_t, std::uint64_t)> progress;
  /// Shares the run between processes (nullptr: this process alone); every process passes the
  /// same book, factors and options. Not owned.
  ScenarioExchange* exchange = nullptr;
  /// confidence_levels non-empty, distinct, ascending, inside (0, 1); scenarios in [2, 2^40];
  /// exceedance_points ascending (what simulate_losses refuses otherwise).
  OptionCheck validate() const;
};

/// peer_failed: another process of a shared run refused its input (this one's was valid).
enum class SimulationStatus : std::uint8_t { ok, invalid_input, peer_failed };
std::string_view to_string(SimulationStatus s) noexcept;

/// VaR and ES at one level, with standard errors.
struct SimulatedTail {
  double confidence_level = 0.0;
  double var = 0.0;         ///< currency units
  double var_se = 0.0;      ///< standard error of VaR
  double es = 0.0;          ///< currency units
  double es_se = 0.0;       ///< standard error of ES
  double exceedance = 0.0;  ///< estimated P(L > VaR)
};

struct SimulationResult {
  SimulationStatus status = SimulationStatus::invalid_input;
  std::string message;
  std::uint64_t scenarios = 0;
  double expected_loss = 0.0;     ///< (1/n) sum w L, currency units
  double expected_loss_se = 0.0;  ///< its standard error
  std::vector<SimulatedTail> tails;
  std::vector<double> es_contributions;    ///< [level * n + i], currency units
  std::vector<double> es_contribution_se;  ///< standard error of each (of its tail-sum part)
  std::vector<double> factor_shift;        ///< mu (empty without importance sampling)
  double effective_scenarios = 0.0;        ///< (sum w)^2 / sum w^2: n without importance sampling
  std::vector<double> exceedance;          ///< P(L > x) at options.exceedance_points
  std::vector<double> exceedance_se;       ///< and its standard error
};

/// Simulates the portfolio loss; `factors` is the Cholesky factor of the sector correlations and
/// every exposure's factor index must be below factors.factors.
SimulationResult simulate_losses(std::span<const SectorExposure> book, const FactorCholesky& factors,
                                 const SimulationOptions& options) noexcept;

}  // namespace firmcall
