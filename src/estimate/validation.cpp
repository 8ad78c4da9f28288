// Validation statistics of PDs against observed defaults (validation.hpp; formulas and sources in
// docs/validation.md).
#include "firmcall/estimate/validation.hpp"

#include <algorithm>
#include <bit>
#include <boost/math/distributions/binomial.hpp>
#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/special_functions/beta.hpp>
#include <cmath>
#include <limits>
#include <new>

#include "firmcall/model/math_policy.hpp"
#include "firmcall/model/normal.hpp"

namespace firmcall {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kZ975 = 1.959963984540054;  // N^-1(0.975)

bool valid_pd(double p) noexcept {
  return p >= 0.0 && p <= 1.0;  // false for NaN
}

// A PD column ranked for the rank statistics: one key per obligor, the PD's bits shifted left
// with the default flag in the lowest bit, sorted ascending. For PDs in [0, 1] (sign bit 0) the
// bits order as the values do, so the keys order by PD, and within a PD the non-defaulters
// (flag 0) come before the defaulters: each tie group is two runs of equal keys.
// The second buffers of a radix sort, kept to sort again without new memory.
struct RadixScratch {
  std::vector<std::uint64_t> key;
  std::vector<std::uint32_t> row;
};

struct RankedColumn {
  std::vector<std::uint64_t> key;
  std::vector<std::uint32_t> row;  // the obligor of each key, only when asked for
  std::size_t defaulters = 0;
  std::size_t others = 0;
  RadixScratch scratch;
};

std::uint64_t pd_key(double pd, std::uint8_t flag) noexcept {
  const double p = pd + 0.0;  // -0 becomes +0, so that it ties with 0
  return std::bit_cast<std::uint64_t>(p) << 1 | flag;
}

double key_pd(std::uint64_t key) noexcept {
  return std::bit_cast<double>(key >> 1);
}

constexpr int kRadixBits = 8;
constexpr std::size_t kRadixBuckets = std::size_t{1} << kRadixBits;
constexpr int kRadixPasses = (64 + kRadixBits - 1) / kRadixBits;

// Sorts c.key ascending, c.row along with it when not empty: least-significant-digit radix sort,
// one counting pass for every digit, then one stable scatter pass per digit, a digit equal in
// every key skipped. Measured (perf) on the 10,000,000 rows of bench/validate.sh, PDs of six
// decimals with many ties: about 0.3 s a column for keys and rows, where std::sort of (PD, row)
// pairs took about 1.2 s (its comparison branches unpredictably on ties) and std::sort of the
// two classes' PDs 0.75 s. The price is a second buffer of keys (and rows) while sorting.
void radix_sort(std::span<std::uint64_t> key, std::span<std::uint32_t> row, RadixScratch& scratch) {
  const std::size_t n = key.size();
  if (n == 0) return;
  const bool rows = !row.empty();
  std::size_t count[kRadixPasses][kRadixBuckets] = {};
  for (const std::uint64_t k : key) {
    for (int p = 0; p < kRadixPasses; ++p) ++count[p][(k >> (p * kRadixBits)) & (kRadixBuckets - 1)];
  }
  if (scratch.key.size() < n) scratch.key.resize(n);
  if (rows && scratch.row.size() < n) scratch.row.resize(n);
  std::uint64_t* key_from = key.data();
  std::uint64_t* key_to = scratch.key.data();
  std::uint32_t* row_from = row.data();
  std::uint32_t* row_to = scratch.row.data();
  for (int p = 0; p < kRadixPasses; ++p) {
    std::size_t* bucket = count[p];
    const int shift = p * kRadixBits;
    if (bucket[(key_from[0] >> shift) & (kRadixBuckets - 1)] == n) continue;
    std::size_t at = 0;
    for (std::size_t b = 0; b < kRadixBuckets; ++b) {
      const std::size_t size = bucket[b];
      bucket[b] = at;
      at += size;
    }
    if (rows) {
      for (std::size_t i = 0; i < n; ++i) {
        const std::size_t to = bucket[(key_from[i] >> shift) & (kRadixBuckets - 1)]++;
        key_to[to] = key_from[i];
        row_to[to] = row_from[i];
      }
      std::swap(row_from, row_to);
    } else {
      for (std::size_t i = 0; i < n; ++i)
        key_to[bucket[(key_from[i] >> shift) & (kRadixBuckets - 1)]++] = key_from[i];
    }
    std::swap(key_from, key_to);
  }
  if (key_from != key.data()) {  // an odd number of passes: the result is in the scratch buffer
    std::copy(key_from, key_from + n, key.data());
    if (rows) std::copy(row_from, row_from + n, row.data());
  }
}

// Checks the spans and ranks the column (with the rows when `rows`). The status says whether
// both classes are present.
ValidationStatus rank_column(std::span<const double> pd, std::span<const std::uint8_t> defaulted, bool rows,
                             RankedColumn& out) {
  if (pd.size() != defaulted.size()) return ValidationStatus::invalid_input;
  if (rows && pd.size() > std::numeric_limits<std::uint32_t>::max()) return ValidationStatus::no_memory;
  out.defaulters = 0;
  for (std::size_t k = 0; k < pd.size(); ++k) {
    if (!valid_pd(pd[k]) || defaulted[k] > 1) return ValidationStatus::invalid_input;
    out.defaulters += defaulted[k];
  }
  out.others = pd.size() - out.defaulters;
  out.key.resize(pd.size());
  for (std::size_t k = 0; k < pd.size(); ++k) out.key[k] = pd_key(pd[k], defaulted[k]);
  if (rows) {
    out.row.resize(pd.size());
    for (std::size_t k = 0; k < pd.size(); ++k) out.row[k] = static_cast<std::uint32_t>(k);
  }
  radix_sort(out.key, rows ? std::span<std::uint32_t>(out.row) : std::span<std::uint32_t>(), out.scratch);
  return out.defaulters == 0 || out.others == 0 ? ValidationStatus::one_class : ValidationStatus::ok;
}

// One distinct PD of the ranked column: how many of each class hold it and how many lie below
// it; its keys are key[first, split) (non-defaulters) and key[split, end) (defaulters).
struct TieGroup {
  double pd;
  std::size_t defaulters;        // dx
  std::size_t others;            // dy
  std::size_t defaulters_below;  // defaulters with a lower PD
  std::size_t others_below;      // non-defaulters with a lower PD
  std::size_t first;
  std::size_t split;
  std::size_t end;
};

// Calls f(TieGroup) for each distinct PD, ascending.
template <class F>
void for_each_tie_group(std::span<const std::uint64_t> key, F&& f) {
  const std::size_t n = key.size();
  std::size_t defaulters_below = 0;
  std::size_t others_below = 0;
  std::size_t k = 0;
  while (k < n) {
    const std::uint64_t other = key[k] & ~std::uint64_t{1};
    std::size_t split = k;
    while (split < n && key[split] == other) ++split;
    std::size_t end = split;
    while (end < n && key[end] == (other | 1)) ++end;
    f(TieGroup{key_pd(other), end - split, split - k, defaulters_below, others_below, k, split, end});
    defaulters_below += end - split;
    others_below += split - k;
    k = end;
  }
}

// The figures of discrimination() from ranked keys with m > 0 defaulters and n > 0 others.
void rank_statistics(std::span<const std::uint64_t> key, std::size_t m, std::size_t n, bool curve,
                     Discrimination& r) {
  const double md = static_cast<double>(m);
  const double nd = static_cast<double>(n);
  // Mann-Whitney count in halves, exact in integers: sum over groups of dx (2 below + dy).
  std::uint64_t halves = 0;
  double ks = 0.0;
  double ks_pd = 0.0;
  for_each_tie_group(key, [&](const TieGroup& g) {
    halves += static_cast<std::uint64_t>(g.defaulters) * (2 * g.others_below + g.others);
    const double fd = static_cast<double>(g.defaulters_below + g.defaulters) / md;
    const double fo = static_cast<double>(g.others_below + g.others) / nd;
    if (std::fabs(fd - fo) > ks) {
      ks = std::fabs(fd - fo);
      ks_pd = g.pd;
    }
  });
  r.auc = static_cast<double>(halves) / (2.0 * md * nd);
  // DeLong structural components: V10 of a defaulter (share of non-defaulters below it, ties
  // half) and V01 of a non-defaulter (share of defaulters above it, ties half).
  double s10 = 0.0;
  double s01 = 0.0;
  for_each_tie_group(key, [&](const TieGroup& g) {
    const double v10 = (static_cast<double>(g.others_below) + 0.5 * static_cast<double>(g.others)) / nd;
    const double v01 =
        (md - static_cast<double>(g.defaulters_below) - 0.5 * static_cast<double>(g.defaulters)) / md;
    s10 += static_cast<double>(g.defaulters) * (v10 - r.auc) * (v10 - r.auc);
    s01 += static_cast<double>(g.others) * (v01 - r.auc) * (v01 - r.auc);
  });
  s10 /= m > 1 ? md - 1.0 : 1.0;
  s01 /= n > 1 ? nd - 1.0 : 1.0;
  r.auc_se = std::sqrt(s10 / md + s01 / nd);
  r.auc_lower = std::max(0.0, r.auc - kZ975 * r.auc_se);
  r.auc_upper = std::min(1.0, r.auc + kZ975 * r.auc_se);
  r.accuracy_ratio = 2.0 * r.auc - 1.0;
  r.ks = ks;
  r.ks_threshold_pd = ks_pd;
  if (curve) {
    const double all = md + nd;
    for_each_tie_group(key, [&](const TieGroup& g) {
      r.curve.push_back(CurvePoint{g.pd, (nd - static_cast<double>(g.others_below)) / nd,
                                   (md - static_cast<double>(g.defaulters_below)) / md,
                                   (all - static_cast<double>(g.defaulters_below + g.others_below)) / all});
    });
    r.curve.push_back(CurvePoint{std::numeric_limits<double>::infinity(), 0.0, 0.0, 0.0});
    std::reverse(r.curve.begin(), r.curve.end());
  }
}

}  // namespace

