#include "firmcall/estimate/calibration.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include <Eigen/Dense>
#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/normal.hpp>

namespace firmcall {

std::string_view to_string(CalibrationMethod m) noexcept {
  switch (m) {
    case CalibrationMethod::logistic:
      return "logistic";
    case CalibrationMethod::isotonic:
      return "isotonic";
    case CalibrationMethod::binned:
      return "binned";
  }
  return "";
}

bool parse_calibration_method(std::string_view text, CalibrationMethod& out) noexcept {
  for (CalibrationMethod m :
       {CalibrationMethod::logistic, CalibrationMethod::isotonic, CalibrationMethod::binned}) {
    if (text == to_string(m)) {
      out = m;
      return true;
    }
  }
  return false;
}

std::string_view to_string(CalibrationStatus s) noexcept {
  switch (s) {
    case CalibrationStatus::ok:
      return "ok";
    case CalibrationStatus::bad_input:
      return "bad_input";
    case CalibrationStatus::no_defaults:
      return "no_defaults";
    case CalibrationStatus::no_survivors:
      return "no_survivors";
    case CalibrationStatus::not_converged:
      return "not_converged";
    case CalibrationStatus::slope_not_negative:
      return "slope_not_negative";
  }
  return "";
}

OptionCheck CalibrationOptions::validate() const {
  if (bins < 1) return OptionProblem{"bins", std::to_string(bins), "must be at least 1"};
  if (!(confidence_level > 0.0 && confidence_level < 1.0)) {
    return OptionProblem{"confidence_level", option_value_text(confidence_level), "must lie in (0, 1)"};
  }
  if (max_iterations < 1) {
    return OptionProblem{"max_iterations", std::to_string(max_iterations), "must be at least 1"};
  }
  return std::nullopt;
}

void jeffreys_interval(double defaults, double n, double level, double& lower, double& upper) noexcept {
  lower = upper = std::numeric_limits<double>::quiet_NaN();
  if (!(n > 0.0) || !(defaults >= 0.0) || defaults > n || !(level > 0.0 && level < 1.0)) return;
  const double tail = 0.5 * (1.0 - level);
  try {
    const boost::math::beta_distribution<double> b(defaults + 0.5, n - defaults + 0.5);
    lower = defaults > 0.0 ? boost::math::quantile(b, tail) : 0.0;
    upper = defaults < n ? boost::math::quantile(boost::math::complement(b, tail)) : 1.0;
  } catch (...) {
    lower = upper = std::numeric_limits<double>::quiet_NaN();
  }
}

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

double logistic_of(double eta) noexcept {
  return 1.0 / (1.0 + std::exp(-eta));
}

// log(1 + exp(x)) without overflow.
double softplus(double x) noexcept {
  return x > 0.0 ? x + std::log1p(std::exp(-x)) : std::log1p(std::exp(x));
}

double weight_at(const CalibrationSample& s, std::size_t i) noexcept {
  return s.weight.empty() ? 1.0 : s.weight[i];
}

// Checks sizes and values; fills counts and the DD range. False (with status and message) when bad.
bool check_sample(const CalibrationSample& s, PdCalibration& out) {
  const std::size_t n = s.distance_to_default.size();
  if (s.defaulted.size() != n || (!s.weight.empty() && s.weight.size() != n)) {
    out.message = "distance_to_default, defaulted and weight differ in length";
    return false;
  }
  if (n == 0) {
    out.message = "no observations";
    return false;
  }
  out.observations = n;
  out.defaults = 0;
  out.dd_min = std::numeric_limits<double>::infinity();
  out.dd_max = -std::numeric_limits<double>::infinity();
  double weight_defaults = 0.0, weight_survivors = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double dd = s.distance_to_default[i], y = s.defaulted[i], w = weight_at(s, i);
    if (!std::isfinite(dd)) {
      out.message = "observation " + std::to_string(i + 1) + ": distance_to_default is not finite";
      return false;
    }
    if (y != 0.0 && y != 1.0) {
      out.message = "observation " + std::to_string(i + 1) + ": defaulted must be 0 or 1";
      return false;
    }
    if (!std::isfinite(w) || w < 0.0) {
      out.message = "observation " + std::to_string(i + 1) + ": weight must be finite and non-negative";
      return false;
    }
    if (y == 1.0) ++out.defaults;
    (y == 1.0 ? weight_defaults : weight_survivors) += w;
    out.dd_min = std::min(out.dd_min, dd);
    out.dd_max = std::max(out.dd_max, dd);
  }
  if (!(weight_defaults > 0.0)) {
    out.status = CalibrationStatus::no_defaults;
    out.message = "no defaults in the sample (with positive weight): the default rate cannot be calibrated";
    return false;
  }
  if (!(weight_survivors > 0.0)) {
    out.status = CalibrationStatus::no_survivors;
    out.message = "every observation defaulted: the default rate cannot be calibrated";
    return false;
  }
  return true;
}

