// Basel II IRB capital for corporate exposures (BCBS 2006, para 272). See include/firmcall/irb.hpp.
#include "firmcall/portfolio/irb.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "firmcall/model/normal.hpp"

namespace firmcall {

namespace {
constexpr double kIrbConfidence = 0.999;  // para 272: G(0.999)
}  // namespace

OptionCheck IrbOptions::validate() const {
  if (!(pd_floor >= 0.0 && pd_floor < 1.0)) {
    return OptionProblem{"pd_floor", option_value_text(pd_floor), "must lie in [0, 1)"};
  }
  if (!(min_maturity_years > 0.0)) {
    return OptionProblem{"min_maturity_years", option_value_text(min_maturity_years), "must be positive"};
  }
  if (!(min_maturity_years <= max_maturity_years)) {
    return OptionProblem{"max_maturity_years", option_value_text(max_maturity_years),
                         "must be at least min_maturity_years"};
  }
  return std::nullopt;
}

std::string_view to_string(IrbStatus s) noexcept {
  return s == IrbStatus::ok ? "ok" : "invalid_input";
}

double irb_corporate_correlation(double pd) noexcept {
  // (1 - e^(-50 PD)) / (1 - e^(-50)), with expm1 so that small PDs keep their digits.
  const double weight = std::expm1(-50.0 * pd) / std::expm1(-50.0);
  return 0.12 * weight + 0.24 * (1.0 - weight);
}

double irb_maturity_slope(double pd) noexcept {
  const double s = 0.11852 - 0.05478 * std::log(pd);
  return s * s;
}

IrbResult irb_corporate(const IrbInputs& in, const IrbOptions& options) noexcept {
  IrbResult r;
  if (!(in.pd >= 0.0 && in.pd <= 1.0)) {
    r.message = "field 'pd': must be a probability in [0, 1]";
    return r;
  }
  if (!(in.lgd >= 0.0 && in.lgd <= 1.0)) {
    r.message = "field 'lgd': must be a decimal in [0, 1]";
    return r;
  }
  if (!(in.ead >= 0.0) || !std::isfinite(in.ead)) {
    r.message = "field 'ead': must be non-negative and finite";
    return r;
  }
  if (!(in.maturity_years > 0.0) || !std::isfinite(in.maturity_years)) {
    r.message = "field 'maturity': must be positive years";
    return r;
  }
  if (!options_valid(options)) {
    r.message = "IRB options: PD floor must lie in [0, 1) and 0 < minimum maturity <= maximum";
    return r;
  }
  r.pd = std::max(in.pd, options.pd_floor);
  r.maturity_years = std::clamp(in.maturity_years, options.min_maturity_years, options.max_maturity_years);
  r.status = IrbStatus::ok;
  if (r.pd <= 0.0) {
    // PD 0 without a floor: no default, no capital (the formula's limit).
    r.correlation = irb_corporate_correlation(0.0);
    return r;
  }
  r.correlation = irb_corporate_correlation(r.pd);
  r.maturity_slope = irb_maturity_slope(r.pd);
  const double rho = r.correlation;
  // Conditional PD at the 99.9% factor outcome; at PD = 1 it is 1 and K = 0.
  const double x =
      (norm_quantile(r.pd) + std::sqrt(rho) * norm_quantile(kIrbConfidence)) / std::sqrt(1.0 - rho);
  const double conditional_pd = r.pd < 1.0 ? norm_cdf(x) : 1.0;
  const double b = r.maturity_slope;
  const double k =
      (in.lgd * conditional_pd - r.pd * in.lgd) * (1.0 + (r.maturity_years - 2.5) * b) / (1.0 - 1.5 * b);
  r.capital_ratio = std::max(0.0, k);
  r.risk_weight = 12.5 * r.capital_ratio;
  r.capital = r.capital_ratio * in.ead;
  r.rwa = r.risk_weight * in.ead;
  return r;
}

}  // namespace firmcall
