// Comparing two monitoring runs: who moved (distance to default, PD, grade), who is new, who was
// dropped, and which watchlist alerts fire (rules in settings, `monitoring.alerts`).
//
// Obligors are matched by id. An id that repeats within a run counts once (its first entry; the
// book already marks the repeats invalid); entries without an id cannot be followed and are left
// out. Grades are read on the scale in force (the settings), from the stored PD, so that a change
// of scale does not show up as migrations.
//
// Alerts, evaluated on the newer run (see AlertRules in settings.hpp):
//   dd_drop     both scored and DD_before - DD_now > dd_drop
//   pd_jump     both scored, PD_now > pd_ratio * PD_before and PD_now >= pd_ratio_min_pd
//   downgrade   both scored and the grade worsened by at least downgrade_notches
//   pd_ceiling  scored now with PD_now > pd_ceiling (new obligors too)
//   not_scored  in the newer run but not scored there (invalid input or not converged)
// Severity is the number of alerts that fire. The watchlist is every obligor with an alert.
//
// **Example**:
//   auto pair = firmcall::select_runs(store, "", "");   // latest run and the one before it
//   auto cmp = firmcall::compare_runs(store.obligors(pair.before.run_id),
//                                     store.obligors(pair.now.run_id), config.grades,
//                                     config.monitor.alerts);
#pragma once

#include <cstdint>
#include <limits>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/grades.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/model/attribution.hpp"
#include "firmcall/monitor/run_store.hpp"

namespace firmcall {

/// Whether an obligor is in both runs, only the newer one, or only the older one.
enum class MoveKind : std::uint8_t { continuing, added, dropped };
/// "continuing", "new", "dropped".
std::string_view to_string(MoveKind k) noexcept;

/// Watchlist rules (see the file comment). Order is fixed (used as a bit index).
enum class Alert : std::uint8_t { dd_drop, pd_jump, downgrade, pd_ceiling, not_scored };
inline constexpr std::size_t kAlertCount = 5;
std::string_view to_string(Alert a) noexcept;

/// One obligor across the two runs. Values of a run the obligor is not in, or not scored in, are NaN
/// (grades -1).
struct Mover {
  std::string id;
  std::string name;  ///< from the newer run when present
  MoveKind kind = MoveKind::continuing;
  const StoredObligor* before = nullptr;  ///< entry in the older run, or null
  const StoredObligor* now = nullptr;     ///< entry in the newer run, or null
  double dd_before = std::numeric_limits<double>::quiet_NaN();
  double dd_now = std::numeric_limits<double>::quiet_NaN();
  double pd_before = std::numeric_limits<double>::quiet_NaN();
  double pd_now = std::numeric_limits<double>::quiet_NaN();
  int grade_before = -1;  ///< position on the scale (0 best), -1 when not scored
  int grade_now = -1;
  unsigned alerts = 0;  ///< bit i: Alert i fired
  int severity = 0;     ///< number of alerts

  bool has(Alert a) const noexcept { return (alerts >> static_cast<unsigned>(a)) & 1U; }
  double dd_change() const noexcept { return dd_now - dd_before; }
  double pd_change() const noexcept { return pd_now - pd_before; }
  /// PD_now / PD_before; NaN when either is missing or PD_before is 0.
  double pd_ratio() const noexcept;
  /// Grade positions moved down (positive: worse); 0 unless graded in both runs.
  int notches() const noexcept { return grade_before >= 0 && grade_now >= 0 ? grade_now - grade_before : 0; }
  /// Alert names joined by ';' (empty when none).
  std::string alert_list() const;
};

/// The comparison of two runs.
struct Comparison {
  std::vector<Mover> movers;  ///< every followed obligor of either run, most severe first
  std::size_t continuing = 0, added = 0, dropped = 0;
  std::size_t upgraded = 0, downgraded = 0, unchanged_grade = 0;  ///< among those graded in both runs
  std::size_t flagged = 0;                                        ///< movers with at least one alert
  std::size_t skipped = 0;  ///< entries without an id, or repeating an id, left out
  /// migration[i][j]: obligors graded i in the older run and j in the newer (scale positions).
  std::vector<std::vector<std::size_t>> migration;
};

/// Compares run `before` with the newer run `now`. The movers point into the two vectors, which
/// must outlive the result. Order: severity (descending), notches moved down (descending), PD now
/// (descending; not scored last), id.
Comparison compare_runs(const std::vector<StoredObligor>& before, const std::vector<StoredObligor>& now,
                        const GradeScale& scale, const AlertRules& rules);

/// Why one obligor's PD moved (attribution.hpp).
struct AttributedMover {
  const Mover* mover = nullptr;
  PdAttribution result;
};

/// Shapley attribution of the PD change of every continuing obligor scored in both runs (only
/// those in `ids` when it is not empty), largest PD rise first, then by id. `threads` >= 1 share
/// the work; the result does not depend on their number.
std::vector<AttributedMover> attribute_movers(const Comparison& comparison,
                                              const std::vector<std::string>& ids,
                                              const MertonSolveOptions& options, unsigned threads);

/// Two runs to compare.
struct RunPair {
  RunInfo before;
  RunInfo now;
};

/// Chooses the runs: `now_selector` names the newer run ("" the latest; see RunStore::select) and
/// `before_selector` the older ("" the run before it). InputError when there is nothing to compare.
RunPair select_runs(const RunStore& store, std::string_view now_selector, std::string_view before_selector);

}  // namespace firmcall
