// The FX rates of a portfolio in one reporting currency (docs/portfolio.md, "Currencies"):
//
//   # as_of: 2026-11-30
//   currency,rate
//   GBP,1.17
//   USD,0.93
//
// `rate` is the number of units of the reporting currency that one unit of `currency` buys, as of
// the date on the first line. That line is required and is the only place the date is read from
// (not the file name). `currency` is three upper-case letters (ISO 4217 style), each at most once;
// `rate` is a finite number above 0. The reporting currency itself may be listed only at rate 1; it
// converts at 1 either way. Any problem is an InputError naming the file, the line and the field.
//
// **Example**:
//   firmcall::FxTable fx = firmcall::load_fx_rates("samples/demo_fx.csv");
//   const firmcall::FxRate* usd = fx.find("USD");
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace firmcall {

/// One row of an FX file.
struct FxRate {
  std::string currency;
  double rate = 0.0;     ///< units of the reporting currency per unit of `currency` (> 0, finite)
  std::size_t line = 0;  ///< 1-based line in the file
};

/// An FX file as read.
struct FxTable {
  std::string origin;         ///< the file name, for messages and outputs
  std::string as_of;          ///< YYYY-MM-DD, the date the rates hold on
  std::vector<FxRate> rates;  ///< in file order, one per currency

  /// The rate of `currency`, or nullptr when the file does not list it.
  const FxRate* find(std::string_view currency) const noexcept;
};

/// Largest FX file read, in bytes (a table of every currency is a few kilobytes).
inline constexpr std::size_t kMaxFxFileBytes = std::size_t{1} << 20;

/// Reads an FX file. Throws InputError ("file:line: field 'rate': ..., got '-1'").
FxTable load_fx_rates(const std::string& path);

/// The same from text in memory; `origin` names it in messages.
FxTable parse_fx_rates(std::string_view text, const std::string& origin);

}  // namespace firmcall
