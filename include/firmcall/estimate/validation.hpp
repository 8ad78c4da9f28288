// Validation and backtesting of PDs against observed defaults: the evidence a validator and a
// supervisor ask for (Basel II, paras 500-505; BCBS Working Paper 14, 2005; ECB instructions for
// reporting validation results). Every formula, its source and the thresholds are in
// docs/validation.md.
//
//   discrimination  ROC and CAP curves, AUC (Mann-Whitney, PD ties count one half) with the
//                   DeLong, DeLong & Clarke-Pearson (1988) variance and a 95% interval, the
//                   accuracy ratio AR = 2 AUC - 1 (Engelmann, Hayden & Tasche 2003) and the
//                   Kolmogorov-Smirnov distance; DeLong's test of two PD columns on one sample.
//   calibration     per grade and overall: observed default rate vs mean PD, one-sided binomial
//                   test, Jeffreys test (ECB), traffic light; over the grades Hosmer-Lemeshow;
//                   over the obligors Spiegelhalter's z and the Brier score.
//   stability       population stability index over grades; grade migration counts.
//
// "Defaulters" are the positives: a good PD is higher for them. The AUC comes from one ranking of
// the PDs (a radix sort of the PD bits with the default flag, O(n)), with the DeLong structural
// components read off the ranked tie groups (the mid-rank form of Sun & Xu 2014).
//
// Pure numerics: no I/O, nothing throws; results carry a status.
//
// **Example**:
//   firmcall::Discrimination d = firmcall::discrimination(pd, defaulted);
//   if (d.status == firmcall::ValidationStatus::ok) use(d.auc, d.auc_lower, d.auc_upper);
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string_view>
#include <vector>

