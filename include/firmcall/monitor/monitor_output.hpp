// Output of the monitoring commands (runs, movers, watchlist, attribute, track) as a table for
// people, CSV or JSON. Grades are on the scale in force (settings), read from the stored PD.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/grades.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/monitor/movers.hpp"
#include "firmcall/monitor/run_store.hpp"
#include "firmcall/util/option_check.hpp"

namespace firmcall {

/// `firmcall runs`: every run of a store, oldest first.
void write_runs_report(const std::string& store_path, const std::vector<RunInfo>& runs, OutputFormat format,
                       std::string& out);

/// Which movers write_movers_report() shows.
struct MoversOptions {
  bool watchlist = false;  ///< only obligors with an alert (the watchlist)
  std::size_t top = 0;     ///< at most this many rows; 0: all
  /// Every value is meaningful (top 0 shows all rows): nothing to refuse. Here so that every
  /// options struct can be checked alike.
  OptionCheck validate() const;
};

/// `firmcall movers` and `firmcall watchlist`: the comparison of two runs, most severe first.
void write_movers_report(const RunPair& runs, const Comparison& comparison, const GradeScale& scale,
                         const AlertRules& rules, const MoversOptions& view, OutputFormat format,
                         std::string& out);

/// `firmcall attribute`: Shapley attribution of each PD change to its drivers.
void write_attribution_report(const RunPair& runs, const std::vector<AttributedMover>& rows,
                              std::size_t left_out, const GradeScale& scale, OutputFormat format,
                              std::string& out);

/// `firmcall track ID`: one obligor's distance to default, PD and grade run by run.
void write_track_report(std::string_view obligor_id, const std::vector<RunStore::SeriesPoint>& series,
                        const GradeScale& scale, OutputFormat format, std::string& out);

/// `firmcall validate --migration FROM,TO`: the grade migration matrix of two runs (counts and
/// row shares) and the PSI of their grade distributions. CSV in long form
/// (from_run,to_run,from_grade,to_grade,statistic,value); JSON with from_run, to_run, psi and
/// migration (the non-empty cells: from_grade, to_grade, obligors, row_share).
void write_run_migration_report(const std::string& store_path, const RunMigration& migration,
                                OutputFormat format, std::string& out);

}  // namespace firmcall
