// One-factor default model and its large-portfolio limit. See include/firmcall/vasicek.hpp.
#include "firmcall/portfolio/vasicek.hpp"

#include <algorithm>
#include <boost/math/quadrature/gauss.hpp>
#include <cmath>
#include <limits>
#include <numbers>

#include "firmcall/model/normal.hpp"

namespace firmcall {

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Gauss-Legendre rule of order 20 on [lo, hi] applied to f.
template <class F>
double gauss_legendre_20(F&& f, double lo, double hi) noexcept {
  using Rule = boost::math::quadrature::gauss<double, 20>;
  const auto& x = Rule::abscissa();
  const auto& w = Rule::weights();
  const double c = 0.5 * (lo + hi);
  const double h = 0.5 * (hi - lo);
  double sum = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) sum += w[i] * (f(c + h * x[i]) + f(c - h * x[i]));
  return h * sum;
}

// Plackett's formula: Phi2(a, b; r) = N(a) N(b) + (1/2pi) int_0^asin(r) exp(-(a^2 + b^2 -
// 2ab sin t) / (2 cos^2 t)) dt, integrated in four pieces (smooth for |r| < 0.925).
double bvn_plackett(double a, double b, double r) noexcept {
  const double top = std::asin(r);
  const auto f = [a, b](double t) {
    const double s = std::sin(t);
    const double c2 = 1.0 - s * s;
    return std::exp(-(a * a + b * b - 2.0 * a * b * s) / (2.0 * c2));
  };
  double integral = 0.0;
  for (int k = 0; k < 4; ++k) integral += gauss_legendre_20(f, top * k / 4.0, top * (k + 1) / 4.0);
  return norm_cdf(a) * norm_cdf(b) + integral / (2.0 * std::numbers::pi);
}

// Phi2(a, b; r) = int_{-inf}^{b} N((a - r y) / sqrt(1 - r^2)) phi(y) dy, for r near +-1: the
// integrand is a steep step at y = a / r, so the panels are fine around it and coarse elsewhere.
double bvn_by_factor(double a, double b, double r) noexcept {
  const double s = std::sqrt((1.0 - r) * (1.0 + r));
  const auto f = [a, r, s](double y) { return norm_cdf((a - r * y) / s) * norm_pdf(y); };
  const double lo = std::max(b - 40.0, -40.0);
  if (!(b > lo)) return 0.0;
  const double centre = a / r;
  const double width = 10.0 * s / std::fabs(r);
  double cuts[4] = {lo, std::clamp(centre - width, lo, b), std::clamp(centre + width, lo, b), b};
  double total = 0.0;
  for (int piece = 0; piece < 3; ++piece) {
    const double p0 = cuts[piece];
    const double p1 = cuts[piece + 1];
    if (!(p1 > p0)) continue;
    const int panels = piece == 1 ? 40 : std::max(1, static_cast<int>(std::ceil((p1 - p0) / 0.5)));
    for (int k = 0; k < panels; ++k) {
      total += gauss_legendre_20(f, p0 + (p1 - p0) * k / panels, p0 + (p1 - p0) * (k + 1) / panels);
    }
  }
  return total;
}

bool valid_pd_rho(double pd, double rho) noexcept {
  return pd >= 0.0 && pd <= 1.0 && rho >= 0.0 && rho < 1.0;
}

}  // namespace

double conditional_pd(double pd, double rho, double z) noexcept {
  if (!valid_pd_rho(pd, rho) || std::isnan(z)) return kNaN;
  if (pd == 0.0 || pd == 1.0) return pd;
  return norm_cdf((norm_quantile(pd) - std::sqrt(rho) * z) / std::sqrt(1.0 - rho));
}

double bivariate_normal_cdf(double a, double b, double r) noexcept {
  if (std::isnan(a) || std::isnan(b) || !(r > -1.0 && r < 1.0)) return kNaN;
  if (a == -kInf || b == -kInf) return 0.0;
  if (a == kInf) return norm_cdf(b);
  if (b == kInf) return norm_cdf(a);
  if (r == 0.0) return norm_cdf(a) * norm_cdf(b);
  const double v = std::fabs(r) < 0.925 ? bvn_plackett(a, b, r) : bvn_by_factor(a, b, r);
  return std::clamp(v, 0.0, std::min(norm_cdf(a), norm_cdf(b)));
}

double vasicek_cdf(double x, double pd, double rho) noexcept {
  if (!valid_pd_rho(pd, rho) || std::isnan(x)) return kNaN;
  if (x < 0.0) return 0.0;
  if (x >= 1.0) return 1.0;
  if (rho == 0.0 || pd == 0.0 || pd == 1.0) return x >= pd ? 1.0 : 0.0;
  return norm_cdf((std::sqrt(1.0 - rho) * norm_quantile(x) - norm_quantile(pd)) / std::sqrt(rho));
}