std::string_view to_string(ValidationStatus s) noexcept {
  switch (s) {
    case ValidationStatus::ok:
      return "ok";
    case ValidationStatus::one_class:
      return "one_class";
    case ValidationStatus::invalid_input:
      return "invalid_input";
    case ValidationStatus::no_memory:
      return "no_memory";
  }
  return "invalid_input";
}

std::string_view to_string(TrafficLight t) noexcept {
  switch (t) {
    case TrafficLight::green:
      return "green";
    case TrafficLight::yellow:
      return "yellow";
    case TrafficLight::red:
      return "red";
  }
  return "red";
}

TrafficLight traffic_light(double binomial_p) noexcept {
  if (binomial_p > kYellowPValue) return TrafficLight::green;
  if (binomial_p > kRedPValue) return TrafficLight::yellow;
  return TrafficLight::red;
}

Discrimination discrimination(std::span<const double> pd, std::span<const std::uint8_t> defaulted,
                              bool curve) noexcept {
  Discrimination r;
  r.observations = pd.size();
  try {
    RankedColumn c;
    r.status = rank_column(pd, defaulted, false, c);
    r.defaults = r.status == ValidationStatus::invalid_input ? 0 : c.defaulters;
    if (r.status == ValidationStatus::ok) rank_statistics(c.key, c.defaulters, c.others, curve, r);
  } catch (const std::bad_alloc&) {
    r = Discrimination{};
    r.status = ValidationStatus::no_memory;
  }
  return r;
}

