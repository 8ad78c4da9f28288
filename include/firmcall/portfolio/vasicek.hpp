// The one-factor (Gaussian copula) default model and its large-portfolio limit.
//
// Each obligor's asset return is X = sqrt(rho) Z + sqrt(1 - rho) e, with Z (systematic factor)
// and e (idiosyncratic) independent standard normal; it defaults when X <= G(PD), G = N^-1.
// Given Z = z the defaults are independent with probability
//   p(z) = N((G(PD) - sqrt(rho) z) / sqrt(1 - rho)).
// As a portfolio grows with no single exposure dominating, its loss tends to the conditional
// expected loss m(Z) = sum_i l_i p_i(Z), l_i = LGD_i EAD_i (Vasicek 2002; Gordy 2003, the
// asymptotic single risk factor model). For a homogeneous portfolio the default rate then has
// Vasicek's distribution
//   P(X <= x) = N((sqrt(1 - rho) G(x) - G(PD)) / sqrt(rho)),
//   q_a = N((G(PD) + sqrt(rho) G(a)) / sqrt(1 - rho))      (quantile at level a),
// and its expected shortfall is N2(G(PD), -G(a); sqrt(rho)) / (1 - a), N2 the bivariate normal
// distribution function. Tail probabilities are taken as complements throughout.
//
// Pure numerics: no I/O, nothing throws.
//
// **Example**:
//   double q = firmcall::vasicek_quantile_tail(0.001, 0.01, 0.12);   // 99.9% default rate
//   std::vector<firmcall::FactorExposure> book = {{0.01, 45.0, 0.12}, {0.02, 30.0, 0.15}};
//   auto lp = firmcall::large_portfolio_measures(book, {0.99, 0.999});
#pragma once

#include <span>
#include <vector>

namespace firmcall {

/// One obligor in the one-factor model.
struct FactorExposure {
  double pd = 0.0;                 ///< probability of default over the horizon, decimal in [0, 1]
  double loss_amount = 0.0;        ///< loss if it defaults, LGD x EAD, currency units (>= 0)
  double asset_correlation = 0.0;  ///< rho, decimal in [0, 1)
};

/// p(z) = N((G(PD) - sqrt(rho) z) / sqrt(1 - rho)): default probability given the factor.
double conditional_pd(double pd, double rho, double z) noexcept;

/// P(X <= a, Y <= b) for standard normals with correlation r in (-1, 1). Plackett's integral with
/// Gauss-Legendre for |r| < 0.925, else the one-dimensional integral over Y (Genz 2004 splits the
/// same way); about 15 digits.
double bivariate_normal_cdf(double a, double b, double r) noexcept;

/// Vasicek distribution of the default rate of an infinitely granular homogeneous portfolio.
double vasicek_cdf(double x, double pd, double rho) noexcept;
/// P(default rate > x), as a complement.
double vasicek_exceedance(double x, double pd, double rho) noexcept;
/// Default-rate quantile at level 1 - tail (tail = 0.001 for 99.9%).
double vasicek_quantile_tail(double tail, double pd, double rho) noexcept;
/// Expected shortfall of the default rate beyond that quantile: E[X | X >= q] = N2(...) / tail.
double vasicek_expected_shortfall_tail(double tail, double pd, double rho) noexcept;

/// Value at risk and expected shortfall of the large-portfolio limit at one confidence level.
struct LargePortfolioTail {
  double confidence_level = 0.0;
  double var = 0.0;     ///< m(z_a), z_a = G(1 - a): currency units
  double es = 0.0;      ///< E[m(Z) | m(Z) >= VaR]: currency units
  double factor = 0.0;  ///< z_a, the factor outcome at the quantile
};

/// The large-portfolio (ASRF) measures of a book, with each obligor's additive share.
struct LargePortfolioResult {
  bool ok = false;  ///< false: an input is out of range (see `message`)
  const char* message = "";
  double expected_loss = 0.0;  ///< sum PD l, currency units
  std::vector<LargePortfolioTail> tails;
  std::vector<double> var_contributions;  ///< [level * n + i] = l_i p_i(z_a)
  std::vector<double> es_contributions;   ///< [level * n + i] = l_i N2(G(PD_i), z_a; sqrt(rho_i)) / (1 - a)
};

/// Large-portfolio VaR and ES at each level (each in (0, 1)). Allocates its result only.
LargePortfolioResult large_portfolio_measures(std::span<const FactorExposure> book,
                                              std::span<const double> confidence_levels) noexcept;

/// m(z) = sum l_i p_i(z), the large-portfolio loss at factor outcome z (currency units).
double large_portfolio_loss(std::span<const FactorExposure> book, double z) noexcept;

/// P(m(Z) > x) for each x of `losses` (ascending), the exceedance probabilities of the
/// large-portfolio limit. Solves m(z) = x on a table of m over z in [-9, 9] refined by bisection;
/// 0 above the largest possible loss and 1 below the smallest. Writes `out` (same size as losses).
void large_portfolio_exceedance(std::span<const FactorExposure> book, std::span<const double> losses,
                                std::span<double> out) noexcept;

}  // namespace firmcall
