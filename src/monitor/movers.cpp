#include "firmcall/monitor/movers.hpp"

#include <algorithm>
#include <cmath>
#include <thread>
#include <unordered_map>
#include <unordered_set>

#include "firmcall/book/errors.hpp"
#include "firmcall/estimate/validation.hpp"
#include "firmcall/monitor/store_error.hpp"

namespace firmcall {

std::string_view to_string(MoveKind k) noexcept {
  switch (k) {
    case MoveKind::continuing:
      return "continuing";
    case MoveKind::added:
      return "new";
    case MoveKind::dropped:
      return "dropped";
  }
  return "";
}

std::string_view to_string(Alert a) noexcept {
  switch (a) {
    case Alert::dd_drop:
      return "dd_drop";
    case Alert::pd_jump:
      return "pd_jump";
    case Alert::downgrade:
      return "downgrade";
    case Alert::pd_ceiling:
      return "pd_ceiling";
    case Alert::not_scored:
      return "not_scored";
  }
  return "";
}

double Mover::pd_ratio() const noexcept {
  if (!(pd_before > 0.0) || std::isnan(pd_now)) return std::numeric_limits<double>::quiet_NaN();
  return pd_now / pd_before;
}

std::string Mover::alert_list() const {
  std::string s;
  for (std::size_t i = 0; i < kAlertCount; ++i) {
    if (!has(static_cast<Alert>(i))) continue;
    if (!s.empty()) s += ';';
    s += to_string(static_cast<Alert>(i));
  }
  return s;
}

std::string PdBasisChoice::description() const {
  if (basis == PdBasis::model) return "model";
  return "calibrated one-year (method " + calibration.method + ", data sha256 " +
         calibration.data_sha256.substr(0, 12) + "...)";
}

PdBasisChoice comparison_basis(const RunInfo& before, const RunInfo& now) {
  PdBasisChoice c;
  const bool cal_before = before.driving_pd == DrivingPd::calibrated && before.calibration.present();
  const bool cal_now = now.driving_pd == DrivingPd::calibrated && now.calibration.present();
  const auto run = [](const RunInfo& r) { return "run " + std::to_string(r.run_id); };
  if (cal_before && cal_now) {
    if (before.calibration.method == now.calibration.method &&
        before.calibration.data_sha256 == now.calibration.data_sha256) {
      c.basis = PdBasis::calibrated;
      c.calibration = now.calibration;
      return c;
    }
    c.note = run(now) + " and " + run(before) +
             " were recorded with different calibrations (method or data sha256 differ); both are "
             "compared on the model PD";
  } else if (cal_before || cal_now) {
    c.note = (cal_now ? run(now) : run(before)) + " drives the calibrated PD and " +
             (cal_now ? run(before) : run(now)) + " the model PD; both are compared on the model PD";
  }
  return c;
}

namespace {

// First entry of each id; entries without an id, or repeating one, are counted in `skipped`.
std::unordered_map<std::string_view, const StoredObligor*> index_by_id(
    const std::vector<StoredObligor>& run, std::vector<const StoredObligor*>& order, std::size_t& skipped) {
  std::unordered_map<std::string_view, const StoredObligor*> map;
  map.reserve(run.size());
  for (const StoredObligor& o : run) {
    if (o.id.empty() || !map.emplace(o.id, &o).second) {
      ++skipped;
      continue;
    }
    order.push_back(&o);
  }
  return map;
}

void fill_side(const StoredObligor* o, const GradeScale& scale, PdBasis basis, double& dd, double& pd,
               int& grade) {
  if (!o || o->status != RowStatus::ok || !o->has_measures) return;
  dd = o->measures.distance_to_default;
  if (basis == PdBasis::calibrated) {
    // Already a one-year PD; NaN (not graded) when the run holds none for this obligor.
    pd = o->pd_calibrated;
    grade = std::isnan(pd) ? -1 : scale.index_of(pd);
    return;
  }
  pd = o->measures.pd;
  // Grades are on the one-year PD (a run recorded before the horizon was stored counts as one year).
  grade = scale.index_of_pd_at(pd, o->has_inputs ? o->inputs.horizon_years : 1.0);
}

void set(Mover& m, Alert a) {
  m.alerts |= 1U << static_cast<unsigned>(a);
  ++m.severity;
}

void apply_rules(Mover& m, const AlertRules& rules) {
  if (m.now && m.now->status != RowStatus::ok) set(m, Alert::not_scored);
  const bool both = !std::isnan(m.pd_before) && !std::isnan(m.pd_now);
  if (both && m.dd_before - m.dd_now > rules.dd_drop) set(m, Alert::dd_drop);
  if (both && m.pd_now > rules.pd_ratio * m.pd_before && m.pd_now >= rules.pd_ratio_min_pd)
    set(m, Alert::pd_jump);
  if (both && m.grade_before >= 0 && m.grade_now >= 0 &&
      m.grade_now - m.grade_before >= rules.downgrade_notches) {
    set(m, Alert::downgrade);
  }
  if (!std::isnan(m.pd_now) && m.pd_now > rules.pd_ceiling) set(m, Alert::pd_ceiling);
}

}  // namespace

Comparison compare_runs(const std::vector<StoredObligor>& before, const std::vector<StoredObligor>& now,
                        const GradeScale& scale, const AlertRules& rules, const PdBasisChoice& basis) {
  Comparison c;
  c.basis = basis;
  std::vector<const StoredObligor*> order_before, order_now;
  const auto by_id_before = index_by_id(before, order_before, c.skipped);
  const auto by_id_now = index_by_id(now, order_now, c.skipped);
  c.migration.assign(scale.bands.size(), std::vector<std::size_t>(scale.bands.size(), 0));
  c.movers.reserve(order_now.size() + order_before.size() / 16);

  const auto add = [&](const StoredObligor* b, const StoredObligor* n) {
    Mover m;
    m.before = b;
    m.now = n;
    m.id = n ? n->id : b->id;
    m.name = n ? n->name : b->name;
    m.kind = b && n ? MoveKind::continuing : n ? MoveKind::added : MoveKind::dropped;
    fill_side(b, scale, basis.basis, m.dd_before, m.pd_before, m.grade_before);
    fill_side(n, scale, basis.basis, m.dd_now, m.pd_now, m.grade_now);
    apply_rules(m, rules);
    c.movers.push_back(std::move(m));
  };
  for (const StoredObligor* n : order_now) {
    const auto it = by_id_before.find(n->id);
    add(it == by_id_before.end() ? nullptr : it->second, n);
  }
  for (const StoredObligor* b : order_before) {
    if (!by_id_now.contains(b->id)) add(b, nullptr);
  }

  for (const Mover& m : c.movers) {
    switch (m.kind) {
      case MoveKind::continuing:
        ++c.continuing;
        break;
      case MoveKind::added:
        ++c.added;
        break;
      case MoveKind::dropped:
        ++c.dropped;
        break;
    }
    if (m.severity > 0) ++c.flagged;
    if (m.grade_before >= 0 && m.grade_now >= 0) {
      ++c.migration[static_cast<std::size_t>(m.grade_before)][static_cast<std::size_t>(m.grade_now)];
      if (m.grade_now > m.grade_before) {
        ++c.downgraded;
      } else if (m.grade_now < m.grade_before) {
        ++c.upgraded;
      } else {
        ++c.unchanged_grade;
      }
    }
  }

  std::sort(c.movers.begin(), c.movers.end(), [](const Mover& a, const Mover& b) {
    if (a.severity != b.severity) return a.severity > b.severity;
    if (a.notches() != b.notches()) return a.notches() > b.notches();
    const bool an = std::isnan(a.pd_now), bn = std::isnan(b.pd_now);
    if (an != bn) return bn;  // scored before not scored
    if (!an && a.pd_now != b.pd_now) return a.pd_now > b.pd_now;
    return a.id < b.id;
  });
  return c;
}

std::vector<AttributedMover> attribute_movers(const Comparison& comparison,
                                              const std::vector<std::string>& ids,
                                              const MertonSolveOptions& options, unsigned threads) {
  const std::unordered_set<std::string> wanted(ids.begin(), ids.end());
  std::vector<AttributedMover> out;
  for (const Mover& m : comparison.movers) {
    if (m.kind != MoveKind::continuing || std::isnan(m.pd_before) || std::isnan(m.pd_now)) continue;
    if (!m.before->has_inputs || !m.now->has_inputs) continue;
    if (!wanted.empty() && !wanted.contains(m.id)) continue;
    out.push_back({&m, {}});
  }
  const std::size_t n = out.size();
  const unsigned t =
      std::max(1U, std::min<unsigned>(threads, static_cast<unsigned>(std::max<std::size_t>(n / 16, 1))));
  const auto work = [&out, &options, n, t](unsigned w) {
    for (std::size_t i = n * w / t; i < n * (w + 1) / t; ++i) {
      out[i].result = attribute_pd_change(out[i].mover->before->inputs, out[i].mover->now->inputs, options);
    }
  };
  std::vector<std::thread> pool;
  for (unsigned w = 1; w < t; ++w) pool.emplace_back(work, w);
  work(0);
  for (auto& th : pool) th.join();
  std::sort(out.begin(), out.end(), [](const AttributedMover& a, const AttributedMover& b) {
    const double da = a.mover->pd_change(), db = b.mover->pd_change();
    if (da != db) return da > db;
    return a.mover->id < b.mover->id;
  });
  return out;
}

std::string_view RunMigration::row_label(std::size_t row) const noexcept {
  if (row < grades()) return grade_labels[row];
  return row == grades() ? "new" : "ungraded";
}

std::string_view RunMigration::column_label(std::size_t column) const noexcept {
  if (column < grades()) return grade_labels[column];
  return column == grades() ? "gone" : "ungraded";
}

namespace {

// The grade of an obligor on its run's driving PD (one-year); -1 when it has none.
int driving_grade(const RunInfo& run, const StoredObligor& o, const GradeScale& scale) {
  if (o.status != RowStatus::ok || !o.has_measures) return -1;
  if (run.driving_pd == DrivingPd::calibrated) {
    return std::isnan(o.pd_calibrated) ? -1 : scale.index_of(o.pd_calibrated);
  }
  return scale.index_of_pd_at(o.measures.pd, o.has_inputs ? o.inputs.horizon_years : 1.0);
}

}  // namespace

RunMigration run_grade_migration(const RunStore& store, std::string_view from_selector,
                                 std::string_view to_selector, const GradeScale& scale) {
  RunMigration r;
  r.from = store.select(from_selector);
  r.to = store.select(to_selector);
  const std::string where = "history store '" + store.path() + "': ";
  if (r.from.run_id == r.to.run_id) {
    throw InputError(where + "run " + std::to_string(r.from.run_id) +
                     " is named as both runs of the migration; name two different runs");
  }
  for (const GradeBand& b : scale.bands) r.grade_labels.push_back(b.label);
  const int g = static_cast<int>(scale.bands.size());
  const int kNew = g, kUngraded = g + 1;  // kNew is also the "gone" column
  const auto before = store.obligors(r.from.run_id, false);
  const auto after = store.obligors(r.to.run_id, false);
  std::vector<const StoredObligor*> order_before, order_after;
  const auto by_id_before = index_by_id(before, order_before, r.left_out);
  const auto by_id_after = index_by_id(after, order_after, r.left_out);
  r.from_counts.assign(scale.bands.size(), 0);
  r.to_counts.assign(scale.bands.size(), 0);
  std::vector<int> rows, columns;
  rows.reserve(order_before.size() + order_after.size());
  columns.reserve(rows.capacity());
  for (const StoredObligor* b : order_before) {
    const int from = driving_grade(r.from, *b, scale);
    if (from >= 0) ++r.from_counts[static_cast<std::size_t>(from)];
    int to = kNew;  // gone
    if (const auto it = by_id_after.find(b->id); it != by_id_after.end()) {
      to = driving_grade(r.to, *it->second, scale);
      if (to < 0) to = kUngraded;
    }
    rows.push_back(from >= 0 ? from : kUngraded);
    columns.push_back(to);
  }
  for (const StoredObligor* a : order_after) {
    const int to = driving_grade(r.to, *a, scale);
    if (to >= 0) ++r.to_counts[static_cast<std::size_t>(to)];
    if (by_id_before.contains(a->id)) continue;
    rows.push_back(kNew);
    columns.push_back(to >= 0 ? to : kUngraded);
  }
  for (const RunInfo* run : {&r.from, &r.to}) {
    const auto& counts = run == &r.from ? r.from_counts : r.to_counts;
    if (std::all_of(counts.begin(), counts.end(), [](std::size_t n) { return n == 0; })) {
      throw InputError(where + "run " + std::to_string(run->run_id) + " (as of " + run->as_of +
                       ") has no graded obligor (none was scored), so there is no grade migration");
    }
  }
  r.cells = migration_counts(rows, columns, g + 2);
  r.psi = population_stability_index(r.to_counts, r.from_counts);
  if (r.from.driving_pd != r.to.driving_pd) {
    r.note = "run " + std::to_string(r.from.run_id) + " is graded on its " +
             std::string(to_string(r.from.driving_pd)) + " PD and run " + std::to_string(r.to.run_id) +
             " on its " + std::string(to_string(r.to.driving_pd)) +
             " PD (each run's driving PD): part of the migration is the change of PD";
  } else if (r.from.driving_pd == DrivingPd::calibrated && !(r.from.calibration == r.to.calibration)) {
    r.note = "runs " + std::to_string(r.from.run_id) + " and " + std::to_string(r.to.run_id) +
             " are graded on calibrated PDs of different calibrations: part of the migration is the "
             "change of calibration";
  }
  return r;
}

RunPair select_runs(const RunStore& store, std::string_view now_selector, std::string_view before_selector) {
  RunPair p;
  p.now = store.select(now_selector);
  if (before_selector.empty()) {
    auto prev = store.previous(p.now);
    if (!prev) {
      throw StoreError("history store '" + store.path() + "': run " + std::to_string(p.now.run_id) +
                           " (as of " + p.now.as_of + ") is the first one; nothing to compare it with",
                       StoreAdvice::name_earlier_run);
    }
    p.before = std::move(*prev);
  } else {
    p.before = store.select(before_selector);
  }
  if (p.before.run_id == p.now.run_id) {
    throw InputError("run " + std::to_string(p.now.run_id) +
                     " would be compared with itself; name another run");
  }
  return p;
}

}  // namespace firmcall