namespace firmcall {

/// ok: every figure computed. one_class: no defaults or no non-defaults (discrimination is
/// undefined). invalid_input: a PD outside [0, 1] or not a number, a flag not 0 or 1, a grade out
/// of range, or spans of different lengths. no_memory: an allocation failed.
enum class ValidationStatus : std::uint8_t { ok, one_class, invalid_input, no_memory };
std::string_view to_string(ValidationStatus s) noexcept;

/// One point of the ROC and CAP curves: the obligors with PD >= threshold_pd are called defaulters.
struct CurvePoint {
  double threshold_pd = 0.0;
  double false_positive_rate = 0.0;  ///< share of non-defaulters with PD >= threshold (ROC x)
  double hit_rate = 0.0;             ///< share of defaulters with PD >= threshold (ROC and CAP y)
  double population_share = 0.0;     ///< share of all obligors with PD >= threshold (CAP x)
};

/// How well the PDs rank defaulters above non-defaulters.
struct Discrimination {
  ValidationStatus status = ValidationStatus::invalid_input;
  std::size_t observations = 0;
  std::size_t defaults = 0;
  double auc = 0.0;        ///< P(PD_defaulter > PD_non-defaulter) + 1/2 P(tie)
  double auc_se = 0.0;     ///< DeLong standard error
  double auc_lower = 0.0;  ///< 95% interval, AUC -/+ 1.959964 se, held to [0, 1]
  double auc_upper = 0.0;
  double accuracy_ratio = 0.0;   ///< 2 AUC - 1
  double ks = 0.0;               ///< max |F_defaulters(t) - F_non-defaulters(t)|
  double ks_threshold_pd = 0.0;  ///< a PD where the maximum is reached
  /// From the highest PD threshold down, one point per distinct PD, starting at (0, 0, 0); empty
  /// unless asked for.
  std::vector<CurvePoint> curve;
};

/// AUC, its DeLong interval, AR, KS and (with `curve`) the ROC and CAP points. `defaulted` holds 0
/// or 1 per obligor.
Discrimination discrimination(std::span<const double> pd, std::span<const std::uint8_t> defaulted,
                              bool curve = false) noexcept;

/// DeLong's test that two PD columns on the same obligors have equal AUC.
struct AucComparison {
  ValidationStatus status = ValidationStatus::invalid_input;
  double auc_first = 0.0;
  double auc_second = 0.0;
  double difference = 0.0;  ///< auc_first - auc_second
  double difference_se = 0.0;
  double z = 0.0;        ///< difference / difference_se (0 when both are 0)
  double p_value = 0.0;  ///< two-sided, 2 N(-|z|)
};
AucComparison compare_auc(std::span<const double> first_pd, std::span<const double> second_pd,
                          std::span<const std::uint8_t> defaulted) noexcept;

/// Both columns' discrimination (the first with `curve` when asked) and DeLong's test of their
/// AUCs, from one ranking of each column; the figures are those of discrimination() and
/// compare_auc(). The comparison's status is invalid_input when either column is invalid, else
/// one_class when a class is empty. At most 4,294,967,295 obligors (else no_memory).
struct ColumnComparison {
  Discrimination first;
  Discrimination second;
  AucComparison comparison;
};
ColumnComparison compare_columns(std::span<const double> first_pd, std::span<const double> second_pd,
                                 std::span<const std::uint8_t> defaulted, bool curve = false) noexcept;

/// Traffic light of a one-sided binomial p-value (Basel Committee 1996 backtesting zones, applied
/// to the p-value): green p > 5%, yellow 0.01% < p <= 5%, red p <= 0.01%.
enum class TrafficLight : std::uint8_t { green, yellow, red };
std::string_view to_string(TrafficLight t) noexcept;
inline constexpr double kYellowPValue = 0.05;
inline constexpr double kRedPValue = 0.0001;
TrafficLight traffic_light(double binomial_p) noexcept;

/// Observed defaults against the PDs of one group (a grade, or the whole sample).
struct GroupCalibration {
  std::size_t observations = 0;
  std::size_t defaults = 0;
  double mean_pd = 0.0;
  double default_rate = 0.0;
  double binomial_p = 1.0;  ///< P(X >= defaults), X ~ Binomial(observations, mean_pd)
  double jeffreys_p = 1.0;  ///< F_Beta(d + 1/2, n - d + 1/2)(mean_pd) (ECB)
  TrafficLight light = TrafficLight::green;
};

/// The tests of one group from its counts and mean PD (n > 0, 0 <= d <= n, mean PD in [0, 1]).
GroupCalibration group_calibration(std::size_t observations, std::size_t defaults, double mean_pd) noexcept;

struct CalibrationTests {
  ValidationStatus status = ValidationStatus::invalid_input;
  GroupCalibration overall;
  /// One per grade index 0 .. grade_count - 1 (a grade without obligors has observations 0 and
  /// the rest NaN).
  std::vector<GroupCalibration> grades;
  double hosmer_lemeshow = 0.0;        ///< sum over grades of (d - n p)^2 / (n p (1 - p))
  std::size_t hosmer_lemeshow_df = 0;  ///< grades in the sum (out-of-sample test of fixed PDs)
  double hosmer_lemeshow_p = 1.0;      ///< chi-square upper tail with hosmer_lemeshow_df
  double spiegelhalter_z = 0.0;
  double spiegelhalter_p = 1.0;  ///< two-sided
  double brier = 0.0;            ///< mean of (PD - outcome)^2
};

/// Calibration tests overall, per grade (grade[i] in [0, grade_count)) and over the grades.
CalibrationTests calibration_tests(std::span<const double> pd, std::span<const std::uint8_t> defaulted,
                                   std::span<const int> grade, int grade_count) noexcept;

/// The figures of one group of obligors (a segment of the sample): its calibration tests and its
/// discrimination, whose status is one_class when the group holds only one class (then only the
/// counts are set).
struct GroupValidation {
  GroupCalibration calibration;
  Discrimination discrimination;
};

/// Per group index 0 .. group_count - 1 (group[i] in [0, group_count)); a group without obligors
/// has observations 0 (calibration NaN, discrimination one_class). Each row's PD key is placed
/// with its group's (one counting pass) and each group ranked in place: memory grows by 8 bytes a
/// row and 8 a row of the largest group.
struct GroupedValidation {
  ValidationStatus status = ValidationStatus::invalid_input;
  std::vector<GroupValidation> groups;
};
GroupedValidation validation_by_group(std::span<const double> pd, std::span<const std::uint8_t> defaulted,
                                      std::span<const int> group, int group_count) noexcept;

/// Count added to every grade of both samples when a grade is empty in either (common practice).
inline constexpr double kPsiEmptyGradeCount = 0.5;

/// Population stability index sum (a - e) ln(a / e) over grades of the shares a (actual) and e
/// (expected). Grades empty in both samples are left out; when a grade is empty in one,
/// kPsiEmptyGradeCount is added to every remaining grade's count in both. NaN when a sample is
/// empty or the lengths differ.
double population_stability_index(std::span<const std::size_t> actual_counts,
                                  std::span<const std::size_t> expected_counts) noexcept;

/// Grade migration counts: cell [from * grade_count + to]; pairs with a grade out of range are
/// not counted. Empty on a failed allocation.
std::vector<std::size_t> migration_counts(std::span<const int> from_grade, std::span<const int> to_grade,
                                          int grade_count) noexcept;

}  // namespace firmcall
