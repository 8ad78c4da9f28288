// One obligor as read from a book (YAML or CSV), before and after its model inputs are resolved.
//
// Field names are the CSV column names and the YAML keys (see README.md, "Input reference").
#pragma once

#include <array>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/model/merton.hpp"

namespace firmcall {

/// Numeric fields of an obligor. Order is fixed (used as an index).
enum class NumField : std::uint8_t {
  market_cap,          ///< equity market value E, currency units
  share_price,         ///< price per share, currency units
  shares_outstanding,  ///< number of shares
  equity_vol,          ///< annualised equity volatility, decimal
  short_term_debt,     ///< debt due within a year, currency units
  long_term_debt,      ///< debt due after a year, currency units
  default_point,       ///< explicit default point, currency units (overrides the debt rule)
  rate,                ///< risk-free rate, continuously compounded decimal
  horizon,             ///< horizon, years
  drift,               ///< expected asset return mu, continuously compounded decimal
  ead,                 ///< exposure at default, currency units
  lgd,                 ///< loss given default, decimal in [0, 1]
  asset_correlation,   ///< portfolio model: asset correlation rho (weight of the systematic factor), [0, 1)
  maturity,            ///< Basel IRB effective maturity M, years (the formula holds it to [1, 5])
  count
};
inline constexpr std::size_t kNumFieldCount = static_cast<std::size_t>(NumField::count);

/// Text fields of an obligor.
enum class TextField : std::uint8_t { id, name, sector, country, currency, count };
inline constexpr std::size_t kTextFieldCount = static_cast<std::size_t>(TextField::count);

std::string_view to_string(NumField f) noexcept;
std::string_view to_string(TextField f) noexcept;
/// Every field name (text fields first), as used in CSV headers and YAML keys.
const std::vector<std::string>& obligor_field_names();
/// Looks a field name up among both kinds; returns false when it is neither.
bool field_from_string(std::string_view name, std::optional<NumField>& num,
                       std::optional<TextField>& text) noexcept;

/// An obligor as read: raw numbers (absent ones flagged), text fields, and the first read error.
struct ObligorRecord {
  std::array<std::string, kTextFieldCount> text;
  std::array<double, kNumFieldCount> num{};
  std::uint32_t present = 0;  ///< bit i set: num[i] was given
  std::string read_error;     ///< first problem met while reading (field named); empty if none
  std::size_t line = 0;       ///< 1-based line in the source file (CSV) or of the YAML entry

  bool has(NumField f) const noexcept { return (present >> static_cast<unsigned>(f)) & 1U; }
  double get(NumField f) const noexcept { return num[static_cast<std::size_t>(f)]; }
  void set(NumField f, double v) noexcept {
    num[static_cast<std::size_t>(f)] = v;
    present |= 1U << static_cast<unsigned>(f);
  }
  const std::string& get(TextField f) const noexcept { return text[static_cast<std::size_t>(f)]; }
  std::string& get(TextField f) noexcept { return text[static_cast<std::size_t>(f)]; }
  void clear() noexcept;
};

/// The currency of an obligor's amounts: its own `currency`, else the settings' default
/// (scoring.currency); empty when neither gives one.
inline std::string_view obligor_currency(const ObligorRecord& rec, const ScoreSettings& settings) noexcept {
  const std::string& own = rec.get(TextField::currency);
  return own.empty() ? settings.currency.view() : std::string_view(own);
}

/// What a book is read for. scoring: the equity value and equity_vol columns are required.
/// history: equity comes from a market history file, so a CSV book needs only the id column.
enum class BookUse : std::uint8_t { scoring, history };

/// Run-wide values a book may set (YAML `defaults:`); an obligor's own field wins over them.
struct BookDefaults {
  std::optional<double> rate;
  std::optional<double> horizon;
  std::optional<double> drift;
  std::optional<double> default_point_weight;
  std::optional<double> lgd;
};

/// What the typo guards and the model-scope check found in an obligor's inputs (bits of
/// ResolvedObligor::cautions). They never change a result; they become notes (docs/inputs.md).
enum class InputCaution : std::uint8_t {
  high_equity_vol = 1,       ///< equity_vol above scoring.equity_vol_warn_above: a percentage typed?
  equity_value_differs = 2,  ///< market_cap and share_price x shares_outstanding differ by more than 1%
  financial_sector = 4,      ///< the sector names a bank, insurer or other financial firm
};

/// market_cap and share_price x shares_outstanding may differ by this much (relative to market_cap)
/// before the equity_value_differs caution (rounding of a quoted price, common practice).
inline constexpr double kEquityValueTolerance = 0.01;

/// True when a sector name marks a financial firm: it holds "bank", "financ" or "insur" in any
/// case (Banks, Banking, Finance, Financials, Financial Services, Insurance, Reinsurance).
bool is_financial_sector(std::string_view sector) noexcept;

/// An obligor ready for the model, or the reason it is not.
struct ResolvedObligor {
  MertonInputs inputs;
  double ead = 0.0;                ///< 0 when not given
  double lgd = 0.0;                ///< the obligor's, else the book's, else the configured default
  double asset_correlation = 0.0;  ///< the obligor's own rho; meaningful when has_asset_correlation
  double maturity_years = 0.0;     ///< the obligor's own IRB maturity; meaningful when has_maturity
  bool has_ead = false;
  bool has_lgd = false;  ///< true when lgd came from the obligor or the book
  bool has_asset_correlation = false;
  bool has_maturity = false;
  std::string error;  ///< empty when usable; else "field 'x': reason, got 'value'"
  /// True when mu is the rate (risk-neutral measure, or no drift given): a rate change moves mu too.
  bool drift_follows_rate = false;
  std::uint8_t cautions = 0;  ///< InputCaution bits (set only when the obligor resolves)
  bool ok() const noexcept { return error.empty(); }
  bool has(InputCaution c) const noexcept { return (cautions & static_cast<std::uint8_t>(c)) != 0; }
};

/// Resolves E, DP, r, T, mu (and EAD, LGD) with the precedence: command-line override > obligor
/// field > book default > configuration default. Validates every value and names the field.
void resolve_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                     ResolvedObligor& out);

/// The notes on a resolved obligor's inputs, each without location ("obligor 'X': field
/// 'equity_vol' ..."), appended to `notes`. `pd` and `leverage` (DP / V) are the scored values,
/// NaN when not scored: a PD above 50% from a suspect equity_vol is said, and a leverage above
/// scoring.financial_leverage_above gets the financial-firm caution. Appends nothing (and does
/// not allocate) for an obligor without cautions whose leverage is below the level.
void append_input_notes(const ObligorRecord& rec, const ResolvedObligor& r, double pd, double leverage,
                        const ScoreSettings& settings, std::vector<std::string>& notes);

/// True when append_input_notes would append something (cheap: no allocation).
inline bool has_input_notes(const ResolvedObligor& r, double leverage,
                            const ScoreSettings& settings) noexcept {
  return r.ok() && (r.cautions != 0 || leverage > settings.financial_leverage_above);
}

}  // namespace firmcall
