// Outcomes built from the history store: every recorded run's PDs at its as-of date against the
// defaults observed within the horizon that follows (docs/validation.md, "Outcomes from the
// history store").
//
//   defaults file   id,default_date (YYYY-MM-DD); other columns are noted and not used
//   the rule        an obligor scored in a run as of date A, with default date D:
//                     D <= A                 left out (defaulted before the PD was given)
//                     A < D <= A + horizon   defaulted = 1
//                     otherwise (or no date) defaulted = 0
//                   A + horizon counts horizon_years * 365.25 days (common practice).
//   left out        obligors not scored in a run (no PD) and rows without an id.
//
// **Example**:
//   firmcall::DefaultDates d = firmcall::load_default_dates("defaults.csv");
//   firmcall::OutcomeSample s = firmcall::outcomes_from_store(store, d, {}, scale);
#pragma once

#include <cstdint>
#include <string>
#include <unordered_map>

#include "firmcall/book/grades.hpp"
#include "firmcall/io/outcomes_io.hpp"
#include "firmcall/monitor/run_store.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// Days in a year when a horizon in years is laid on the calendar (common practice).
inline constexpr double kDaysPerYear = 365.25;

/// The default date of each defaulted obligor, as days since 1970-01-01.
struct DefaultDates {
  std::string origin;  ///< the file, for messages
  std::unordered_map<std::string, std::int64_t> day_of;
};

/// Reads a defaults CSV (id, default_date). Throws InputError naming the file, line and field on
/// a missing column, an empty id, a date that is not a calendar date, or an id given twice.
DefaultDates load_default_dates(const std::string& path);
/// The same from text in memory; `origin` names it in messages.
DefaultDates parse_default_dates(std::string_view text, const std::string& origin);

struct StoreOutcomeOptions {
  double horizon_years = 1.0;  ///< the observation window after each as-of date
  /// The PD under test: "pd" (the model PD as stored) or "pd_calibrated" (the calibrated one-year
  /// PD recorded with score --record --pd-calibration; entries without one are left out as not
  /// scored).
  std::string pd_column = "pd";
  /// horizon_years finite and positive; pd_column "pd" or "pd_calibrated".
  OptionCheck validate() const;
};

/// Counts of what outcomes_from_store left out (for the run's notes).
struct StoreOutcomeCounts {
  std::size_t runs = 0;
  std::size_t defaulted_before = 0;  ///< defaulted on or before the run's as-of date
  std::size_t not_scored = 0;        ///< no PD in the run (or no id)
};

/// Every scored obligor of every run as one outcome row: the PD as stored (at the run's horizon;
/// score at the validation horizon for a like-for-like test), graded on `scale` from its one-year
/// equivalent, ids "RUN:ID". Throws InputError when the store has no runs, or the sample holds no
/// defaults or only defaults.
OutcomeSample outcomes_from_store(const RunStore& store, const DefaultDates& defaults,
                                  const StoreOutcomeOptions& options, const GradeScale& scale,
                                  StoreOutcomeCounts* counts = nullptr);

/// Days since 1970-01-01 of a calendar date YYYY-MM-DD (is_calendar_date); -1 and false otherwise.
bool calendar_day(std::string_view date, std::int64_t& day) noexcept;

}  // namespace firmcall
