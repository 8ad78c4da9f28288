// Comparing two monitoring runs: who moved (distance to default, PD, grade), who is new, who was
// dropped, and which watchlist alerts fire (rules in settings, `monitoring.alerts`).
//
// Obligors are matched by id. An id that repeats within a run counts once (its first entry; the
// book already marks the repeats invalid); entries without an id cannot be followed and are left
// out. Grades are read on the scale in force (the settings), from the stored PD, so that a change
// of scale does not show up as migrations.
//
// The PD compared (PdBasis): runs recorded with a calibrated driving PD (score --record
// --pd-calibration) are compared on the calibrated one-year PD, and their grades and alerts follow
// it, when both runs drive the calibrated PD of the same calibration (method and data SHA-256).
// Otherwise both runs are compared on the model PD, and the choice carries a note saying why (a
// calibrated run is never compared with a model PD, nor two calibrations with each other).
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

/// The PD two runs are compared on: the model PD (at each obligor's horizon) or the calibrated
/// one-year PD of the obligor's DD.
enum class PdBasis : std::uint8_t { model, calibrated };

struct PdBasisChoice {
  PdBasis basis = PdBasis::model;
  RunCalibration calibration;  ///< with calibrated: the calibration both runs were recorded with
  /// Why the model PD is compared although a run drives the calibrated PD; empty otherwise.
  std::string note;
  /// The one-line statement of the PD for outputs, e.g. "calibrated one-year (method logistic,
  /// data sha256 0123456789ab...)" or "model".
  std::string description() const;
};

/// The PD the comparison of `before` with `now` follows (see the file comment).
PdBasisChoice comparison_basis(const RunInfo& before, const RunInfo& now);

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
  double pd_before = std::numeric_limits<double>::quiet_NaN();  ///< the PD of the comparison's basis
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
  PdBasisChoice basis;  ///< the PD behind pd_*, grades and alerts
};

/// Compares run `before` with the newer run `now`. The movers point into the two vectors, which
/// must outlive the result. Order: severity (descending), notches moved down (descending), PD now
/// (descending; not scored last), id.
/// With `basis` calibrated, PDs, grades and alerts use each obligor's stored calibrated one-year PD.
Comparison compare_runs(const std::vector<StoredObligor>& before, const std::vector<StoredObligor>& now,
                        const GradeScale& scale, const AlertRules& rules, const PdBasisChoice& basis = {});

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

/// Grade migration between two runs of the store (`validate --migration FROM,TO`). Each run's
/// obligors are graded on its own driving PD (the one-year model PD, or the calibrated one-year PD
/// when the run drives it) and matched by id as in compare_runs. Beside the grades, rows hold
/// "new" (only in the later run) and "ungraded" (in the run but not scored), columns "gone" (only
/// in the earlier run) and "ungraded".
struct RunMigration {
  RunInfo from;                           ///< the earlier run (rows)
  RunInfo to;                             ///< the later run (columns)
  std::vector<std::string> grade_labels;  ///< the scale's labels
  /// cells[row * (grades + 2) + column] (migration_counts of estimate/validation.hpp): rows 0 ..
  /// grades-1 the grade in `from`, row grades "new", row grades+1 "ungraded"; columns likewise with
  /// column grades "gone".
  std::vector<std::size_t> cells;
  std::vector<std::size_t> from_counts;  ///< graded obligors per grade in `from`
  std::vector<std::size_t> to_counts;    ///< graded obligors per grade in `to`
  double psi = 0.0;                      ///< population stability index of to_counts against from_counts
  std::size_t left_out = 0;              ///< entries without an id, or repeating one
  /// Set when the two runs' grades rest on different driving PDs.
  std::string note;

  std::size_t grades() const noexcept { return grade_labels.size(); }
  std::size_t at(std::size_t row, std::size_t column) const noexcept {
    return cells[row * (grades() + 2) + column];
  }
  /// Label of a row ("new", "ungraded" past the grades) or a column ("gone", "ungraded").
  std::string_view row_label(std::size_t row) const noexcept;
  std::string_view column_label(std::size_t column) const noexcept;
};

/// The migration from run `from_selector` to run `to_selector` (RunStore::select). InputError
/// naming the store and the run for an unknown run, the same run twice, or a run without a graded
/// obligor.
RunMigration run_grade_migration(const RunStore& store, std::string_view from_selector,
                                 std::string_view to_selector, const GradeScale& scale);

/// Chooses the runs: `now_selector` names the newer run ("" the latest; see RunStore::select) and
/// `before_selector` the older ("" the run before it). InputError when there is nothing to compare.
RunPair select_runs(const RunStore& store, std::string_view now_selector, std::string_view before_selector);

}  // namespace firmcall
