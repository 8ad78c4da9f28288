// The exact loss distribution of a credit portfolio in the one-factor model (vasicek.hpp), with
// value at risk, expected shortfall and each obligor's contribution to expected shortfall.
//
// Method. Given the systematic factor Z = z, defaults are independent with probabilities p_i(z),
// so the conditional loss distribution is built exactly on a loss grid by the recursion of
// Andersen, Sidenius and Basu (2003), one obligor at a time:
//   P_new(k) = (1 - p) P(k) + p P(k - a)       (loss of a grid units on default).
// A loss that falls between grid points is split between the two neighbours so that its mean is
// kept: a + f units (0 <= f < 1) become a units with probability 1 - f and a + 1 with f. The last
// grid point holds all the mass at or above it. In a large book most losses are below one grid
// step (a = 0): each is then the polynomial (1 - p f) + p f x, and their product is formed as a
// tree of pairwise products (cost about the window squared per level rather than the window per
// obligor), the larger losses following one at a time. The unconditional distribution is the integral
// over z against the normal density, done by adaptive product-Simpson quadrature on [-8.5, 8.5]
// (the weights integrate the quadratic interpolant exactly against the normal density; the mass
// beyond goes to the end nodes). Panels are bisected until the estimated error of every
// exceedance probability P(L > x) is below `tolerance` relative to P(L > x) + a floor of a tenth of
// the smallest reported tail.
//
// Risk measures, for a level a with tail t = 1 - a, on the grid (unit u):
//   VaR = the smallest grid loss v with P(L > v) <= t,
//   ES  = (E[L 1{L > v}] + v (t - P(L > v))) / t           (Acerbi and Tasche 2002),
// and obligor i's contribution, which adds up to ES:
//   ES_i = (E[X_i 1{L > v}] + E[X_i | L = v] (t - P(L > v))) / t.
// E[X_i 1{L > v} | z] needs the distribution of the loss without obligor i; it is built from
// prefix and suffix convolutions (no deconvolution, so no instability), for the factor values
// where L is neither almost surely below nor almost surely above v.
//
// Pure numerics: no I/O, nothing throws; allocates its working memory up front.
//
// **Example**:
//   std::vector<firmcall::FactorExposure> book = {{0.01, 45.0, 0.12}, {0.02, 30.0, 0.15}};
//   firmcall::OneFactorOptions opt;
//   opt.confidence_levels = {0.99, 0.999};
//   firmcall::LossDistribution d = firmcall::one_factor_loss_distribution(book, opt);
//   if (d.status == firmcall::LossStatus::ok) { double var999 = d.tails[1].var; }
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/portfolio/vasicek.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

struct OneFactorOptions {
  std::vector<double> confidence_levels = {0.99, 0.995, 0.999};  ///< ascending, each in (0, 1)
  std::size_t grid_points = 2048;                                ///< K, points of the loss grid (>= 16)
  /// > 0: currency units per grid step, fixed (the grid covers [0, (K - 1) unit]); 0: chosen so that
  /// the grid reaches well past the largest VaR (doubled and recomputed if the top holds too much).
  double loss_unit = 0.0;
  double tolerance = 1e-3;       ///< relative error allowed on exceedance probabilities
  std::size_t max_nodes = 8193;  ///< quadrature budget (factor values evaluated)
  bool contributions = true;     ///< compute the ES contributions
  /// From this many obligors on, each factor value evaluates the conditional PDs in blocks of eight
  /// (libmvec's erfc, within 4 ulp of the C library's) and multiplies the obligors whose loss is
  /// below one grid step pairwise (a product tree) instead of one at a time; smaller books take the
  /// one-at-a-time recursion. Both are exact up to rounding.
  std::size_t batch_from = 4096;
  unsigned threads = 1;  ///< worker threads; results do not depend on it
  /// confidence_levels non-empty, distinct, ascending, inside (0, 1); grid_points in [16, 2^24];
  /// tolerance positive; loss_unit finite and >= 0; max_nodes >= 64 (what
  /// one_factor_loss_distribution refuses otherwise).
  OptionCheck validate() const;
};

/// ok: computed within tolerance. tolerance_not_met: the node budget ran out first (the result is
/// usable, with `error_estimate` above the tolerance). grid_too_short: a VaR falls on the last grid
/// point with a fixed loss unit. invalid_input: an exposure or option is out of range (message).
enum class LossStatus : std::uint8_t { ok, tolerance_not_met, grid_too_short, invalid_input };
std::string_view to_string(LossStatus s) noexcept;

/// VaR and ES at one confidence level.
struct LossTail {
  double confidence_level = 0.0;
  double var = 0.0;           ///< currency units
  double es = 0.0;            ///< currency units
  double exceedance = 0.0;    ///< P(L > VaR), at most 1 - level
  std::size_t var_index = 0;  ///< VaR / loss_unit
};

struct LossDistribution {
  LossStatus status = LossStatus::invalid_input;
  std::string message;
  double loss_unit = 0.0;                ///< currency units per grid step
  std::vector<double> probability;       ///< P(L = k unit), k < K - 1; the last entry is P(L >= (K - 1) unit)
  std::vector<double> exceedance;        ///< P(L > k unit), summed from the top (a complement, never 1 - cdf)
  std::vector<double> cumulative;        ///< P(L <= k unit), summed from the bottom
  double expected_loss = 0.0;            ///< sum PD x LGD x EAD, closed form, currency units
  std::vector<LossTail> tails;           ///< one per confidence level
  std::vector<double> es_contributions;  ///< [level * n + i], currency units; empty if not requested
  std::size_t nodes = 0;                 ///< factor values evaluated
  double error_estimate = 0.0;           ///< estimated max relative error of the exceedance probabilities
  double top_mass = 0.0;                 ///< P(L >= (K - 1) unit)
  double trimmed_mass = 0.0;             ///< largest probability dropped at one node as negligible
  std::size_t transition_nodes = 0;      ///< nodes where the contributions needed the full computation
  int grid_attempts = 0;                 ///< grids tried (the automatic unit doubles the reach when short)
};

/// The exact one-factor loss distribution of `book` with risk measures and contributions.
LossDistribution one_factor_loss_distribution(std::span<const FactorExposure> book,
                                              const OneFactorOptions& options) noexcept;

}  // namespace firmcall