namespace {

// The DeLong component of each obligor under one ranked column (made with rows): V10 for a
// defaulter, V01 otherwise, as the obligor's tie group (group[row]) and the two values of each
// group (v10[g], v01[g]). The group numbers are written in one walk over the ranked keys.
struct Components {
  std::vector<std::uint32_t> group;
  std::vector<double> v10;
  std::vector<double> v01;
  double of(std::size_t row, std::uint8_t defaulted) const noexcept {
    return defaulted ? v10[group[row]] : v01[group[row]];
  }
};

void components(const RankedColumn& c, Components& out) {
  const double md = static_cast<double>(c.defaulters);
  const double nd = static_cast<double>(c.others);
  out.group.resize(c.key.size());
  out.v10.clear();
  out.v01.clear();
  for_each_tie_group(c.key, [&](const TieGroup& g) {
    const std::uint32_t id = static_cast<std::uint32_t>(out.v10.size());
    out.v10.push_back((static_cast<double>(g.others_below) + 0.5 * static_cast<double>(g.others)) / nd);
    out.v01.push_back(
        (md - static_cast<double>(g.defaulters_below) - 0.5 * static_cast<double>(g.defaulters)) / md);
    for (std::size_t k = g.first; k < g.end; ++k) out.group[c.row[k]] = id;
  });
}

// DeLong's test from the components of the two columns, summed in the obligors' order.
void delong_test(const Components& a, const Components& b, std::span<const std::uint8_t> defaulted,
                 std::size_t m, AucComparison& r) {
  const double md = static_cast<double>(m);
  const double nd = static_cast<double>(defaulted.size() - m);
  double mean[2][2] = {{0.0, 0.0}, {0.0, 0.0}};  // [class: 1 defaulters, 0 others][column]
  for (std::size_t k = 0; k < defaulted.size(); ++k) {
    mean[defaulted[k]][0] += a.of(k, defaulted[k]);
    mean[defaulted[k]][1] += b.of(k, defaulted[k]);
  }
  const double count[2] = {nd, md};
  for (int cls = 0; cls < 2; ++cls) {
    mean[cls][0] /= count[cls];
    mean[cls][1] /= count[cls];
  }
  // Variance of the difference of the components, per class: S_aa + S_bb - 2 S_ab.
  double var_diff[2] = {0.0, 0.0};
  for (std::size_t k = 0; k < defaulted.size(); ++k) {
    const int cls = defaulted[k];
    const double e = (a.of(k, defaulted[k]) - mean[cls][0]) - (b.of(k, defaulted[k]) - mean[cls][1]);
    var_diff[cls] += e * e;
  }
  for (int cls = 0; cls < 2; ++cls) var_diff[cls] /= count[cls] > 1.0 ? count[cls] - 1.0 : 1.0;
  r.auc_first = mean[1][0];
  r.auc_second = mean[1][1];
  r.difference = r.auc_first - r.auc_second;
  r.difference_se = std::sqrt(var_diff[1] / md + var_diff[0] / nd);
  r.z = r.difference_se > 0.0 ? r.difference / r.difference_se : 0.0;
  r.p_value = std::erfc(std::fabs(r.z) * kInvSqrt2);  // 2 N(-|z|)
  r.status = ValidationStatus::ok;
}

}  // namespace

