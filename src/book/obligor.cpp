#include "firmcall/book/obligor.hpp"

#include <charconv>
#include <cmath>
#include <cstdio>
#include <limits>

namespace firmcall {

namespace {
constexpr std::array<std::string_view, kNumFieldCount> kNumNames = {"market_cap",
                                                                    "share_price",
                                                                    "shares_outstanding",
                                                                    "equity_vol",
                                                                    "short_term_debt",
                                                                    "long_term_debt",
                                                                    "default_point",
                                                                    "rate",
                                                                    "horizon",
                                                                    "drift",
                                                                    "ead",
                                                                    "lgd",
                                                                    "asset_correlation",
                                                                    "maturity"};
constexpr std::array<std::string_view, kTextFieldCount> kTextNames = {"id", "name", "sector", "country",
                                                                      "currency"};

constexpr double kMinAmount = 1e-150;
constexpr double kMaxAmount = 1e150;
constexpr double kMinLeverage = 1e-10;  // default point / equity value
constexpr double kMaxLeverage = 1e10;
constexpr double kMinEquityVol = 1e-4;

std::string shortest(double v) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

std::string field_error(std::string_view field, std::string_view reason) {
  std::string s = "field '";
  s += field;
  s += "': ";
  s += reason;
  return s;
}

std::string value_error(NumField f, std::string_view reason, double got) {
  return field_error(to_string(f), std::string(reason) + ", got " + shortest(got));
}
}  // namespace

std::string_view to_string(NumField f) noexcept {
  return kNumNames[static_cast<std::size_t>(f)];
}
std::string_view to_string(TextField f) noexcept {
  return kTextNames[static_cast<std::size_t>(f)];
}

const std::vector<std::string>& obligor_field_names() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> v(kTextNames.begin(), kTextNames.end());
    v.insert(v.end(), kNumNames.begin(), kNumNames.end());
    return v;
  }();
  return names;
}

bool field_from_string(std::string_view name, std::optional<NumField>& num,
                       std::optional<TextField>& text) noexcept {
  num.reset();
  text.reset();
  for (std::size_t i = 0; i < kNumFieldCount; ++i) {
    if (kNumNames[i] == name) {
      num = static_cast<NumField>(i);
      return true;
    }
  }
  for (std::size_t i = 0; i < kTextFieldCount; ++i) {
    if (kTextNames[i] == name) {
      text = static_cast<TextField>(i);
      return true;
    }
  }
  return false;
}

void ObligorRecord::clear() noexcept {
  for (auto& t : text) t.clear();
  present = 0;
  read_error.clear();
  line = 0;
}