double vasicek_exceedance(double x, double pd, double rho) noexcept {
  if (!valid_pd_rho(pd, rho) || std::isnan(x)) return kNaN;
  if (x < 0.0) return 1.0;
  if (x >= 1.0) return 0.0;
  if (rho == 0.0 || pd == 0.0 || pd == 1.0) return x >= pd ? 0.0 : 1.0;
  return norm_sf((std::sqrt(1.0 - rho) * norm_quantile(x) - norm_quantile(pd)) / std::sqrt(rho));
}

double vasicek_quantile_tail(double tail, double pd, double rho) noexcept {
  if (!valid_pd_rho(pd, rho) || !(tail > 0.0 && tail < 1.0)) return kNaN;
  if (pd == 0.0 || pd == 1.0) return pd;
  return norm_cdf((norm_quantile(pd) + std::sqrt(rho) * norm_quantile_upper(tail)) / std::sqrt(1.0 - rho));
}

double vasicek_expected_shortfall_tail(double tail, double pd, double rho) noexcept {
  if (!valid_pd_rho(pd, rho) || !(tail > 0.0 && tail < 1.0)) return kNaN;
  if (pd == 0.0 || pd == 1.0) return pd;
  return bivariate_normal_cdf(norm_quantile(pd), norm_quantile(tail), std::sqrt(rho)) / tail;
}

double large_portfolio_loss(std::span<const FactorExposure> book, double z) noexcept {
  double m = 0.0;
  for (const FactorExposure& e : book) m += e.loss_amount * conditional_pd(e.pd, e.asset_correlation, z);
  return m;
}

LargePortfolioResult large_portfolio_measures(std::span<const FactorExposure> book,
                                              std::span<const double> confidence_levels) noexcept {
  LargePortfolioResult r;
  for (const FactorExposure& e : book) {
    if (!valid_pd_rho(e.pd, e.asset_correlation) || !(e.loss_amount >= 0.0) ||
        !std::isfinite(e.loss_amount)) {
      r.message = "an exposure has a PD outside [0, 1], rho outside [0, 1) or a negative loss amount";
      return r;
    }
  }
  for (double level : confidence_levels) {
    if (!(level > 0.0 && level < 1.0)) {
      r.message = "confidence levels must lie in (0, 1)";
      return r;
    }
  }
  const std::size_t n = book.size();
  try {
    r.tails.resize(confidence_levels.size());
    r.var_contributions.assign(confidence_levels.size() * n, 0.0);
    r.es_contributions.assign(confidence_levels.size() * n, 0.0);
  } catch (...) {
    r.message = "out of memory";
    return r;
  }
  for (const FactorExposure& e : book) r.expected_loss += e.pd * e.loss_amount;
  for (std::size_t l = 0; l < confidence_levels.size(); ++l) {
    const double tail = 1.0 - confidence_levels[l];
    const double z = norm_quantile(tail);
    LargePortfolioTail& t = r.tails[l];
    t.confidence_level = confidence_levels[l];
    t.factor = z;
    for (std::size_t i = 0; i < n; ++i) {
      const FactorExposure& e = book[i];
      const double var_i = e.loss_amount * conditional_pd(e.pd, e.asset_correlation, z);
      double es_i = 0.0;
      if (e.pd == 1.0) {
        es_i = e.loss_amount;
      } else if (e.pd > 0.0) {
        es_i = e.loss_amount * bivariate_normal_cdf(norm_quantile(e.pd), z, std::sqrt(e.asset_correlation)) /
               tail;
      }
      r.var_contributions[l * n + i] = var_i;
      r.es_contributions[l * n + i] = es_i;
      t.var += var_i;
      t.es += es_i;
    }
  }
  r.ok = true;
  return r;
}

void large_portfolio_exceedance(std::span<const FactorExposure> book, std::span<const double> losses,
                                std::span<double> out) noexcept {
  // m(z) on z in [-9, 9], step 0.05: decreasing in z (non-increasing when some rho is 0).
  constexpr int kSteps = 360;
  constexpr double kZ = 9.0;
  double table[kSteps + 1];
  for (int k = 0; k <= kSteps; ++k) table[k] = large_portfolio_loss(book, -kZ + 2.0 * kZ * k / kSteps);
  for (std::size_t j = 0; j < losses.size() && j < out.size(); ++j) {
    const double x = losses[j];
    if (x >= table[0]) {
      out[j] = 0.0;  // beyond m(-9): probability below N(-9) ~ 1e-19
      continue;
    }
    if (x < table[kSteps]) {
      out[j] = 1.0;
      continue;
    }
    // First k with table[k] <= x; m crosses x in (z_{k-1}, z_k].
    int lo = 0;
    int hi = kSteps;
    while (hi - lo > 1) {
      const int mid = (lo + hi) / 2;
      (table[mid] <= x ? hi : lo) = mid;
    }
    const double z0 = -kZ + 2.0 * kZ * lo / kSteps;
    const double z1 = -kZ + 2.0 * kZ * hi / kSteps;
    const double m0 = table[lo];
    const double m1 = table[hi];
    const double z = m0 > m1 ? z0 + (z1 - z0) * (m0 - x) / (m0 - m1) : z1;
    out[j] = norm_cdf(z);  // P(Z < z(x)) = P(m(Z) > x)
  }
}

}  // namespace firmcall