// Weighted maximum likelihood of the logistic link by Newton's method with step halving.
void fit_logistic(const CalibrationSample& s, const CalibrationOptions& opt, PdCalibration& out) {
  const std::size_t n = s.distance_to_default.size();
  double sw = 0.0, swy = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    sw += weight_at(s, i);
    swy += weight_at(s, i) * s.defaulted[i];
  }
  Eigen::Vector2d beta(std::log(swy / (sw - swy)), 0.0);  // start: the mean default rate
  Eigen::Vector2d grad;
  Eigen::Matrix2d info;
  // Log-likelihood, gradient and information (negative Hessian) at b.
  const auto evaluate = [&](const Eigen::Vector2d& b) {
    double ll = 0.0, g0 = 0.0, g1 = 0.0, h00 = 0.0, h01 = 0.0, h11 = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      const double x = s.distance_to_default[i], y = s.defaulted[i], w = weight_at(s, i);
      const double eta = b[0] + b[1] * x;
      const double p = logistic_of(eta);
      ll -= w * (y > 0.5 ? softplus(-eta) : softplus(eta));
      const double r = w * (y - p), v = w * p * (1.0 - p);
      g0 += r;
      g1 += r * x;
      h00 += v;
      h01 += v * x;
      h11 += v * x * x;
    }
    grad << g0, g1;
    info << h00, h01, h01, h11;
    return ll;
  };
  double ll = evaluate(beta);
  bool converged = false;
  int it = 0;
  while (it < opt.max_iterations) {
    ++it;
    const Eigen::Vector2d step = info.ldlt().solve(grad);
    if (!step.allFinite()) break;
    Eigen::Vector2d next = beta + step;
    double ll_next = evaluate(next);
    for (int halving = 0; halving < 50 && !(ll_next >= ll - 1e-12 * std::fabs(ll)); ++halving) {
      next = beta + std::ldexp(1.0, -(halving + 1)) * step;
      ll_next = evaluate(next);
    }
    const bool small = std::fabs(step[0]) <= 1e-12 * std::max(1.0, std::fabs(beta[0])) &&
                       std::fabs(step[1]) <= 1e-12 * std::max(1.0, std::fabs(beta[1]));
    beta = next;
    ll = ll_next;
    if (small) {
      converged = true;
      break;
    }
  }
  LogisticFit& f = out.logistic;
  f.iterations = it;
  f.intercept = beta[0];
  f.slope = beta[1];
  f.log_likelihood = ll;
  const Eigen::Matrix2d cov = info.inverse();
  f.intercept_se = std::sqrt(cov(0, 0));
  f.slope_se = std::sqrt(cov(1, 1));
  f.covariance = cov(0, 1);
  if (!converged || !beta.allFinite() || !cov.allFinite()) {
    out.status = CalibrationStatus::not_converged;
    out.message = "the logistic fit did not converge in " + std::to_string(it) +
                  " Newton steps (are defaults and survivors separated by DD?)";
    return;
  }
  if (!(f.slope < 0.0)) {
    out.status = CalibrationStatus::slope_not_negative;
    out.message = "the fitted logistic slope " + option_value_text(f.slope) +
                  " is not negative: PD would not fall as DD grows";
    return;
  }
  out.status = CalibrationStatus::ok;
}

// Observations of equal DD pooled, in increasing DD; zero weights left out.
struct Group {
  double dd = 0.0, w = 0.0, wy = 0.0;
};

std::vector<Group> sorted_groups(const CalibrationSample& s) {
  const std::size_t n = s.distance_to_default.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&s](std::size_t a, std::size_t b) {
    return s.distance_to_default[a] < s.distance_to_default[b];
  });
  std::vector<Group> groups;
  for (std::size_t i : order) {
    const double w = weight_at(s, i);
    if (!(w > 0.0)) continue;
    const double dd = s.distance_to_default[i];
    if (groups.empty() || groups.back().dd != dd) groups.push_back({dd, 0.0, 0.0});
    groups.back().w += w;
    groups.back().wy += w * s.defaulted[i];
  }
  return groups;
}

// The Jeffreys estimate for a block without defaults.
double floored_pd(const CalibrationBlock& b) noexcept {
  return b.defaults > 0.0 ? b.pd_raw : (b.defaults + 0.5) / (b.observations + 1.0);
}

void fit_isotonic(const CalibrationSample& s, PdCalibration& out) {
  std::vector<CalibrationBlock>& blocks = out.blocks;
  for (const Group& g : sorted_groups(s)) {
    CalibrationBlock b;
    b.dd_lower = b.dd_upper = g.dd;
    b.observations = g.w;
    b.defaults = g.wy;
    // Pool while the block to the left has a rate not above this one (non-increasing PD).
    while (!blocks.empty() &&
           blocks.back().defaults * b.observations <= b.defaults * blocks.back().observations) {
      const CalibrationBlock& left = blocks.back();
      b.dd_lower = left.dd_lower;
      b.observations += left.observations;
      b.defaults += left.defaults;
      blocks.pop_back();
    }
    blocks.push_back(b);
  }
  for (std::size_t k = 0; k < blocks.size(); ++k) {
    CalibrationBlock& b = blocks[k];
    b.pd_raw = b.defaults / b.observations;
    b.pd = floored_pd(b);
    if (k > 0) b.pd = std::min(b.pd, blocks[k - 1].pd);
  }
  out.status = CalibrationStatus::ok;
}

