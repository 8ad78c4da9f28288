// Stress scenario files (YAML) and quick scenario grids.
//
// A scenario file names scenarios; each scenario is a list of shocks (shock.hpp), and a shock may
// be limited to some obligors by a filter:
//
//   description: Invented scenarios for the demo book     # optional
//   scenarios:
//     - name: mild                                         # unique, required
//       description: Broad mild downturn                   # optional
//       shocks:
//         - equity_change: -0.10            # relative change of equity value (-0.10 = -10%)
//           equity_vol_multiplier: 1.15     # factor on equity volatility
//           equity_vol_add_points: 2        # volatility points added (2 = +0.02), after the factor
//           rate_shift_bp: 25               # basis points added to the rate
//           default_point_change: 0.05      # relative change of the default point (+5%)
//           horizon_years: 1                # replaces the horizon
//         - filter: {sector: [Energy, Materials], country: DE}
//           equity_change: -0.20
//
// A filter's keys are sector, country, currency and ids; each takes one name or a list. An
// obligor matches when, for every key given, its field equals one of the names (exact, case-
// sensitive). A shock without a filter hits every obligor. Unknown keys, empty filters, names that
// match no obligor of the book, and shocks that would make the equity value or default point
// non-positive are errors naming the file, line and key.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/model/shock.hpp"

namespace firmcall {

/// The obligor fields a shock can be limited by.
enum class FilterKey : std::uint8_t { sector, country, currency, ids, count };
inline constexpr std::size_t kFilterKeyCount = static_cast<std::size_t>(FilterKey::count);
/// Key as written in scenario files ("sector", "country", "currency", "ids").
std::string_view to_string(FilterKey key) noexcept;

/// The names one filter key accepts, as written, with their lines, and sorted for lookup.
struct FilterValues {
  std::vector<std::string> names;  ///< in file order
  std::vector<std::size_t> lines;  ///< line of each name
  std::vector<std::string> sorted;
  std::size_t line = 0;  ///< line of the key; 0 when the key is not used
  bool used() const noexcept { return line != 0 || !names.empty(); }
  bool contains(std::string_view name) const;
};

/// Which obligors a shock hits. No key used: every obligor.
struct ShockFilter {
  std::array<FilterValues, kFilterKeyCount> keys;
  bool any() const noexcept;  ///< true when at least one key is used
  bool matches(const ObligorRecord& rec) const;
};

/// One shock of a scenario, with where it was written.
struct ScenarioShock {
  Shock shock;
  ShockFilter filter;
  std::size_t line = 0;
};

struct Scenario {
  std::string name;
  std::string description;
  std::size_t line = 0;  ///< 0 for generated scenarios
  std::vector<ScenarioShock> shocks;
  /// For quick-grid scenarios: position in the grid (row: equity change, column: multiplier).
  int grid_row = -1;
  int grid_column = -1;

  /// The combined effect on one obligor (shocks == 0 when no shock applies to it).
  ShockEffect effect_for(const ObligorRecord& rec) const;
};

/// A parsed scenario file.
struct ScenarioSet {
  std::string origin;  ///< file name used in messages
  std::string description;
  std::vector<Scenario> scenarios;
};

/// Parses scenario YAML. Throws InputError ("file:line: scenario 'x', shock 2: key 'y': ...").
ScenarioSet parse_scenarios(const std::string& yaml_text, const std::string& origin);

/// Scenario files are hand-written YAML parsed whole; larger ones are refused before reading
/// (the YAML parser needs about 40 times the file size in memory).
inline constexpr std::size_t kMaxScenarioFileBytes = std::size_t{8} << 20;

/// Reads and parses a scenario file (InputError above kMaxScenarioFileBytes).
ScenarioSet load_scenarios(const std::string& path);

/// Throws InputError naming the scenario file, line and key for the first filter name that
/// matches no obligor of `book` (with the closest name of the book when one is near).
void check_filters(const ScenarioSet& set, const Book& book);

/// Scenarios for every pair of an equity change (relative, > -1) and an equity-volatility
/// multiplier (> 0), hitting every obligor; named like "equity -10% vol x1.25". Rows follow
/// `equity_changes`, columns `vol_multipliers`.
std::vector<Scenario> grid_scenarios(const std::vector<double>& equity_changes,
                                     const std::vector<double>& vol_multipliers);

}  // namespace firmcall