ColumnComparison compare_columns(std::span<const double> first_pd, std::span<const double> second_pd,
                                 std::span<const std::uint8_t> defaulted, bool curve) noexcept {
  ColumnComparison r;
  r.first.observations = first_pd.size();
  r.second.observations = second_pd.size();
  if (first_pd.size() != second_pd.size() || first_pd.size() != defaulted.size()) {
    r.first.status = r.second.status = ValidationStatus::invalid_input;
    return r;
  }
  try {
    // One column at a time, in the same key and row buffers: a column's components are kept,
    // its ranking is overwritten by the next one's.
    Components a;
    Components b;
    RankedColumn c;
    const auto one = [&](std::span<const double> pd, bool with_curve, Discrimination& d, Components& v) {
      d.status = rank_column(pd, defaulted, true, c);
      d.defaults = d.status == ValidationStatus::invalid_input ? 0 : c.defaulters;
      c.scratch = RadixScratch{};  // not held while the components are written
      if (d.status != ValidationStatus::ok) return;
      rank_statistics(c.key, c.defaulters, c.others, with_curve, d);
      components(c, v);
    };
    one(first_pd, curve, r.first, a);
    one(second_pd, false, r.second, b);
    if (r.first.status == ValidationStatus::ok && r.second.status == ValidationStatus::ok) {
      delong_test(a, b, defaulted, r.first.defaults, r.comparison);
    } else if (r.first.status == ValidationStatus::invalid_input ||
               r.second.status == ValidationStatus::invalid_input) {
      r.comparison.status = ValidationStatus::invalid_input;
    } else {
      r.comparison.status = r.first.status == ValidationStatus::ok ? r.second.status : r.first.status;
    }
  } catch (const std::bad_alloc&) {
    r = ColumnComparison{};
    r.first.status = r.second.status = r.comparison.status = ValidationStatus::no_memory;
  }
  return r;
}

AucComparison compare_auc(std::span<const double> first_pd, std::span<const double> second_pd,
                          std::span<const std::uint8_t> defaulted) noexcept {
  return compare_columns(first_pd, second_pd, defaulted).comparison;
}

