#include "firmcall/book/grades.hpp"

#include <algorithm>
#include <cmath>
#include <set>

#include "firmcall/model/pd_horizon.hpp"

namespace firmcall {

int GradeScale::index_of(double pd) const noexcept {
  if (!(pd >= 0.0 && pd <= 1.0) || bands.empty()) return -1;
  // First band whose upper bound is >= pd.
  const auto it = std::lower_bound(bands.begin(), bands.end(), pd,
                                   [](const GradeBand& b, double p) { return b.max_pd < p; });
  if (it == bands.end()) return static_cast<int>(bands.size()) - 1;
  return static_cast<int>(it - bands.begin());
}

std::string_view GradeScale::label_of(double pd) const noexcept {
  return label_at(index_of(pd));
}

int GradeScale::index_of_pd_at(double pd, double horizon_years) const noexcept {
  return index_of(pd_one_year(pd, horizon_years));
}

std::string_view GradeScale::label_of_pd_at(double pd, double horizon_years) const noexcept {
  return label_at(index_of_pd_at(pd, horizon_years));
}

std::string_view GradeScale::label_at(int index) const noexcept {
  if (index < 0 || static_cast<std::size_t>(index) >= bands.size()) return {};
  return bands[static_cast<std::size_t>(index)].label;
}

std::string GradeScale::problem() const {
  if (bands.empty()) return "the scale has no grades";
  std::set<std::string> seen;
  double previous = 0.0;
  for (std::size_t i = 0; i < bands.size(); ++i) {
    const GradeBand& b = bands[i];
    const std::string where = "grade " + std::to_string(i + 1) + " ('" + b.label + "')";
    if (b.label.empty()) return "grade " + std::to_string(i + 1) + ": the label is empty";
    if (!seen.insert(b.label).second) return where + ": the label is used twice";
    if (!(b.max_pd > previous) || !(b.max_pd <= 1.0)) {
      return where + ": max_pd must be above the previous grade's and at most 1";
    }
    previous = b.max_pd;
  }
  if (bands.back().max_pd != 1.0) return "the last grade must have max_pd 1 (it holds every PD up to 1)";
  return {};
}

OptionCheck GradeScale::validate() const {
  std::string why = problem();
  if (why.empty()) return std::nullopt;
  return OptionProblem{"bands", std::to_string(bands.size()) + " grades", std::move(why)};
}

GradeScale default_grade_scale() {
  // Invented for firmcall: roughly doubling bounds from 1 basis point, one-year PDs.
  return GradeScale{{{"FC1", 0.0001},
                     {"FC2", 0.00025},
                     {"FC3", 0.0005},
                     {"FC4", 0.001},
                     {"FC5", 0.0025},
                     {"FC6", 0.005},
                     {"FC7", 0.01},
                     {"FC8", 0.025},
                     {"FC9", 0.1},
                     {"FC10", 1.0}}};
}

}  // namespace firmcall
