// Writers of the stress and reverse-stress outputs (table for people, CSV and JSON for
// programs). Internal to firmcall_io: the public entry points are in firmcall/stress.hpp.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "firmcall/engine/stress_book.hpp"

namespace firmcall::detail {

/// What every stress writer needs to know about the run.
struct StressRunInfo {
  std::string book_origin;
  std::string scenario_origin;
  ScoreSettings settings;
  StressSettings stress;
  bool sensitivities = false;
  std::size_t obligors = 0;
  std::size_t scenarios = 0;
  const PdCalibration* pd_calibration = nullptr;  ///< when set: the calibrated PD columns
  std::string pd_calibration_origin;
  DrivingPd driving_pd = DrivingPd::model;
};

/// The calibrated one-year PDs of one row: of base and of stressed DD (NaN where there is none).
struct RowCalibratedPd {
  CalibratedPd base;
  CalibratedPd stressed;
};

/// Writes one stress run. Rows are appended to a caller's buffer so that workers can format in
/// parallel; `first` is true for the first obligor of a scenario.
class StressWriter {
 public:
  virtual ~StressWriter() = default;
  virtual void begin(std::string& out) const = 0;
  /// False when the format shows this scenario without per-obligor rows (the table's PD grid).
  virtual bool wants_rows(const Scenario&) const { return true; }
  virtual void scenario_begin(const Scenario& sc, std::size_t index, std::string& out) const = 0;
  virtual void row(const Scenario& sc, const ObligorRecord& rec, const ScoredObligor& base,
                   const StressedObligor& s, const RowCalibratedPd& cal, bool first,
                   std::string& out) const = 0;
  virtual void scenario_end(const Scenario& sc, const ScenarioSummary& sum, std::string& out) const = 0;
  virtual void end(const StressSummary& sum, const std::vector<Scenario>& scenarios,
                   std::string& out) const = 0;
};

std::unique_ptr<StressWriter> make_stress_writer(OutputFormat format, const StressRunInfo& info);

/// Writes one reverse-stress run.
class ReverseStressWriter {
 public:
  virtual ~ReverseStressWriter() = default;
  virtual void begin(std::string& out) const = 0;
  virtual void row(const ObligorRecord& rec, const ScoredObligor& base, const ReverseStressRow& r, bool first,
                   std::string& out) const = 0;
  virtual void end(const ReverseStressSummary& sum, std::string& out) const = 0;
};

std::unique_ptr<ReverseStressWriter> make_reverse_stress_writer(OutputFormat format,
                                                                const StressRunInfo& info, double target_pd,
                                                                const ReverseStressOptions& options);

}  // namespace firmcall::detail
