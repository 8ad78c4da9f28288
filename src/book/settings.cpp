#include "firmcall/book/settings.hpp"

#include <cmath>

namespace firmcall {

std::string_view to_string(Measure m) noexcept {
  return m == Measure::physical ? "physical" : "risk-neutral";
}

std::optional<Measure> measure_from_string(std::string_view s) noexcept {
  if (s == "physical") return Measure::physical;
  if (s == "risk-neutral") return Measure::risk_neutral;
  return std::nullopt;
}

std::string_view to_string(PdFloorRule r) noexcept {
  switch (r) {
    case PdFloorRule::basel2:
      return "basel2";
    case PdFloorRule::basel3:
      return "basel3";
    case PdFloorRule::value:
      return "value";
  }
  return "";
}

std::optional<PdFloorRule> pd_floor_rule_from_string(std::string_view s) noexcept {
  if (s == "basel2") return PdFloorRule::basel2;
  if (s == "basel3") return PdFloorRule::basel3;
  return std::nullopt;
}

double pd_floor_of(PdFloorRule r) noexcept {
  switch (r) {
    case PdFloorRule::basel2:
      return 0.0003;  // BCBS 2006 para 285
    case PdFloorRule::basel3:
      return 0.0005;  // BCBS Dec 2017, corporates (CRE32.4)
    case PdFloorRule::value:
      break;
  }
  return std::nan("");
}

std::string_view pd_floor_source(PdFloorRule r) noexcept {
  switch (r) {
    case PdFloorRule::basel2:
      return "Basel II, BCBS 2006 para 285";
    case PdFloorRule::basel3:
      return "Basel III corporates, BCBS Dec 2017 (CRE32.4)";
    case PdFloorRule::value:
      return "set in the settings";
  }
  return "";
}

namespace {

// The constraints the settings reader states (its messages are "key 'x': " + constraint).
constexpr const char* kPositive = "must be positive";
constexpr const char* kClosedUnit = "must lie in [0, 1]";
constexpr const char* kOpenUnit = "must lie in (0, 1)";

OptionProblem problem(const char* field, double value, const char* constraint) {
  return OptionProblem{field, option_value_text(value), constraint};
}
OptionProblem problem(const char* field, int value, const char* constraint) {
  return OptionProblem{field, std::to_string(value), constraint};
}

bool in_closed_unit(double v) {
  return v >= 0.0 && v <= 1.0;
}
bool in_open_unit(double v) {
  return v > 0.0 && v < 1.0;
}

// A section's problem with the section's name before the field ("score.horizon_years").
OptionCheck in_section(const char* section, OptionCheck check) {
  if (check) check->field = std::string(section) + "." + check->field;
  return check;
}

// A list of numbers as text, for OptionProblem::value.
std::string list_text(const std::vector<double>& values) {
  std::string s = "[";
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (i > 0) s += ", ";
    s += option_value_text(values[i]);
  }
  return s + "]";
}

}  // namespace

bool is_currency_code(std::string_view code) noexcept {
  if (code.size() != 3) return false;
  for (const char c : code) {
    if (c < 'A' || c > 'Z') return false;
  }
  return true;
}

bool CurrencyCode::set(std::string_view code) noexcept {
  if (!code.empty() && !is_currency_code(code)) return false;
  size_ = static_cast<std::uint8_t>(code.size());
  for (std::size_t i = 0; i < 3; ++i) letters_[i] = i < code.size() ? code[i] : '\0';
  return true;
}

OptionCheck ScoreSettings::validate() const {
  if (!in_closed_unit(default_point_weight))
    return problem("default_point_weight", default_point_weight, kClosedUnit);
  if (!(horizon_years > 0.0)) return problem("horizon_years", horizon_years, kPositive);
  if (!in_closed_unit(default_lgd)) return problem("default_lgd", default_lgd, kClosedUnit);
  if (!(max_equity_vol > 0.0)) return problem("max_equity_vol", max_equity_vol, kPositive);
  if (!(equity_vol_warn_above > 0.0))
    return problem("equity_vol_warn_above", equity_vol_warn_above, kPositive);
  if (!(financial_leverage_above > 0.0))
    return problem("financial_leverage_above", financial_leverage_above, kPositive);
  return in_section("solver", solver.validate());
}