void fit_binned(const CalibrationSample& s, std::size_t bins, PdCalibration& out) {
  const std::vector<Group> groups = sorted_groups(s);
  double total = 0.0;
  for (const Group& g : groups) total += g.w;
  double cumulative = 0.0;
  std::size_t band = 1;
  CalibrationBlock b;
  bool open = false;
  for (const Group& g : groups) {
    if (!open) {
      b = CalibrationBlock{};
      b.dd_lower = g.dd;
      open = true;
    }
    b.dd_upper = g.dd;
    b.observations += g.w;
    b.defaults += g.wy;
    cumulative += g.w;
    if (cumulative >= total * static_cast<double>(band) / static_cast<double>(bins) * (1.0 - 1e-12)) {
      out.blocks.push_back(b);
      open = false;
      while (band < bins && cumulative >= total * static_cast<double>(band) / static_cast<double>(bins))
        ++band;
    }
  }
  if (open) out.blocks.push_back(b);
  for (CalibrationBlock& blk : out.blocks) {
    blk.pd_raw = blk.defaults / blk.observations;
    blk.pd = floored_pd(blk);
  }
  out.status = CalibrationStatus::ok;
}

}  // namespace

void PdCalibration::prepare_intervals() noexcept {
  z = kNan;
  if (!(confidence_level > 0.0 && confidence_level < 1.0)) return;
  try {
    z = boost::math::quantile(
        boost::math::complement(boost::math::normal_distribution<double>(), 0.5 * (1.0 - confidence_level)));
  } catch (...) {
    z = kNan;
  }
  for (CalibrationBlock& b : blocks)
    jeffreys_interval(b.defaults, b.observations, confidence_level, b.pd_lower, b.pd_upper);
}

CalibratedPd PdCalibration::evaluate(double dd) const noexcept {
  CalibratedPd r{kNan, kNan, kNan, false};
  if (!ok() || !std::isfinite(dd)) return r;
  r.extrapolated = dd < dd_min || dd > dd_max;
  if (method == CalibrationMethod::logistic) {
    const LogisticFit& f = logistic;
    const double eta = f.intercept + f.slope * dd;
    const double var =
        f.intercept_se * f.intercept_se + 2.0 * dd * f.covariance + dd * dd * f.slope_se * f.slope_se;
    const double half = z * std::sqrt(std::max(var, 0.0));
    // Two exponentials instead of three: exp(-(eta -+ half)) = exp(-eta) exp(+-half). Applying a
    // calibration to a 1,000,000-row score run is held to 10% extra time (bench/calibration.sh);
    // the products differ from the direct exponentials by a few ulps at most.
    const double q = std::exp(-eta), h = std::exp(half);
    r.pd = 1.0 / (1.0 + q);
    if (std::isfinite(h)) {
      r.lower = 1.0 / (1.0 + q * h);
      r.upper = 1.0 / (1.0 + q / h);
    } else {
      r.lower = logistic_of(eta - half);
      r.upper = logistic_of(eta + half);
    }
    return r;
  }
  if (blocks.empty()) return r;
  // The last block starting at or below dd.
  const auto it = std::upper_bound(blocks.begin(), blocks.end(), dd,
                                   [](double x, const CalibrationBlock& b) { return x < b.dd_lower; });
  const CalibrationBlock* b = it == blocks.begin() ? &blocks.front() : &*(it - 1);
  if (it == blocks.begin() || dd <= b->dd_upper || it == blocks.end()) {
    r.pd = b->pd;
    r.lower = b->pd_lower;
    r.upper = b->pd_upper;
    return r;
  }
  const CalibrationBlock& next = *it;  // dd lies between b's right edge and next's left edge
  const double t = (dd - b->dd_upper) / (next.dd_lower - b->dd_upper);
  const auto mix = [t](double a, double c) { return a + t * (c - a); };
  r.pd = mix(b->pd, next.pd);
  r.lower = mix(b->pd_lower, next.pd_lower);
  r.upper = mix(b->pd_upper, next.pd_upper);
  return r;
}

PdCalibration calibrate_pd(const CalibrationSample& sample, const CalibrationOptions& options) {
  PdCalibration out;
  out.method = options.method;
  out.confidence_level = options.confidence_level;
  if (const OptionCheck bad = options.validate()) {
    out.message = bad->to_string();
    return out;
  }
  if (!check_sample(sample, out)) return out;
  switch (options.method) {
    case CalibrationMethod::logistic:
      fit_logistic(sample, options, out);
      break;
    case CalibrationMethod::isotonic:
      fit_isotonic(sample, out);
      break;
    case CalibrationMethod::binned:
      fit_binned(sample, options.bins, out);
      break;
  }
  out.prepare_intervals();
  return out;
}

}  // namespace firmcall