namespace {

// The steps of resolve_obligor, in the order its checks run. Each returns false after writing the
// first problem to `error`; none allocates unless it reports a problem.

// A read error, a missing id, or a given number that is not finite.
bool check_record(const ObligorRecord& rec, std::string& error) {
  if (!rec.read_error.empty()) {
    error = rec.read_error;
    return false;
  }
  if (rec.get(TextField::id).empty()) {
    error = field_error("id", "missing (every obligor needs an id)");
    return false;
  }
  const std::string& currency = rec.get(TextField::currency);
  if (!currency.empty() && !is_currency_code(currency)) {
    error = field_error("currency", "expected three upper-case letters (ISO 4217 style, e.g. EUR), got '");
    error.append(currency.substr(0, 40)).append("'");
    return false;
  }
  // Every number that was given must at least be finite (the readers reject text already).
  for (std::size_t i = 0; i < kNumFieldCount; ++i) {
    const auto f = static_cast<NumField>(i);
    if (rec.has(f) && !std::isfinite(rec.get(f))) {
      error = field_error(to_string(f), "must be a finite number");
      return false;
    }
  }
  return true;
}

// Equity value: market_cap, else share_price x shares_outstanding.
bool resolve_equity_value(const ObligorRecord& rec, MertonInputs& in, std::string& error) {
  if (rec.has(NumField::market_cap)) {
    in.equity_value = rec.get(NumField::market_cap);
    if (!(in.equity_value > 0.0)) {
      error = value_error(NumField::market_cap, "must be positive", in.equity_value);
      return false;
    }
    return true;
  }
  if (!rec.has(NumField::share_price) && !rec.has(NumField::shares_outstanding)) {
    error = field_error("market_cap", "missing (give market_cap, or share_price and shares_outstanding)");
    return false;
  }
  if (!rec.has(NumField::share_price)) {
    error = field_error("share_price", "missing (needed with shares_outstanding when market_cap is absent)");
    return false;
  }
  if (!rec.has(NumField::shares_outstanding)) {
    error = field_error("shares_outstanding", "missing (needed with share_price when market_cap is absent)");
    return false;
  }
  const double p = rec.get(NumField::share_price);
  const double n = rec.get(NumField::shares_outstanding);
  if (!(p > 0.0)) {
    error = value_error(NumField::share_price, "must be positive", p);
    return false;
  }
  if (!(n > 0.0)) {
    error = value_error(NumField::shares_outstanding, "must be positive", n);
    return false;
  }
  in.equity_value = p * n;
  if (!std::isfinite(in.equity_value)) {
    error = field_error("share_price", "share_price x shares_outstanding overflows");
    return false;
  }
  return true;
}

bool resolve_equity_vol(const ObligorRecord& rec, const ScoreSettings& settings, MertonInputs& in,
                        std::string& error) {
  if (!rec.has(NumField::equity_vol)) {
    error = field_error("equity_vol", "missing");
    return false;
  }
  in.equity_vol_annual = rec.get(NumField::equity_vol);
  if (!(in.equity_vol_annual > 0.0)) {
    error = value_error(NumField::equity_vol, "must be positive", in.equity_vol_annual);
    return false;
  }
  if (in.equity_vol_annual < kMinEquityVol) {
    error = value_error(NumField::equity_vol, "must be at least 0.0001 (0.01% a year)", in.equity_vol_annual);
    return false;
  }
  if (in.equity_vol_annual > settings.max_equity_vol) {
    error = value_error(
        NumField::equity_vol,
        "must be an annualised decimal (0.35 means 35%) no larger than " + shortest(settings.max_equity_vol),
        in.equity_vol_annual);
    return false;
  }
  return true;
}

// Default point: the obligor's own, else short_term_debt + weight x long_term_debt.
bool resolve_default_point(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                           MertonInputs& in, std::string& error) {
  // Debts are checked whenever given, even if default_point overrides them.
  for (NumField f : {NumField::short_term_debt, NumField::long_term_debt}) {
    if (rec.has(f) && rec.get(f) < 0.0) {
      error = value_error(f, "must not be negative", rec.get(f));
      return false;
    }
  }
  if (rec.has(NumField::default_point)) {
    in.default_point = rec.get(NumField::default_point);
    if (!(in.default_point > 0.0)) {
      error = value_error(NumField::default_point, "must be positive", in.default_point);
      return false;
    }
    return true;
  }
  if (!rec.has(NumField::short_term_debt)) {
    error =
        field_error("short_term_debt", "missing (give short_term_debt and long_term_debt, or default_point)");
    return false;
  }
  if (!rec.has(NumField::long_term_debt)) {
    error =
        field_error("long_term_debt", "missing (give short_term_debt and long_term_debt, or default_point)");
    return false;
  }
  const double w =
      settings.weight_override.value_or(book.default_point_weight.value_or(settings.default_point_weight));
  in.default_point = rec.get(NumField::short_term_debt) + w * rec.get(NumField::long_term_debt);
  if (!(in.default_point > 0.0)) {
    error = field_error("default_point",
                        "short_term_debt + weight x long_term_debt is zero: the model needs positive debt");
    return false;
  }
  return true;
}

// Rate: override > obligor > book.
bool resolve_rate(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                  MertonInputs& in, std::string& error) {
  if (settings.rate_override) {
    in.risk_free_rate_cc = *settings.rate_override;
  } else if (rec.has(NumField::rate)) {
    in.risk_free_rate_cc = rec.get(NumField::rate);
  } else if (book.rate) {
    in.risk_free_rate_cc = *book.rate;
  } else {
    error = field_error("rate", "missing (give a rate column, a book default or --rate)");
    return false;
  }
  if (in.risk_free_rate_cc < -1.0 || in.risk_free_rate_cc > 1.0) {
    error =
        value_error(NumField::rate, "must be a continuously compounded decimal in [-1, 1] (0.03 means 3%)",
                    in.risk_free_rate_cc);
    return false;
  }
  return true;
}

// Horizon: override > obligor > book > configuration.
bool resolve_horizon(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                     MertonInputs& in, std::string& error) {
  in.horizon_years = settings.horizon_override.value_or(rec.has(NumField::horizon)
                                                            ? rec.get(NumField::horizon)
                                                            : book.horizon.value_or(settings.horizon_years));
  if (!(in.horizon_years > 0.0) || in.horizon_years > 100.0) {
    error = value_error(NumField::horizon, "must be positive years, at most 100", in.horizon_years);
    return false;
  }
  return true;
}

// Drift: risk-neutral measure forces mu = r; else obligor > book > rate.
bool resolve_drift(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                   ResolvedObligor& out) {
  MertonInputs& in = out.inputs;
  out.drift_follows_rate =
      settings.measure == Measure::risk_neutral || (!rec.has(NumField::drift) && !book.drift);
  if (settings.measure == Measure::risk_neutral) {
    in.drift_annual = in.risk_free_rate_cc;
    return true;
  }
  in.drift_annual =
      rec.has(NumField::drift) ? rec.get(NumField::drift) : book.drift.value_or(in.risk_free_rate_cc);
  if (in.drift_annual < -1.0 || in.drift_annual > 1.0) {
    out.error =
        value_error(NumField::drift, "must be a continuously compounded decimal in [-1, 1]", in.drift_annual);
    return false;
  }
  return true;
}

// EAD, LGD (obligor > book > configuration), and the portfolio fields rho and maturity.
bool resolve_loss_fields(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                         ResolvedObligor& out) {
  if (rec.has(NumField::ead)) {
    out.ead = rec.get(NumField::ead);
    if (out.ead < 0.0) {
      out.error = value_error(NumField::ead, "must not be negative", out.ead);
      return false;
    }
    out.has_ead = true;
  }
  if (rec.has(NumField::lgd)) {
    out.lgd = rec.get(NumField::lgd);
    out.has_lgd = true;
  } else if (book.lgd) {
    out.lgd = *book.lgd;
    out.has_lgd = true;
  } else {
    out.lgd = settings.default_lgd;
  }
  if (out.lgd < 0.0 || out.lgd > 1.0) {
    out.error = value_error(NumField::lgd, "must be a decimal in [0, 1] (0.45 means 45%)", out.lgd);
    return false;
  }
  if (rec.has(NumField::asset_correlation)) {
    out.asset_correlation = rec.get(NumField::asset_correlation);
    if (!(out.asset_correlation >= 0.0 && out.asset_correlation < 1.0)) {
      out.error = value_error(NumField::asset_correlation, "must be a decimal in [0, 1) (0.2 means 20%)",
                              out.asset_correlation);
      return false;
    }
    out.has_asset_correlation = true;
  }
  if (rec.has(NumField::maturity)) {
    out.maturity_years = rec.get(NumField::maturity);
    if (!(out.maturity_years > 0.0) || out.maturity_years > 100.0) {
      out.error = value_error(NumField::maturity, "must be positive years, at most 100", out.maturity_years);
      return false;
    }
    out.has_maturity = true;
  }
  return true;
}

// Magnitudes: amounts far outside any balance sheet, or a default point and an equity value
// that differ by more than ten orders of magnitude, are unit mistakes, not obligors.
bool check_magnitudes(const MertonInputs& in, std::string& error) {
  if (!(in.equity_value >= kMinAmount && in.equity_value <= kMaxAmount)) {
    error = value_error(NumField::market_cap, "equity value must lie in [1e-150, 1e150]", in.equity_value);
    return false;
  }
  if (!(in.default_point >= kMinAmount && in.default_point <= kMaxAmount)) {
    error = value_error(NumField::default_point, "must lie in [1e-150, 1e150]", in.default_point);
    return false;
  }
  const double ratio = in.default_point / in.equity_value;
  if (!(ratio >= kMinLeverage && ratio <= kMaxLeverage)) {
    error = value_error(NumField::default_point,
                        "default point / equity value must lie in [1e-10, 1e10] (check the units)", ratio);
    return false;
  }
  return true;
}

// The typo guards, once every value is valid: each sets its caution bit, or under
// scoring.strict_inputs refuses the obligor. No allocation unless refused.
bool check_typo_guards(const ObligorRecord& rec, const ScoreSettings& settings, ResolvedObligor& out) {
  const MertonInputs& in = out.inputs;
  if (in.equity_vol_annual > settings.equity_vol_warn_above) {
    if (settings.strict_inputs) {
      out.error = value_error(NumField::equity_vol,
                              "above " + shortest(settings.equity_vol_warn_above) +
                                  " (scoring.equity_vol_warn_above) with scoring.strict_inputs on: an "
                                  "annualised decimal is expected (0.05 means 5%)",
                              in.equity_vol_annual);
      return false;
    }
    out.cautions |= static_cast<std::uint8_t>(InputCaution::high_equity_vol);
  }
  if (rec.has(NumField::market_cap) && rec.has(NumField::share_price) &&
      rec.has(NumField::shares_outstanding)) {
    const double product = rec.get(NumField::share_price) * rec.get(NumField::shares_outstanding);
    const double cap = rec.get(NumField::market_cap);
    if (std::isfinite(product) && !(std::fabs(product - cap) <= kEquityValueTolerance * cap)) {
      if (settings.strict_inputs) {
        out.error = value_error(NumField::market_cap,
                                "differs from share_price x shares_outstanding (" + shortest(product) +
                                    ") by more than 1% with scoring.strict_inputs on",
                                cap);
        return false;
      }
      out.cautions |= static_cast<std::uint8_t>(InputCaution::equity_value_differs);
    }
  }
  if (is_financial_sector(rec.get(TextField::sector))) {
    out.cautions |= static_cast<std::uint8_t>(InputCaution::financial_sector);
  }
  return true;
}

bool contains_ascii_nocase(std::string_view text, std::string_view word) noexcept {
  if (word.size() > text.size()) return false;
  for (std::size_t i = 0; i + word.size() <= text.size(); ++i) {
    std::size_t k = 0;
    while (k < word.size()) {
      const char c = text[i + k];
      const char lower = (c >= 'A' && c <= 'Z') ? static_cast<char>(c - 'A' + 'a') : c;
      if (lower != word[k]) break;
      ++k;
    }
    if (k == word.size()) return true;
  }
  return false;
}

std::string percent_text(double fraction) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3g%%", 100.0 * fraction);
  return buf;
}