GroupCalibration group_calibration(std::size_t observations, std::size_t defaults, double mean_pd) noexcept {
  GroupCalibration g;
  g.observations = observations;
  g.defaults = defaults;
  if (observations == 0 || defaults > observations || !valid_pd(mean_pd)) {
    g.mean_pd = g.default_rate = g.binomial_p = g.jeffreys_p = kNaN;
    g.light = TrafficLight::red;
    return g;
  }
  const double n = static_cast<double>(observations);
  const double d = static_cast<double>(defaults);
  g.mean_pd = mean_pd;
  g.default_rate = d / n;
  if (defaults == 0) {
    g.binomial_p = 1.0;
  } else if (mean_pd == 0.0) {
    g.binomial_p = 0.0;
  } else if (mean_pd == 1.0) {
    g.binomial_p = 1.0;
  } else {
    // P(X >= d) = P(X > d - 1), the complement (never 1 - cdf).
    const boost::math::binomial_distribution<double, NoThrowPolicy> binom(n, mean_pd);
    g.binomial_p = boost::math::cdf(boost::math::complement(binom, d - 1.0));
  }
  g.jeffreys_p = boost::math::ibeta(d + 0.5, n - d + 0.5, mean_pd, NoThrowPolicy());
  g.light = traffic_light(g.binomial_p);
  return g;
}

CalibrationTests calibration_tests(std::span<const double> pd, std::span<const std::uint8_t> defaulted,
                                   std::span<const int> grade, int grade_count) noexcept {
  CalibrationTests r;
  if (pd.size() != defaulted.size() || pd.size() != grade.size() || grade_count < 0 || pd.empty()) return r;
  try {
    const std::size_t g_count = static_cast<std::size_t>(grade_count);
    std::vector<std::size_t> n(g_count, 0);
    std::vector<std::size_t> d(g_count, 0);
    std::vector<double> pd_sum(g_count, 0.0);
    std::size_t all_d = 0;
    double all_pd = 0.0;
    double brier = 0.0;
    double sp_num = 0.0;
    double sp_den = 0.0;
    for (std::size_t k = 0; k < pd.size(); ++k) {
      const double p = pd[k];
      if (!valid_pd(p) || defaulted[k] > 1 || grade[k] < 0 || grade[k] >= grade_count) return r;
      const std::size_t g = static_cast<std::size_t>(grade[k]);
      const double y = defaulted[k];
      ++n[g];
      d[g] += defaulted[k];
      pd_sum[g] += p;
      all_d += defaulted[k];
      all_pd += p;
      brier += (p - y) * (p - y);
      sp_num += (y - p) * (1.0 - 2.0 * p);
      sp_den += (1.0 - 2.0 * p) * (1.0 - 2.0 * p) * p * (1.0 - p);
    }
    const double total = static_cast<double>(pd.size());
    r.overall = group_calibration(pd.size(), all_d, std::min(1.0, all_pd / total));
    r.brier = brier / total;
    r.spiegelhalter_z = sp_den > 0.0 ? sp_num / std::sqrt(sp_den) : kNaN;
    r.spiegelhalter_p = sp_den > 0.0 ? std::erfc(std::fabs(r.spiegelhalter_z) * kInvSqrt2) : kNaN;
    r.grades.resize(g_count);
    double hl = 0.0;
    for (std::size_t g = 0; g < g_count; ++g) {
      const double mean = n[g] > 0 ? std::min(1.0, pd_sum[g] / static_cast<double>(n[g])) : kNaN;
      r.grades[g] = group_calibration(n[g], d[g], mean);
      if (n[g] == 0) continue;
      const double expected = static_cast<double>(n[g]) * mean;
      const double variance = expected * (1.0 - mean);
      const double gap = static_cast<double>(d[g]) - expected;
      if (variance > 0.0) {
        hl += gap * gap / variance;
        ++r.hosmer_lemeshow_df;
      } else if (gap != 0.0) {
        hl = std::numeric_limits<double>::infinity();  // defaults where the PD says none can be
      }
    }
    r.hosmer_lemeshow = hl;
    if (std::isinf(hl)) {
      r.hosmer_lemeshow_p = 0.0;
    } else if (r.hosmer_lemeshow_df == 0) {
      r.hosmer_lemeshow_p = kNaN;
    } else {
      const boost::math::chi_squared_distribution<double, NoThrowPolicy> chi2(
          static_cast<double>(r.hosmer_lemeshow_df));
      r.hosmer_lemeshow_p = boost::math::cdf(boost::math::complement(chi2, hl));
    }
    r.status = ValidationStatus::ok;
  } catch (const std::bad_alloc&) {
    r = CalibrationTests{};
    r.status = ValidationStatus::no_memory;
  }
  return r;
}

