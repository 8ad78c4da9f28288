// PD term structures under stress (`firmcall stress ... --horizons LIST` and `--model ...`): every
// obligor's curves as it stands (the base, term_run.hpp) and again under each scenario, whose
// shocks move the observed inputs (shock.hpp); the stressed inputs are calibrated again, so each
// stressed curve comes from its own (V, sV). A horizon shock moves the calibration horizon; the
// reported horizons stay those of the list (or each obligor's own horizon as it stands).
//
// Output is long: one row per scenario x obligor x model x horizon with base and stressed
// cumulative, forward and annualised PD and spread (CSV, JSON); the table shows both curves per
// obligor under each scenario.
//
// **Example**:
//   firmcall::ScenarioSet set = firmcall::load_scenarios("samples/stress_scenarios.yaml");
//   firmcall::TermBookOptions run;
//   run.horizons = {1, 5, 10};
//   std::string out;
//   auto s = firmcall::run_stress_term(book, set.scenarios, set.origin, {}, run,
//                                      [&](std::string_view t) { out += t; });
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/settings.hpp"
#include "firmcall/engine/stress_book.hpp"
#include "firmcall/engine/term_book.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/scenario.hpp"

namespace firmcall {

/// One obligor's curves under one scenario.
struct StressedTerm {
  StressStatus status = StressStatus::invalid_input;  ///< ok when every base and stressed point is ok
  bool shocked = false;                               ///< a shock of the scenario hits the obligor
  MertonInputs inputs;                                ///< stressed inputs (valid when the base resolved)
  std::vector<TermPoint> points;                      ///< like TermScoredObligor::points, stressed
  std::vector<std::string> messages;                  ///< per point: why base or stressed is not ok
};

/// Stresses one obligor whose base curves are known. Unshocked obligors keep their base curves;
/// shocked ones are calibrated again at the stressed inputs. Never throws for bad values.
void stress_term_obligor(const ObligorRecord& rec, const TermScoredObligor& base, const ShockEffect& effect,
                         const ScoreSettings& settings, const TermBookOptions& run, StressedTerm& out);

struct TermStressSummary {
  std::size_t obligors = 0;
  std::size_t scenarios = 0;
  std::size_t rows = 0;               ///< scenario x obligor x model x horizon rows written
  std::size_t failed_rows = 0;        ///< rows whose status is not ok
  std::size_t base_ok = 0;            ///< obligors whose base curves are all ok
  std::vector<std::string> problems;  ///< "file:line: obligor 'id': message", the first few
  std::size_t problems_not_listed = 0;
  std::vector<std::string> notes;
  std::size_t failed() const noexcept { return failed_rows; }
};

/// Column names of the machine-readable rows, in order.
const std::vector<std::string_view>& stress_term_columns();

/// Runs every scenario over the book and writes the rows in `run.format`.
TermStressSummary run_stress_term(const Book& book, const std::vector<Scenario>& scenarios,
                                  const std::string& scenario_origin, const ScoreSettings& settings,
                                  const TermBookOptions& run, const TextSink& sink);

}  // namespace firmcall