constexpr std::string_view kFinancialScope =
    "the Merton model's debt treatment does not fit banks, insurers and other financial firms "
    "(deposits and policy reserves are not a default point of debt due), so read its PD with caution";

}  // namespace

bool is_financial_sector(std::string_view sector) noexcept {
  return contains_ascii_nocase(sector, "bank") || contains_ascii_nocase(sector, "financ") ||
         contains_ascii_nocase(sector, "insur");
}

void append_input_notes(const ObligorRecord& rec, const ResolvedObligor& r, double pd, double leverage,
                        const ScoreSettings& settings, std::vector<std::string>& notes) {
  if (!has_input_notes(r, leverage, settings)) return;
  const std::string who = "obligor '" + rec.get(TextField::id) + "': ";
  if (r.has(InputCaution::high_equity_vol)) {
    const double v = r.inputs.equity_vol_annual;
    std::string s = who + "field 'equity_vol': " + shortest(v) + " is read as " + percent_text(v) +
                    " a year, above " + shortest(settings.equity_vol_warn_above) +
                    " (scoring.equity_vol_warn_above); if " + shortest(v) + "% was meant, give " +
                    shortest(v / 100.0);
    if (pd > 0.5) s += "; its PD of " + percent_text(pd) + " (above 50%) comes from this input";
    notes.push_back(std::move(s));
  }
  if (r.has(InputCaution::equity_value_differs)) {
    notes.push_back(who + "field 'market_cap': " + shortest(rec.get(NumField::market_cap)) +
                    " differs from share_price x shares_outstanding = " +
                    shortest(rec.get(NumField::share_price) * rec.get(NumField::shares_outstanding)) +
                    " by more than 1%; market_cap is used");
  }
  if (r.has(InputCaution::financial_sector)) {
    notes.push_back(who + "sector '" + rec.get(TextField::sector) +
                    "' is a financial firm: " + std::string(kFinancialScope));
  } else if (leverage > settings.financial_leverage_above) {
    char lev[32];
    std::snprintf(lev, sizeof lev, "%.3g", leverage);
    notes.push_back(
        who + "leverage DP/V " + lev + " is above " + shortest(settings.financial_leverage_above) +
        " (scoring.financial_leverage_above), as at a bank or insurer; if it is a financial firm, " +
        std::string(kFinancialScope));
  }
}

void resolve_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                     ResolvedObligor& out) {
  out.error.clear();
  out.has_ead = false;
  out.has_lgd = false;
  out.has_asset_correlation = false;
  out.has_maturity = false;
  out.drift_follows_rate = false;
  out.cautions = 0;
  out.ead = 0.0;
  MertonInputs& in = out.inputs;
  if (!check_record(rec, out.error) || !resolve_equity_value(rec, in, out.error) ||
      !resolve_equity_vol(rec, settings, in, out.error) ||
      !resolve_default_point(rec, book, settings, in, out.error) ||
      !resolve_rate(rec, book, settings, in, out.error) ||
      !resolve_horizon(rec, book, settings, in, out.error) || !resolve_drift(rec, book, settings, out) ||
      !resolve_loss_fields(rec, book, settings, out) || !check_magnitudes(in, out.error)) {
    return;
  }
  const MertonInputCheck check = validate(in);
  if (!check.ok()) {
    out.error = field_error(to_string(check.field), check.message);
    return;
  }
  check_typo_guards(rec, settings, out);
}

}  // namespace firmcall