GroupedValidation validation_by_group(std::span<const double> pd, std::span<const std::uint8_t> defaulted,
                                      std::span<const int> group, int group_count) noexcept {
  GroupedValidation r;
  if (pd.size() != defaulted.size() || pd.size() != group.size() || group_count < 0) return r;
  try {
    const std::size_t g_count = static_cast<std::size_t>(group_count);
    std::vector<std::size_t> start(g_count + 1, 0);
    std::vector<std::size_t> d(g_count, 0);
    std::vector<double> pd_sum(g_count, 0.0);
    for (std::size_t k = 0; k < pd.size(); ++k) {
      if (!valid_pd(pd[k]) || defaulted[k] > 1 || group[k] < 0 || group[k] >= group_count) return r;
      const std::size_t g = static_cast<std::size_t>(group[k]);
      ++start[g + 1];
      d[g] += defaulted[k];
      pd_sum[g] += pd[k];
    }
    for (std::size_t g = 0; g < g_count; ++g) start[g + 1] += start[g];
    // The keys of each group together (in the file's order within the group), each group then
    // ranked in place.
    std::vector<std::uint64_t> key(pd.size());
    std::vector<std::size_t> at(start.begin(), start.end() - 1);
    for (std::size_t k = 0; k < pd.size(); ++k) {
      key[at[static_cast<std::size_t>(group[k])]++] = pd_key(pd[k], defaulted[k]);
    }
    RadixScratch scratch;
    r.groups.resize(g_count);
    for (std::size_t g = 0; g < g_count; ++g) {
      const std::size_t n = start[g + 1] - start[g];
      const double mean = n > 0 ? std::min(1.0, pd_sum[g] / static_cast<double>(n)) : kNaN;
      GroupValidation& out = r.groups[g];
      out.calibration = group_calibration(n, d[g], mean);
      out.discrimination.observations = n;
      out.discrimination.defaults = d[g];
      if (d[g] == 0 || d[g] == n) {
        out.discrimination.status = ValidationStatus::one_class;
        continue;
      }
      const std::span<std::uint64_t> key_g(key.data() + start[g], n);
      radix_sort(key_g, {}, scratch);
      rank_statistics(key_g, d[g], n - d[g], false, out.discrimination);
      out.discrimination.status = ValidationStatus::ok;
    }
    r.status = ValidationStatus::ok;
  } catch (const std::bad_alloc&) {
    r = GroupedValidation{};
    r.status = ValidationStatus::no_memory;
  }
  return r;
}

double population_stability_index(std::span<const std::size_t> actual_counts,
                                  std::span<const std::size_t> expected_counts) noexcept {
  if (actual_counts.size() != expected_counts.size() || actual_counts.empty()) return kNaN;
  double a_total = 0.0;
  double e_total = 0.0;
  bool empty_grade = false;
  double grades = 0.0;  // grades with obligors in either sample; the others are left out
  for (std::size_t g = 0; g < actual_counts.size(); ++g) {
    if (actual_counts[g] == 0 && expected_counts[g] == 0) continue;
    a_total += static_cast<double>(actual_counts[g]);
    e_total += static_cast<double>(expected_counts[g]);
    empty_grade = empty_grade || actual_counts[g] == 0 || expected_counts[g] == 0;
    grades += 1.0;
  }
  if (a_total == 0.0 || e_total == 0.0) return kNaN;
  const double add = empty_grade ? kPsiEmptyGradeCount : 0.0;
  double psi = 0.0;
  for (std::size_t g = 0; g < actual_counts.size(); ++g) {
    if (actual_counts[g] == 0 && expected_counts[g] == 0) continue;
    const double a = (static_cast<double>(actual_counts[g]) + add) / (a_total + add * grades);
    const double e = (static_cast<double>(expected_counts[g]) + add) / (e_total + add * grades);
    psi += (a - e) * std::log(a / e);
  }
  return psi;
}

std::vector<std::size_t> migration_counts(std::span<const int> from_grade, std::span<const int> to_grade,
                                          int grade_count) noexcept {
  std::vector<std::size_t> cells;
  if (grade_count <= 0 || from_grade.size() != to_grade.size()) return cells;
  try {
    const std::size_t g = static_cast<std::size_t>(grade_count);
    cells.assign(g * g, 0);
    for (std::size_t k = 0; k < from_grade.size(); ++k) {
      const int f = from_grade[k];
      const int t = to_grade[k];
      if (f < 0 || t < 0 || f >= grade_count || t >= grade_count) continue;
      ++cells[static_cast<std::size_t>(f) * g + static_cast<std::size_t>(t)];
    }
  } catch (const std::bad_alloc&) {
    cells.clear();
  }
  return cells;
}

}  // namespace firmcall