OptionCheck StressSettings::validate() const {
  if (!in_open_unit(pd_threshold)) return problem("pd_threshold", pd_threshold, kOpenUnit);
  return std::nullopt;
}

OptionCheck AlertRules::validate() const {
  if (!(dd_drop > 0.0)) return problem("dd_drop", dd_drop, kPositive);
  if (!(pd_ratio > 1.0)) return problem("pd_ratio", pd_ratio, "must be above 1");
  if (!in_closed_unit(pd_ratio_min_pd)) return problem("pd_ratio_min_pd", pd_ratio_min_pd, kClosedUnit);
  if (!(downgrade_notches > 0)) return problem("downgrade_notches", downgrade_notches, kPositive);
  if (!in_closed_unit(pd_ceiling)) return problem("pd_ceiling", pd_ceiling, kClosedUnit);
  return std::nullopt;
}

OptionCheck MonitorSettings::validate() const {
  if (!(busy_timeout_seconds > 0.0)) return problem("busy_timeout_seconds", busy_timeout_seconds, kPositive);
  return in_section("alerts", alerts.validate());
}

OptionCheck TermSettings::validate() const {
  if (!(barrier_ratio > 0.0)) return problem("barrier_ratio", barrier_ratio, kPositive);
  if (!(std::fabs(barrier_growth) <= 1.0)) {
    return problem("barrier_growth", barrier_growth, "must lie in [-1, 1] (0.02 means 2% a year)");
  }
  return std::nullopt;
}

OptionCheck PortfolioSettings::validate() const {
  const std::vector<double>& levels = confidence_levels;
  if (levels.empty()) {
    return OptionProblem{"confidence_levels", "[]", "expected a list such as [0.99, 0.995, 0.999]"};
  }
  if (levels.size() > kMaxConfidenceLevels) {
    return OptionProblem{"confidence_levels", list_text(levels),
                         "at most " + std::to_string(kMaxConfidenceLevels) + " levels"};
  }
  for (std::size_t i = 0; i < levels.size(); ++i) {
    if (!in_open_unit(levels[i])) {
      return OptionProblem{"confidence_levels", list_text(levels),
                           "each level must lie in (0, 1) (0.999 means 99.9%)"};
    }
    if (i > 0 && !(levels[i] > levels[i - 1])) {
      return OptionProblem{"confidence_levels", list_text(levels),
                           "levels must be listed in increasing order"};
    }
  }
  if (asset_correlation && !(*asset_correlation >= 0.0 && *asset_correlation < 1.0)) {
    return problem("asset_correlation", *asset_correlation, "expected basel or a decimal in [0, 1)");
  }
  if (!(loss_grid_points > 0)) return problem("loss_grid_points", loss_grid_points, kPositive);
  if (loss_grid_points < 16 || loss_grid_points > (1 << 20)) {
    return problem("loss_grid_points", loss_grid_points, "must lie in [16, 1048576]");
  }
  if (!in_open_unit(quadrature_tolerance))
    return problem("quadrature_tolerance", quadrature_tolerance, kOpenUnit);
  return std::nullopt;
}

OptionCheck IrbSettings::validate() const {
  if (!in_closed_unit(pd_floor)) return problem("pd_floor", pd_floor, kClosedUnit);
  if (pd_floor_rule != PdFloorRule::value && pd_floor != pd_floor_of(pd_floor_rule)) {
    return problem("pd_floor", pd_floor,
                   pd_floor_rule == PdFloorRule::basel2 ? "must be 0.0003 under rule basel2"
                                                        : "must be 0.0005 under rule basel3");
  }
  if (!(maturity_years > 0.0)) return problem("maturity_years", maturity_years, kPositive);
  return std::nullopt;
}

OptionCheck Config::validate() const {
  if (auto p = in_section("score", score.validate())) return p;
  if (auto p = in_section("stress", stress.validate())) return p;
  if (auto p = in_section("history", history.validate())) return p;
  if (auto p = in_section("grades", grades.validate())) return p;
  if (auto p = in_section("monitor", monitor.validate())) return p;
  if (auto p = in_section("term", term.validate())) return p;
  if (auto p = in_section("portfolio", portfolio.validate())) return p;
  return in_section("irb", irb.validate());
}

}  // namespace firmcall
