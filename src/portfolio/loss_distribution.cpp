// Exact one-factor loss distribution: Andersen-Sidenius-Basu recursion on a loss grid, adaptive
// product-Simpson quadrature over the factor, Acerbi-Tasche expected shortfall and its
// contributions. See include/firmcall/loss_distribution.hpp.
#include "firmcall/portfolio/loss_distribution.hpp"

#include <algorithm>
#include <boost/math/quadrature/gauss.hpp>
#include <cmath>
#include <cstddef>
#include <limits>
#include <numeric>

#include "firmcall/model/normal.hpp"
#include "firmcall/util/parallel.hpp"
#include "firmcall/util/vector_math.hpp"
#include "portfolio/confidence_levels.hpp"

namespace firmcall {

std::string_view to_string(LossStatus s) noexcept {
  switch (s) {
    case LossStatus::ok:
      return "ok";
    case LossStatus::tolerance_not_met:
      return "tolerance_not_met";
    case LossStatus::grid_too_short:
      return "grid_too_short";
    case LossStatus::invalid_input:
      return "invalid_input";
  }
  return "";
}

OptionCheck OneFactorOptions::validate() const {
  if (!detail::confidence_levels_valid(confidence_levels)) {
    return OptionProblem{"confidence_levels", detail::number_list_text(confidence_levels),
                         "must be distinct, ascending and inside (0, 1)"};
  }
  if (grid_points < 16 || grid_points > (std::size_t{1} << 24)) {
    return OptionProblem{"grid_points", std::to_string(grid_points), "must lie in [16, 2^24]"};
  }
  if (!(tolerance > 0.0)) return OptionProblem{"tolerance", option_value_text(tolerance), "must be positive"};
  if (!(loss_unit >= 0.0) || !std::isfinite(loss_unit)) {
    return OptionProblem{"loss_unit", option_value_text(loss_unit), "must be finite and non-negative"};
  }
  if (max_nodes < 64) return OptionProblem{"max_nodes", std::to_string(max_nodes), "must be at least 64"};
  return std::nullopt;
}

namespace {

using Index = std::ptrdiff_t;

constexpr double kZMax = 8.5;          // factor range; N(-8.5) ~ 9.5e-18 lies beyond each end
constexpr double kTrim = 1e-30;        // probabilities below this at the ends of a window are dropped
constexpr double kFlushPd = 1e-250;    // conditional PDs below this count as 0 (no subnormals)
constexpr double kSure = 1e-14;        // "almost surely" when classifying nodes for contributions
constexpr double kMinPanel = 1e-6;     // panels are not bisected below this width
constexpr double kInitialPanel = 1.0;  // width of the first panels

// One obligor prepared for the recursion: p(z) = N(a - b z); loss = units + frac grid units.
struct Prepared {
  std::size_t index = 0;  // position in the book
  double a = 0.0;
  double b = 0.0;
  bool certain = false;  // PD = 1
  Index units = 0;
  double frac = 0.0;
  double pd_at(double z) const noexcept {
    if (certain) return 1.0;
    const double p = norm_cdf(a - b * z);
    return p < kFlushPd ? 0.0 : p;
  }
  double mean_units() const noexcept { return static_cast<double>(units) + frac; }
};

struct Window {
  Index lo = 0;
  Index hi = -1;  // empty when hi < lo
};

// out = in convolved with one obligor's loss (default probability p; loss a units with
// probability 1 - f, a + 1 with f), the last point K - 1 absorbing. `in` is zero outside win_in;
// `out`'s nonzero entries lie inside win_out on entry and inside the returned window on exit.
void convolve(const double* in, Window win_in, double* out, Window& win_out, Index K, double p, Index a,
              double f, double& trimmed) noexcept {
  const Index top = K - 1;
  const double c0 = 1.0 - p;
  const double c1 = p * (1.0 - f);
  const double c2 = p * f;
  const Index nlo = p < 1.0 ? win_in.lo : std::min(win_in.lo + a, top);
  const Index nhi = std::min(win_in.hi + a + (c2 > 0.0 ? 1 : 0), top);
  for (Index k = win_out.lo; k <= std::min(win_out.hi, nlo - 1); ++k) out[k] = 0.0;
  for (Index k = std::max(win_out.lo, nhi + 1); k <= win_out.hi; ++k) out[k] = 0.0;
  const Index body_hi = std::min(nhi, top - 1);
  // Every buffer has kPad zeros in front of index 0 and is zero outside its window, so one loop
  // without branches covers the three terms.
  double* __restrict o = out;
  const double* __restrict i0 = in;
  const double* __restrict i1 = in - a;
  const double* __restrict i2 = in - a - 1;
  for (Index k = nlo; k <= body_hi; ++k) o[k] = c0 * i0[k] + c1 * i1[k] + c2 * i2[k];
  if (nhi == top) {
    // Everything that lands at or above the last point stays there.
    double s = win_in.hi == top ? c0 * in[top] : 0.0;
    double sum1 = 0.0;
    for (Index j = std::max(win_in.lo, top - a); j <= win_in.hi; ++j) sum1 += in[j];
    s += c1 * sum1;
    if (c2 > 0.0) {
      double sum2 = 0.0;
      for (Index j = std::max(win_in.lo, top - a - 1); j <= win_in.hi; ++j) sum2 += in[j];
      s += c2 * sum2;
    }
    out[top] = s;
  }
  Index lo = nlo;
  Index hi = nhi;
  while (hi > lo && out[hi] < kTrim) {
    trimmed += out[hi];
    out[hi] = 0.0;
    --hi;
  }
  while (lo < hi && out[lo] < kTrim) {
    trimmed += out[lo];
    out[lo] = 0.0;
    ++lo;
  }
  win_out = {lo, hi};
}

// A distribution held in a full-length buffer, zero outside its window.
struct Dist {
  double* v = nullptr;
  Window w;
  void clear() noexcept {
    for (Index k = w.lo; k <= w.hi; ++k) v[k] = 0.0;
    w = {0, -1};
  }
  void set_point_mass_at_zero() noexcept {
    clear();
    v[0] = 1.0;
    w = {0, 0};
  }
  void copy_from(const Dist& o) noexcept {
    clear();
    for (Index k = o.w.lo; k <= o.w.hi; ++k) v[k] = o.v[k];
    w = o.w;
  }
};

// The conditional loss distribution at one factor value.
struct Node {
  double z = 0.0;
  Window w;
  std::vector<double> values;  // values[k - w.lo]
  double mean_units = 0.0;     // E[L | z] in grid units
  double trimmed = 0.0;
  double mass_from(Index k) const noexcept {  // P(L >= k | z)
    double s = 0.0;
    for (Index j = std::max(k, w.lo); j <= w.hi; ++j) s += values[static_cast<std::size_t>(j - w.lo)];
    return s;
  }
  double mass_to(Index k) const noexcept {  // P(L <= k | z)
    double s = 0.0;
    for (Index j = w.lo; j <= std::min(k, w.hi); ++j) s += values[static_cast<std::size_t>(j - w.lo)];
    return s;
  }
};

// Each full-length buffer is preceded by K + 2 zeros, so reads at k - a - 1 (a <= K) stay inside it.
std::size_t buffer_stride(Index K) noexcept {
  return 2 * static_cast<std::size_t>(K) + 2;
}
double* buffer_at(std::vector<double>& storage, std::size_t slot, Index K) noexcept {
  return storage.data() + slot * buffer_stride(K) + static_cast<std::size_t>(K) + 2;
}

struct Model {
  std::vector<Prepared> obligors;
  Index K = 0;
  double unit = 0.0;
  bool batched = false;      // conditional PDs in blocks and the sub-step losses by a product tree
  std::size_t sub_step = 0;  // obligors [0, sub_step) lose less than one grid step (units 0)
};

// A loss distribution on part of the grid: P(L = lo + k) = v[k].
struct Poly {
  Index lo = 0;
  std::vector<double> v;
};

// out = a * b (the distribution of the sum), the point `top` absorbing everything at or above
// it; end values below kTrim are dropped into `trimmed`, as in convolve.
void multiply(const Poly& a, const Poly& b, Index top, Poly& out, double& trimmed) {
  const Index na = static_cast<Index>(a.v.size());
  const Index nb = static_cast<Index>(b.v.size());
  const Index lo = std::min(a.lo + b.lo, top);
  const Index hi = std::min(a.lo + b.lo + na + nb - 2, top);
  out.lo = lo;
  out.v.assign(static_cast<std::size_t>(hi - lo + 1), 0.0);
  double* __restrict o = out.v.data();
  const double* __restrict bv = b.v.data();
  for (Index i = 0; i < na; ++i) {
    const double ai = a.v[static_cast<std::size_t>(i)];
    const Index base = a.lo + i + b.lo - lo;                        // where b[0] lands
    const Index below = std::clamp<Index>(top - lo - base, 0, nb);  // terms below the top point
    double* __restrict ob = o + base;
    for (Index j = 0; j < below; ++j) ob[j] += ai * bv[j];
    if (below < nb) {
      double s = 0.0;
      for (Index j = below; j < nb; ++j) s += bv[j];
      o[top - lo] += ai * s;
    }
  }
  double dropped = 0.0;
  std::size_t end = out.v.size();
  while (end > 1 && out.v[end - 1] < kTrim) dropped += out.v[--end];
  out.v.resize(end);
  std::size_t first = 0;
  while (first + 1 < out.v.size() && out.v[first] < kTrim) dropped += out.v[first++];
  trimmed += dropped;
  if (first > 0) {
    out.v.erase(out.v.begin(), out.v.begin() + static_cast<std::ptrdiff_t>(first));
    out.lo += static_cast<Index>(first);
  }
}

// The product of many sub-step losses (1 - q) + q x, built as a binary tree: leaves of up to
// kLeaf obligors one at a time, then pairwise products (a binary counter: slot l holds the
// product of 2^l leaves), so each level costs about the square of its windows.
class ProductTree {
 public:
  static constexpr std::size_t kLeaf = 64;
  void reset(Index top) noexcept {
    top_ = top;
    trimmed_ = 0.0;
    for (std::size_t l = 0; l < used_.size(); ++l) used_[l] = false;
    start_leaf();
  }
  void add(double q) {
    std::vector<double>& v = leaf_.v;
    const std::size_t last = v.size() - 1;
    const double c = 1.0 - q;
    if (static_cast<Index>(last) < top_) {
      const double up = q * v[last];
      if (up < kTrim) {
        trimmed_ += up;  // as convolve drops a new end value below kTrim
      } else {
        v.push_back(up);
      }
      for (std::size_t k = last; k > 0; --k) v[k] = c * v[k] + q * v[k - 1];
    } else {  // the top point keeps its mass and takes what moves up into it
      v[last] += q * v[last - 1];
      for (std::size_t k = last - 1; k > 0; --k) v[k] = c * v[k] + q * v[k - 1];
    }
    v[0] *= c;
    if (++in_leaf_ == kLeaf) push_leaf();
  }
  // The product of everything added, into `out` (zero outside its window on entry).
  void finish(Dist& out, double& trimmed) {
    if (in_leaf_ > 0) push_leaf();
    trimmed += trimmed_;
    trimmed_ = 0.0;
    bool have = false;
    for (std::size_t l = used_.size(); l-- > 0;) {
      if (!used_[l]) continue;
      if (!have) {
        std::swap(carry_, slots_[l]);
        have = true;
      } else {
        multiply(carry_, slots_[l], top_, tmp_, trimmed);
        std::swap(carry_, tmp_);
      }
      used_[l] = false;
    }
    out.clear();
    if (!have) {
      out.set_point_mass_at_zero();
      return;
    }
    for (std::size_t k = 0; k < carry_.v.size(); ++k) out.v[carry_.lo + static_cast<Index>(k)] = carry_.v[k];
    out.w = {carry_.lo, carry_.lo + static_cast<Index>(carry_.v.size()) - 1};
  }

 private:
  void start_leaf() {
    leaf_.lo = 0;
    leaf_.v.assign(1, 1.0);
    in_leaf_ = 0;
  }
  void push_leaf() {
    std::swap(carry_, leaf_);
    std::size_t l = 0;
    for (; l < used_.size() && used_[l]; ++l) {
      multiply(slots_[l], carry_, top_, tmp_, trimmed_);
      std::swap(carry_, tmp_);
      used_[l] = false;
    }
    if (l == used_.size()) {
      slots_.emplace_back();
      used_.push_back(false);
    }
    std::swap(slots_[l], carry_);
    used_[l] = true;
    start_leaf();
  }
  Index top_ = 0;
  Poly leaf_, carry_, tmp_;
  std::vector<Poly> slots_;
  std::vector<bool> used_;
  std::size_t in_leaf_ = 0;
  double trimmed_ = 0.0;
};

// Two full-length buffers for the recursion.
struct Workspace {
  std::vector<double> storage;
  Dist a;
  Dist b;
  std::vector<double> pz;  // conditional PDs at the node (batched evaluation)
  ProductTree tree;
  void init(Index K) {
    storage.assign(2 * buffer_stride(K), 0.0);
    a.v = buffer_at(storage, 0, K);
    b.v = buffer_at(storage, 1, K);
    a.w = b.w = {0, -1};
  }
};

// Conditional PDs of every obligor at z into pz, eight at a time (libmvec's erfc).
void conditional_pds(const Model& m, double z, std::vector<double>& pz) {
  const std::size_t n = m.obligors.size();
  pz.resize(n);
  const vmath::Kernels& vk = vmath::kernels();
  double x[vmath::kBlock];
  double y[vmath::kBlock];
  for (std::size_t i0 = 0; i0 < n; i0 += vmath::kBlock) {
    const std::size_t cnt = std::min(vmath::kBlock, n - i0);
    for (std::size_t g = 0; g < vmath::kBlock; ++g) {
      const Prepared* ob = g < cnt ? &m.obligors[i0 + g] : nullptr;
      x[g] = ob != nullptr ? -(ob->a - ob->b * z) * kInvSqrt2 : 0.0;  // N(a - b z) = erfc(-x/sqrt 2)/2
    }
    vk.erfc(x, y);
    for (std::size_t g = 0; g < cnt; ++g) {
      const double p = m.obligors[i0 + g].certain ? 1.0 : 0.5 * y[g];
      pz[i0 + g] = p < kFlushPd ? 0.0 : p;
    }
  }
}

// The batched node: PDs in blocks, the sub-step obligors by the product tree, the rest one at a time.
void evaluate_node_batched(const Model& m, Workspace& ws, Node& node) {
  conditional_pds(m, node.z, ws.pz);
  double mean = 0.0;
  for (std::size_t i = 0; i < m.obligors.size(); ++i) {
    if (ws.pz[i] != 0.0) mean += ws.pz[i] * m.obligors[i].mean_units();
  }
  Dist* cur = &ws.a;
  Dist* next = &ws.b;
  next->clear();
  double trimmed = 0.0;
  ws.tree.reset(m.K - 1);
  for (std::size_t i = 0; i < m.sub_step; ++i) {
    if (ws.pz[i] != 0.0) ws.tree.add(ws.pz[i] * m.obligors[i].frac);
  }
  ws.tree.finish(*cur, trimmed);
  for (std::size_t i = m.sub_step; i < m.obligors.size(); ++i) {
    const double p = ws.pz[i];
    if (p == 0.0) continue;
    const Prepared& ob = m.obligors[i];
    convolve(cur->v, cur->w, next->v, next->w, m.K, p, ob.units, ob.frac, trimmed);
    std::swap(cur, next);
  }
  node.w = cur->w;
  node.values.assign(cur->v + cur->w.lo, cur->v + cur->w.hi + 1);
  node.mean_units = mean;
  node.trimmed = trimmed;
  cur->clear();
}

void evaluate_node(const Model& m, Workspace& ws, Node& node) noexcept {
  if (m.batched) {
    try {
      evaluate_node_batched(m, ws, node);
      return;
    } catch (...) {  // out of memory for the tree: the recursion below needs none
      ws.a.clear();
      ws.b.clear();
    }
  }
  Dist* cur = &ws.a;
  Dist* next = &ws.b;
  cur->set_point_mass_at_zero();
  next->clear();
  double trimmed = 0.0;
  double mean = 0.0;
  for (const Prepared& ob : m.obligors) {
    const double p = ob.pd_at(node.z);
    if (p == 0.0) continue;
    mean += p * ob.mean_units();
    convolve(cur->v, cur->w, next->v, next->w, m.K, p, ob.units, ob.frac, trimmed);
    std::swap(cur, next);
  }
  node.w = cur->w;
  node.values.assign(cur->v + cur->w.lo, cur->v + cur->w.hi + 1);
  node.mean_units = mean;
  node.trimmed = trimmed;
}

// Weights of the quadratic interpolant at (a, (a + b)/2, b) integrated against the normal density
// on [a, b] (Gauss-Legendre of order 10, exact to rounding for panels up to width 1).
void panel_weights(double a, double b, double w[3]) noexcept {
  using Rule = boost::math::quadrature::gauss<double, 10>;
  const auto& x = Rule::abscissa();
  const auto& gw = Rule::weights();
  const double c = 0.5 * (a + b);
  const double h = 0.5 * (b - a);
  w[0] = w[1] = w[2] = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    for (double sgn : {-1.0, 1.0}) {
      const double t = sgn * x[i];  // in [-1, 1]
      const double wt = gw[i] * h * norm_pdf(c + h * t);
      w[0] += wt * 0.5 * t * (t - 1.0);
      w[1] += wt * (1.0 - t * t);
      w[2] += wt * 0.5 * t * (t + 1.0);
    }
  }
}

struct Panel {
  double a = 0.0;
  double b = 0.0;
  std::size_t n[5] = {0, 0, 0, 0, 0};  // nodes at a, a + h/2, mid, b - h/2, b
  double whole[3] = {0, 0, 0};         // weights of nodes 0, 2, 4 on [a, b]
  double left[3] = {0, 0, 0};          // nodes 0, 1, 2 on [a, mid]
  double right[3] = {0, 0, 0};         // nodes 2, 3, 4 on [mid, b]
  double error = 0.0;
  void set_weights() noexcept {
    const double mid = 0.5 * (a + b);
    panel_weights(a, b, whole);
    panel_weights(a, mid, left);
    panel_weights(mid, b, right);
  }
  bool weights_positive() const noexcept {
    for (int j = 0; j < 3; ++j) {
      if (!(whole[j] >= 0.0 && left[j] >= 0.0 && right[j] >= 0.0)) return false;
    }
    return true;
  }
};

// Adds weight * node into the dense vector acc.
void add_node(std::vector<double>& acc, const Node& node, double weight) noexcept {
  for (Index k = node.w.lo; k <= node.w.hi; ++k) {
    acc[static_cast<std::size_t>(k)] += weight * node.values[static_cast<std::size_t>(k - node.w.lo)];
  }
}

struct Quadrature {
  std::vector<Node> nodes;
  std::vector<Panel> panels;
  std::vector<double> node_weight;  // aggregated weight of each node in the final rule
  double error = 0.0;
  bool converged = false;
};

// Adds a node at z and returns its index.
std::size_t new_node(Quadrature& q, double z) {
  q.nodes.emplace_back();
  q.nodes.back().z = z;
  return q.nodes.size() - 1;
}

void evaluate_pending(const Model& m, Quadrature& q, std::size_t first, std::vector<Workspace>& ws,
                      unsigned threads) noexcept {
  const std::size_t count = q.nodes.size() - first;
  parallel_for(count, threads,
               [&](std::size_t t, unsigned worker) { evaluate_node(m, ws[worker], q.nodes[first + t]); });
}

// Final weights per node: the bisected (left + right) rule of every panel, and the mass beyond
// the ends of the factor range on the end nodes.
void aggregate_weights(Quadrature& q) {
  q.node_weight.assign(q.nodes.size(), 0.0);
  for (const Panel& p : q.panels) {
    q.node_weight[p.n[0]] += p.left[0];
    q.node_weight[p.n[1]] += p.left[1];
    q.node_weight[p.n[2]] += p.left[2] + p.right[0];
    q.node_weight[p.n[3]] += p.right[1];
    q.node_weight[p.n[4]] += p.right[2];
  }
  const double outside = norm_cdf(-kZMax);
  q.node_weight[q.panels.front().n[0]] += outside;
  q.node_weight[q.panels.back().n[4]] += outside;
}

// The first panels on [-kZMax, kZMax], each of width kInitialPanel split until every
// product-Simpson weight is non-negative, with their nodes (not yet evaluated).
void initial_panels(Quadrature& q) {
  std::vector<std::pair<double, double>> spans;
  for (double a = -kZMax; a < kZMax - 1e-12; a += kInitialPanel)
    spans.emplace_back(a, std::min(a + kInitialPanel, kZMax));
  for (const auto& [a0, b0] : spans) {
    std::vector<std::pair<double, double>> stack = {{a0, b0}};
    std::vector<std::pair<double, double>> done;
    while (!stack.empty()) {
      const auto [a, b] = stack.back();
      stack.pop_back();
      Panel p;
      p.a = a;
      p.b = b;
      p.set_weights();
      if (p.weights_positive() || b - a < 1e-3) {
        done.emplace_back(a, b);
      } else {
        stack.emplace_back(0.5 * (a + b), b);
        stack.emplace_back(a, 0.5 * (a + b));
      }
    }
    for (const auto& [a, b] : done) {
      Panel p;
      p.a = a;
      p.b = b;
      p.set_weights();
      const double h = b - a;
      p.n[0] = q.panels.empty() ? new_node(q, a) : q.panels.back().n[4];
      p.n[1] = new_node(q, a + 0.25 * h);
      p.n[2] = new_node(q, a + 0.5 * h);
      p.n[3] = new_node(q, a + 0.75 * h);
      p.n[4] = new_node(q, b);
      q.panels.push_back(p);
    }
  }
}

// The current estimate of the distribution (bisected rule of every panel) as exceedance
// probabilities: exceed[k] = P(L > k).
void current_exceedance(const Quadrature& q, std::vector<double>& total,
                        std::vector<double>& exceed) noexcept {
  std::fill(total.begin(), total.end(), 0.0);
  for (const Panel& p : q.panels) {
    add_node(total, q.nodes[p.n[0]], p.left[0]);
    add_node(total, q.nodes[p.n[1]], p.left[1]);
    add_node(total, q.nodes[p.n[2]], p.left[2] + p.right[0]);
    add_node(total, q.nodes[p.n[3]], p.right[1]);
    add_node(total, q.nodes[p.n[4]], p.right[2]);
  }
  double run = 0.0;
  for (std::size_t k = total.size(); k-- > 0;) {
    exceed[k] = run;  // P(L > k)
    run += total[k];
  }
}

// Error of each panel (p.error): bisected rule minus whole rule, as exceedance probabilities,
// relative to exceed + tail_floor; `global` gets the absolute errors summed over panels. Returns
// the sum of the panels' errors.
double panel_errors(Quadrature& q, const std::vector<double>& exceed, double tail_floor,
                    std::vector<double>& diff, std::vector<double>& global) noexcept {
  std::fill(global.begin(), global.end(), 0.0);
  double sum_errors = 0.0;
  for (Panel& p : q.panels) {
    Index lo = std::numeric_limits<Index>::max();
    Index hi = -1;
    for (std::size_t j : p.n) {
      lo = std::min(lo, q.nodes[j].w.lo);
      hi = std::max(hi, q.nodes[j].w.hi);
    }
    for (Index k = lo; k <= hi; ++k) diff[static_cast<std::size_t>(k)] = 0.0;
    add_node(diff, q.nodes[p.n[0]], p.left[0] - p.whole[0]);
    add_node(diff, q.nodes[p.n[1]], p.left[1]);
    add_node(diff, q.nodes[p.n[2]], p.left[2] + p.right[0] - p.whole[1]);
    add_node(diff, q.nodes[p.n[3]], p.right[1]);
    add_node(diff, q.nodes[p.n[4]], p.right[2] - p.whole[2]);
    double acc = 0.0;
    double worst = 0.0;
    for (Index k = hi; k >= lo; --k) {
      const std::size_t uk = static_cast<std::size_t>(k);
      const double e = std::fabs(acc);  // |sum over j > k of diff| = error of P(L > k)
      global[uk] += e;
      worst = std::max(worst, e / (exceed[uk] + tail_floor));
      acc += diff[uk];
    }
    // Below the window the error of P(L > k) is the total difference (mass), ~0.
    if (lo > 0) {
      const double e = std::fabs(acc);
      for (Index k = 0; k < lo; ++k) global[static_cast<std::size_t>(k)] += e;
      worst = std::max(worst, e / (exceed[static_cast<std::size_t>(lo - 1)] + tail_floor));
    }
    p.error = worst;
    sum_errors += worst;
  }
  return sum_errors;
}

// The worst panels carrying half of the summed error, within the node budget, in panel order.
std::vector<std::size_t> panels_to_bisect(const Quadrature& q, const OneFactorOptions& opt,
                                          double sum_errors) {
  std::vector<std::size_t> order(q.panels.size());
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(),
            [&](std::size_t x, std::size_t y) { return q.panels[x].error > q.panels[y].error; });
  std::vector<std::size_t> chosen;
  double covered = 0.0;
  for (std::size_t idx : order) {
    const Panel& p = q.panels[idx];
    if (p.b - p.a < kMinPanel) continue;
    if (q.nodes.size() + 4 * (chosen.size() + 1) > opt.max_nodes) break;
    if (covered >= 0.5 * sum_errors && !chosen.empty()) break;
    chosen.push_back(idx);
    covered += p.error;
  }
  std::sort(chosen.begin(), chosen.end());
  return chosen;
}

// Splits each chosen panel (ascending indices) into halves, with four new nodes each.
void bisect_panels(Quadrature& q, const std::vector<std::size_t>& chosen) {
  std::vector<Panel> next;
  next.reserve(q.panels.size() + chosen.size());
  std::size_t ci = 0;
  for (std::size_t idx = 0; idx < q.panels.size(); ++idx) {
    const Panel& p = q.panels[idx];
    if (ci < chosen.size() && chosen[ci] == idx) {
      ++ci;
      const double mid = 0.5 * (p.a + p.b);
      const double h = 0.5 * (p.b - p.a);
      Panel l;
      l.a = p.a;
      l.b = mid;
      l.n[0] = p.n[0];
      l.n[1] = new_node(q, p.a + 0.25 * h);
      l.n[2] = p.n[1];
      l.n[3] = new_node(q, p.a + 0.75 * h);
      l.n[4] = p.n[2];
      l.set_weights();
      Panel r;
      r.a = mid;
      r.b = p.b;
      r.n[0] = p.n[2];
      r.n[1] = new_node(q, mid + 0.25 * h);
      r.n[2] = p.n[3];
      r.n[3] = new_node(q, mid + 0.75 * h);
      r.n[4] = p.n[4];
      r.set_weights();
      next.push_back(l);
      next.push_back(r);
    } else {
      next.push_back(p);
    }
  }
  q.panels = std::move(next);
}

// Runs the adaptive quadrature (q.converged tells whether the tolerance was met).
void integrate(const Model& m, const OneFactorOptions& opt, double tail_floor, Quadrature& q,
               std::vector<Workspace>& ws, unsigned threads) {
  const std::size_t K = static_cast<std::size_t>(m.K);
  q = Quadrature{};
  initial_panels(q);
  evaluate_pending(m, q, 0, ws, threads);
  std::vector<double> total(K), exceed(K), diff(K), global(K);
  for (;;) {
    current_exceedance(q, total, exceed);
    const double sum_errors = panel_errors(q, exceed, tail_floor, diff, global);
    q.error = 0.0;
    for (std::size_t k = 0; k < K; ++k) q.error = std::max(q.error, global[k] / (exceed[k] + tail_floor));
    if (q.error <= opt.tolerance) {
      q.converged = true;
      break;
    }
    const std::vector<std::size_t> chosen = panels_to_bisect(q, opt, sum_errors);
    if (chosen.empty()) break;
    const std::size_t first_new = q.nodes.size();
    bisect_panels(q, chosen);
    evaluate_pending(m, q, first_new, ws, threads);
  }
  aggregate_weights(q);
}

// out[k] = P(D >= k) for k in [0, reach].
void tails_from(const Dist& d, Index reach, std::vector<double>& out) noexcept {
  double run = 0.0;
  for (Index j = std::max(reach + 1, d.w.lo); j <= d.w.hi; ++j) run += d.v[j];
  for (Index k = reach; k >= 0; --k) {
    if (k >= d.w.lo && k <= d.w.hi) run += d.v[k];
    out[static_cast<std::size_t>(k)] = run;
  }
}

// Work space and results of the contributions at one node.
struct ContributionWork {
  std::vector<double> storage;  // checkpoints and block suffixes, full-length each
  std::vector<Window> windows;
  std::vector<double> prefix_storage;
  std::vector<double> suffix_tail;
  std::vector<double> prefix_tail;
  std::vector<double> full;  // the node's distribution, dense on [0, max VaR]
  std::vector<double> q;     // the distribution without one obligor, dense
  std::vector<double> cum;   // its running sums
  std::vector<double> a;     // E[X_i 1{L > v} | z] per level and obligor (grid units)
  std::vector<double> b;     // E[X_i 1{L = v} | z]
};

// Conditional PDs above this are taken out by prefix and suffix convolutions rather than by
// deconvolution, which is stable only while p < 1/2.
constexpr double kDeconvolveBelow = 0.4;

// E[X_i 1{L > v} | z] and E[X_i 1{L = v} | z] at every VaR index v, into cw.a and cw.b at `index`,
// for an obligor of PD p at the node whose loss is a grid units with probability 1 - f and a + 1
// with f, from G(y) = P(L_-i >= y) and R(y) = P(L_-i = y) of the loss without it.
template <class Tail, class Point>
void set_obligor_terms(const std::vector<Index>& var_index, std::size_t n_all, std::size_t index, double p,
                       Index a, double f, const Tail& G, const Point& R, ContributionWork& cw) noexcept {
  const double la = static_cast<double>(a);
  for (std::size_t l = 0; l < var_index.size(); ++l) {
    const Index v = var_index[l];
    const double g1 = G(v + 1 - a);
    const double r0 = R(v - a);
    double above = (1.0 - f) * la * g1;
    double at = (1.0 - f) * la * r0;
    if (f > 0.0) {
      above += f * (la + 1.0) * (g1 + r0);  // G(v - a) = G(v + 1 - a) + R(v - a)
      at += f * (la + 1.0) * R(v - a - 1);
    }
    cw.a[l * n_all + index] = p * above;
    cw.b[l * n_all + index] = p * at;
  }
}

// The full-length buffers of cw.storage (suffix checkpoints, then one block's suffixes) as
// distributions, with their windows in cw.windows.
struct SuffixSlots {
  ContributionWork& cw;
  Index K;
  Dist get(std::size_t s) const noexcept {
    Dist d;
    d.v = buffer_at(cw.storage, s, K);
    d.w = cw.windows[s];
    return d;
  }
  void keep(std::size_t s, const Dist& d) const noexcept { cw.windows[s] = d.w; }
};

// Suffix sweep: S_j = distribution of the losses of seq[j..n), kept at the checkpoints j = 0,
// step, 2 step, ... (slot j / step), S_n (the point mass at zero) in slot n_check.
void sweep_suffixes(const Model& m, const std::vector<std::size_t>& seq, const std::vector<double>& pz,
                    std::size_t step, std::size_t n_check, const SuffixSlots& slots, Workspace& ws,
                    double& trimmed) noexcept {
  Dist* cur = &ws.a;
  Dist* next = &ws.b;
  cur->set_point_mass_at_zero();
  next->clear();
  Dist last = slots.get(n_check);
  last.copy_from(*cur);
  slots.keep(n_check, last);
  for (std::size_t j = seq.size(); j-- > 0;) {
    const Prepared& ob = m.obligors[seq[j]];
    convolve(cur->v, cur->w, next->v, next->w, m.K, pz[j], ob.units, ob.frac, trimmed);
    std::swap(cur, next);
    if (j % step == 0) {
      Dist d = slots.get(j / step);
      d.copy_from(*cur);
      slots.keep(j / step, d);
    }
  }
}

// Suffixes S_{j0+1} .. S_{j1} of the block [j0, j1) into slots block_base + (j - j0 - 1), from
// the checkpoint S_{j1}.
void block_suffixes(const Model& m, const std::vector<std::size_t>& seq, const std::vector<double>& pz,
                    std::size_t j0, std::size_t j1, std::size_t step, std::size_t n_check,
                    std::size_t block_base, const SuffixSlots& slots, double& trimmed) noexcept {
  Dist src = slots.get(j1 == seq.size() ? n_check : j1 / step);
  Dist top_slot = slots.get(block_base + (j1 - j0 - 1));
  top_slot.copy_from(src);
  slots.keep(block_base + (j1 - j0 - 1), top_slot);
  for (std::size_t j = j1 - 1; j > j0; --j) {
    const Prepared& ob = m.obligors[seq[j]];
    Dist from = slots.get(block_base + (j - j0));
    Dist to = slots.get(block_base + (j - j0 - 1));
    convolve(from.v, from.w, to.v, to.w, m.K, pz[j], ob.units, ob.frac, trimmed);
    slots.keep(block_base + (j - j0 - 1), to);
  }
}

// The terms of obligor `ob` (PD p) whose loss without it is pre * suf: pre of the obligors
// before it, suf of those after it; each needed value is a dot product.
void convolution_terms(const Dist& pre, const Dist& suf, Index reach, double p, const Prepared& ob,
                       const std::vector<Index>& var_index, std::size_t n_all,
                       ContributionWork& cw) noexcept {
  tails_from(suf, reach, cw.suffix_tail);
  tails_from(pre, reach, cw.prefix_tail);
  // G(y) = P(L_-i >= y), R(y) = P(L_-i = y).
  const auto G = [&](Index y) {
    if (y <= 0) return cw.prefix_tail[0] * cw.suffix_tail[0];
    double s = cw.prefix_tail[static_cast<std::size_t>(y)];
    const Index hi = std::min(pre.w.hi, y - 1);
    for (Index j = pre.w.lo; j <= hi; ++j) s += pre.v[j] * cw.suffix_tail[static_cast<std::size_t>(y - j)];
    return s;
  };
  const auto R = [&](Index y) {
    if (y < 0) return 0.0;
    double s = 0.0;
    const Index lo = std::max(pre.w.lo, y - suf.w.hi);
    const Index hi = std::min(pre.w.hi, y - suf.w.lo);
    for (Index j = lo; j <= hi; ++j) s += pre.v[j] * suf.v[y - j];
    return s;
  };
  set_obligor_terms(var_index, n_all, ob.index, p, ob.units, ob.frac, G, R, cw);
}

// Obligors of the list `seq` (with their PDs at this node), taken out one at a time with prefix
// and suffix convolutions: the loss without obligor i is prefix(before i) * suffix(after i),
// starting from the distribution `start` of everything not in `seq`. Only a few values of it are
// needed, each a dot product. Suffixes are kept at checkpoints every `step` obligors and
// recomputed block by block: memory O(sqrt(n) K), work O(n K). No subtraction anywhere.
void contributions_by_convolution(const Model& m, const std::vector<std::size_t>& seq,
                                  const std::vector<double>& pz, const Dist& start,
                                  const std::vector<Index>& var_index, std::size_t n_all,
                                  ContributionWork& cw, Workspace& ws) noexcept {
  const Index K = m.K;
  const std::size_t n = seq.size();
  const std::size_t step =
      std::max<std::size_t>(1, static_cast<std::size_t>(std::ceil(std::sqrt(double(n)))));
  const std::size_t n_check = n / step + 1;  // checkpoints at j = 0, step, 2 step, ...; S_n at n_check
  const std::size_t slot_count = n_check + 1 + step;
  if (cw.storage.size() < slot_count * buffer_stride(K)) {
    cw.storage.assign(slot_count * buffer_stride(K), 0.0);
    cw.windows.assign(slot_count, Window{});
  }
  if (cw.windows.size() < slot_count) cw.windows.resize(slot_count, Window{});
  const SuffixSlots slots{cw, K};
  double trimmed = 0.0;
  sweep_suffixes(m, seq, pz, step, n_check, slots, ws, trimmed);
  const Index max_v = *std::max_element(var_index.begin(), var_index.end());
  const Index reach = std::min(max_v + 2, K - 1);
  cw.suffix_tail.assign(static_cast<std::size_t>(reach) + 1, 0.0);
  cw.prefix_tail.assign(static_cast<std::size_t>(reach) + 1, 0.0);
  if (cw.prefix_storage.size() < 2 * buffer_stride(K)) cw.prefix_storage.assign(2 * buffer_stride(K), 0.0);
  Dist pa;
  Dist pb;
  pa.v = buffer_at(cw.prefix_storage, 0, K);
  pb.v = buffer_at(cw.prefix_storage, 1, K);
  pa.w = pb.w = {0, K - 1};
  pa.clear();  // the buffers may hold values from an earlier node
  pb.w = {0, K - 1};
  pb.clear();
  Dist* pre = &pa;
  Dist* pre_next = &pb;
  pre->copy_from(start);
  const std::size_t block_base = n_check + 1;
  for (std::size_t j0 = 0; j0 < n; j0 += step) {
    const std::size_t j1 = std::min(j0 + step, n);
    block_suffixes(m, seq, pz, j0, j1, step, n_check, block_base, slots, trimmed);
    for (std::size_t i = j0; i < j1; ++i) {
      const Prepared& ob = m.obligors[seq[i]];
      convolution_terms(*pre, slots.get(block_base + (i - j0)), reach, pz[i], ob, var_index, n_all, cw);
      convolve(pre->v, pre->w, pre_next->v, pre_next->w, K, pz[i], ob.units, ob.frac, trimmed);
      std::swap(pre, pre_next);
    }
  }
}

// The obligors with p(z) > 0, in model order, by how they are taken out of the node: low
// (p < kDeconvolveBelow) by deconvolution, high (with their PDs) by convolution.
void split_by_pd(const Model& m, double z, std::vector<std::size_t>& low, std::vector<std::size_t>& high,
                 std::vector<double>& p_high) {
  for (std::size_t i = 0; i < m.obligors.size(); ++i) {
    const double p = m.obligors[i].pd_at(z);
    if (p == 0.0) continue;
    if (p < kDeconvolveBelow) {
      low.push_back(i);
    } else {
      high.push_back(i);
      p_high.push_back(p);
    }
  }
}

// The node's distribution dense on [0, max_v] (cw.full) and its running sums (cw.cum); returns
// the node's whole mass.
double dense_cumulative(const Node& node, Index max_v, ContributionWork& cw) {
  const std::size_t dense = static_cast<std::size_t>(max_v) + 1;
  cw.full.assign(dense, 0.0);
  double mass = 0.0;
  for (Index k = node.w.lo; k <= node.w.hi; ++k) {
    const double x = node.values[static_cast<std::size_t>(k - node.w.lo)];
    mass += x;
    if (k <= max_v) cw.full[static_cast<std::size_t>(k)] = x;
  }
  cw.cum.assign(dense, 0.0);
  double run = 0.0;
  for (std::size_t k = 0; k < dense; ++k) {
    run += cw.full[k];
    cw.cum[k] = run;
  }
  return mass;
}

// The terms of the low obligors by deconvolution of the cumulative distribution cw.cum,
// C(k) = P(L_-i <= k), which obeys the same recursion as the probabilities. Obligors with the same
// loss units share the stride a and are run kLanes at a time, interleaved, so that the independent
// recursions overlap in the CPU.
void contributions_by_deconvolution(const Model& m, double z, const std::vector<std::size_t>& low,
                                    Index max_v, double mass, const std::vector<Index>& var_index,
                                    std::size_t n_all, ContributionWork& cw) {
  constexpr std::size_t kLanes = 4;
  const std::size_t dense = static_cast<std::size_t>(max_v) + 1;
  const Index max_a = low.empty() ? 0 : m.obligors[low.back()].units;  // model order is by loss size
  const std::size_t pad = static_cast<std::size_t>(std::min(max_a, max_v) + 2);
  const std::size_t lane_stride = pad + dense;
  cw.q.assign(kLanes * lane_stride, 0.0);
  for (std::size_t g0 = 0; g0 < low.size();) {
    const Index a = m.obligors[low[g0]].units;
    std::size_t g1 = g0 + 1;
    while (g1 < low.size() && g1 - g0 < kLanes && m.obligors[low[g1]].units == a) ++g1;
    const std::size_t lanes = g1 - g0;
    const Index top = max_v - a;  // C is needed on [0, max_v - a]
    double d_inv[kLanes], e1[kLanes], e2[kLanes], pz[kLanes];
    double* c[kLanes];
    for (std::size_t g = 0; g < kLanes; ++g) {
      const double p = g < lanes ? m.obligors[low[g0 + g]].pd_at(z) : 0.0;
      const double f = g < lanes ? m.obligors[low[g0 + g]].frac : 0.0;
      pz[g] = p;
      const double c0 = 1.0 - p;
      const double c1 = p * (1.0 - f);
      const double c2 = p * f;
      d_inv[g] = a == 0 ? 1.0 / (c0 + c1) : 1.0 / c0;  // at a = 0 the c1 term sits on C(k) itself
      e1[g] = a == 0 ? 0.0 : c1;
      e2[g] = c2;
      c[g] = cw.q.data() + g * lane_stride + pad;  // pad zeros in front: C(k) = 0 for k < 0
    }
    if (top >= 0) {
      const double* cf = cw.cum.data();
      if (a == 0) {
        for (Index k = 0; k <= top; ++k) {
          for (std::size_t g = 0; g < kLanes; ++g) c[g][k] = (cf[k] - e2[g] * c[g][k - 1]) * d_inv[g];
        }
      } else {
        for (Index k = 0; k <= top; ++k) {
          for (std::size_t g = 0; g < kLanes; ++g) {
            c[g][k] = (cf[k] - e1[g] * c[g][k - a] - e2[g] * c[g][k - a - 1]) * d_inv[g];
          }
        }
      }
    }
    for (std::size_t g = 0; g < lanes; ++g) {
      const Prepared& ob = m.obligors[low[g0 + g]];
      const double* cg = c[g];
      const auto C = [&](Index y) { return y < 0 ? 0.0 : cg[y]; };
      const auto G = [&](Index y) { return y <= 0 ? mass : mass - C(y - 1); };  // P(L_-i >= y)
      const auto R = [&](Index y) { return y < 0 ? 0.0 : C(y) - C(y - 1); };    // P(L_-i = y)
      set_obligor_terms(var_index, n_all, ob.index, pz[g], a, ob.frac, G, R, cw);
    }
    g0 = g1;
  }
}

// E[X_i 1{L > v} | z] and E[X_i 1{L = v} | z] for every obligor at a node where L straddles some
// VaR. Obligors with p(z) < 0.4 are taken out of the node's distribution F by deconvolution,
// Q(k) = (F(k) - c1 Q(k - a) - c2 Q(k - a - 1)) / c0, stable because c1 + c2 = p < c0 = 1 - p
// (errors shrink by p / (1 - p) per step); the others by prefix and suffix convolutions.
void node_contributions(const Model& m, const Node& node, const std::vector<Index>& var_index,
                        std::size_t n_all, ContributionWork& cw, Workspace& ws) noexcept {
  std::fill(cw.a.begin(), cw.a.end(), 0.0);
  std::fill(cw.b.begin(), cw.b.end(), 0.0);
  std::vector<std::size_t> low;
  std::vector<std::size_t> high;
  std::vector<double> p_high;
  split_by_pd(m, node.z, low, high, p_high);
  const Index max_v = *std::max_element(var_index.begin(), var_index.end());
  const double mass = dense_cumulative(node, max_v, cw);
  contributions_by_deconvolution(m, node.z, low, max_v, mass, var_index, n_all, cw);
  if (high.empty()) return;
  // The distribution of the low obligors, then the high ones by convolution.
  Dist* cur = &ws.a;
  Dist* next = &ws.b;
  cur->set_point_mass_at_zero();
  next->clear();
  double trimmed = 0.0;
  for (std::size_t i : low) {
    const Prepared& ob = m.obligors[i];
    convolve(cur->v, cur->w, next->v, next->w, m.K, ob.pd_at(node.z), ob.units, ob.frac, trimmed);
    std::swap(cur, next);
  }
  // The workspace buffers are reused inside; keep the start distribution apart.
  Workspace inner;
  inner.init(m.K);
  contributions_by_convolution(m, high, p_high, *cur, var_index, n_all, cw, inner);
}

// Picks the loss unit so that the grid reaches well past the largest VaR: the large-portfolio
// loss at a tail twenty times thinner than the smallest reported one, plus six conditional
// standard deviations and the largest single loss, with 10% to spare.
double reach_estimate(std::span<const FactorExposure> book, double smallest_tail) noexcept {
  const double z = norm_quantile(smallest_tail / 20.0);
  double mean = 0.0;
  double var = 0.0;
  double largest = 0.0;
  for (const FactorExposure& e : book) {
    const double p = conditional_pd(e.pd, e.asset_correlation, z);
    mean += e.loss_amount * p;
    var += e.loss_amount * e.loss_amount * p * (1.0 - p);
    largest = std::max(largest, e.loss_amount);
  }
  return 1.1 * (mean + 6.0 * std::sqrt(var) + largest);
}

// The message naming the first invalid exposure, or "" when all are valid.
std::string exposure_problem(std::span<const FactorExposure> book) {
  for (std::size_t i = 0; i < book.size(); ++i) {
    const FactorExposure& e = book[i];
    if (!(e.pd >= 0.0 && e.pd <= 1.0) || !(e.asset_correlation >= 0.0 && e.asset_correlation < 1.0) ||
        !(e.loss_amount >= 0.0) || !std::isfinite(e.loss_amount)) {
      return "exposure " + std::to_string(i + 1) +
             ": PD must lie in [0, 1], asset correlation in [0, 1) and the loss amount be finite and "
             "non-negative";
    }
  }
  return {};
}

// The model on one grid: a fixed loss unit, or K points reaching `reach`; obligors that can
// default and lose, small losses first (the windows then stay narrow for most of the recursion).
Model grid_model(std::span<const FactorExposure> book, const OneFactorOptions& opt, double reach,
                 double total_loss) {
  Model m;
  if (opt.loss_unit > 0.0) {
    m.unit = opt.loss_unit;
    const double span_units = std::floor(total_loss / m.unit) + 2.0;
    m.K =
        static_cast<Index>(std::min<double>(static_cast<double>(opt.grid_points), std::max(span_units, 2.0)));
  } else {
    m.K = static_cast<Index>(opt.grid_points);
    m.unit = reach > 0.0 ? reach / static_cast<double>(m.K - 1) : 1.0;
  }
  for (std::size_t i = 0; i < book.size(); ++i) {
    const FactorExposure& e = book[i];
    if (e.pd == 0.0 || e.loss_amount == 0.0) continue;
    Prepared p;
    p.index = i;
    p.certain = e.pd == 1.0;
    const double s = std::sqrt(1.0 - e.asset_correlation);
    p.a = p.certain ? 0.0 : norm_quantile(e.pd) / s;
    p.b = std::sqrt(e.asset_correlation) / s;
    const double units = e.loss_amount / m.unit;
    const double whole = std::floor(units);
    p.units = static_cast<Index>(std::min(whole, static_cast<double>(m.K)));
    p.frac = whole >= static_cast<double>(m.K) ? 0.0 : units - whole;
    m.obligors.push_back(p);
  }
  std::stable_sort(m.obligors.begin(), m.obligors.end(),
                   [](const Prepared& x, const Prepared& y) { return x.mean_units() < y.mean_units(); });
  m.batched = m.obligors.size() >= opt.batch_from;
  // Sorted by mean units, the obligors below one grid step come first.
  while (m.sub_step < m.obligors.size() && m.obligors[m.sub_step].units == 0) ++m.sub_step;
  return m;
}

// out.probability from the final weights, with the largest trimmed mass and the top point's mass.
void set_probability(const Model& m, const Quadrature& q, LossDistribution& out) {
  const std::size_t K = static_cast<std::size_t>(m.K);
  out.probability.assign(K, 0.0);
  out.trimmed_mass = 0.0;
  for (std::size_t j = 0; j < q.nodes.size(); ++j) {
    add_node(out.probability, q.nodes[j], q.node_weight[j]);
    out.trimmed_mass = std::max(out.trimmed_mass, q.nodes[j].trimmed);
  }
  out.top_mass = out.probability[K - 1];
}

// The grid's summaries: unit, nodes, error, exceedance and cumulative probabilities.
void set_summaries(const Model& m, const Quadrature& q, LossDistribution& out) {
  const std::size_t K = static_cast<std::size_t>(m.K);
  out.loss_unit = m.unit;
  out.nodes = q.nodes.size();
  out.error_estimate = q.error;
  out.exceedance.assign(K, 0.0);
  out.cumulative.assign(K, 0.0);
  double run = 0.0;
  for (std::size_t k = K; k-- > 0;) {
    out.exceedance[k] = run;
    run += out.probability[k];
  }
  run = 0.0;
  for (std::size_t k = 0; k < K; ++k) {
    run += out.probability[k];
    out.cumulative[k] = run;
  }
}

// VaR and ES at every level (grid_too_short when a VaR falls on the last point); returns the VaR
// grid indices. grid_mean is the expected loss on the grid in grid units.
std::vector<Index> set_tails(const Model& m, const std::vector<double>& levels, double grid_mean,
                             LossDistribution& out) {
  const std::size_t K = static_cast<std::size_t>(m.K);
  out.tails.resize(levels.size());
  std::vector<Index> var_index(levels.size());
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const double tail = 1.0 - levels[l];
    std::size_t v = 0;
    while (v < K - 1 && out.exceedance[v] > tail) ++v;
    LossTail& t = out.tails[l];
    t.confidence_level = levels[l];
    t.var_index = v;
    t.var = static_cast<double>(v) * m.unit;
    t.exceedance = out.exceedance[v];
    var_index[l] = static_cast<Index>(v);
    if (v == K - 1) {
      out.status = LossStatus::grid_too_short;
      out.message = "the VaR at " + std::to_string(levels[l]) +
                    " lies on the last grid point: use more grid points or a larger loss unit";
      continue;
    }
    double below = 0.0;  // E[L 1{L <= v}] in grid units
    for (std::size_t k = 0; k <= v; ++k) below += static_cast<double>(k) * out.probability[k];
    const double above = grid_mean - below;  // E[L 1{L > v}]
    t.es = m.unit * (above + static_cast<double>(v) * (tail - t.exceedance)) / tail;
  }
  return var_index;
}

// Nodes where the loss straddles some VaR (their contributions need the node's distribution); at
// every other node the obligors' conditional means are added to A for the levels the node lies
// wholly above.
std::vector<std::size_t> transition_nodes(const Model& m, const Quadrature& q,
                                          const std::vector<Index>& var_index, std::size_t n,
                                          std::vector<double>& A) {
  const std::size_t L = var_index.size();
  Index a_max = 0;
  for (const Prepared& p : m.obligors) a_max = std::max(a_max, p.units + 1);
  std::vector<std::size_t> transition;
  for (std::size_t j = 0; j < q.nodes.size(); ++j) {
    const Node& node = q.nodes[j];
    const double w = q.node_weight[j];
    bool any_transition = false;
    std::vector<int> kind(L);  // 0 below, 1 above, 2 transition
    for (std::size_t l = 0; l < L; ++l) {
      const Index v = var_index[l];
      if (node.mass_from(std::max<Index>(0, v - a_max - 1)) < kSure) {
        kind[l] = 0;
      } else if (node.mass_to(v + 1) < kSure) {
        kind[l] = 1;
      } else {
        kind[l] = 2;
        any_transition = true;
      }
    }
    if (any_transition) {
      transition.push_back(j);
      continue;
    }
    for (std::size_t l = 0; l < L; ++l) {
      if (kind[l] != 1) continue;
      for (const Prepared& p : m.obligors) A[l * n + p.index] += w * p.pd_at(node.z) * p.mean_units();
    }
  }
  return transition;
}

// Contributions to expected shortfall (Acerbi-Tasche), level-major, into out.es_contributions.
void set_contributions(const Model& m, const Quadrature& q, const std::vector<Index>& var_index,
                       const std::vector<double>& levels, std::size_t n, unsigned threads,
                       std::vector<Workspace>& ws, LossDistribution& out) {
  const std::size_t L = levels.size();
  std::vector<double> A(L * n, 0.0);
  std::vector<double> B(L * n, 0.0);
  const std::vector<std::size_t> transition = transition_nodes(m, q, var_index, n, A);
  out.transition_nodes = transition.size();
  std::vector<ContributionWork> cws(threads);
  for (ContributionWork& cw : cws) {
    cw.a.assign(L * n, 0.0);
    cw.b.assign(L * n, 0.0);
  }
  // Rounds of one node per worker, added in node order so that the sums never depend on threads.
  for (std::size_t r0 = 0; r0 < transition.size(); r0 += threads) {
    const std::size_t r1 = std::min(transition.size(), r0 + threads);
    parallel_for(r1 - r0, threads, [&](std::size_t t, unsigned) {
      node_contributions(m, q.nodes[transition[r0 + t]], var_index, n, cws[t], ws[t]);
    });
    for (std::size_t t = 0; t < r1 - r0; ++t) {
      const double w = q.node_weight[transition[r0 + t]];
      for (std::size_t k = 0; k < L * n; ++k) {
        A[k] += w * cws[t].a[k];
        B[k] += w * cws[t].b[k];
      }
    }
  }
  out.es_contributions.assign(L * n, 0.0);
  for (std::size_t l = 0; l < L; ++l) {
    const double tail = 1.0 - levels[l];
    const std::size_t v = out.tails[l].var_index;
    const double at_v = out.probability[v];
    const double share = at_v > 0.0 ? (tail - out.tails[l].exceedance) / at_v : 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      out.es_contributions[l * n + i] = m.unit * (A[l * n + i] + B[l * n + i] * share) / tail;
    }
  }
}

}  // namespace

LossDistribution one_factor_loss_distribution(std::span<const FactorExposure> book,
                                              const OneFactorOptions& opt) noexcept {
  LossDistribution out;
  try {
    out.message = exposure_problem(book);
    if (!out.message.empty()) return out;
    const auto& levels = opt.confidence_levels;
    if (const OptionCheck bad = opt.validate()) {
      out.message =
          bad->field == "confidence_levels"
              ? "confidence levels must be distinct, ascending and inside (0, 1)"
              : "options: grid points in [16, 2^24], tolerance > 0, loss unit >= 0, max nodes >= 64";
      return out;
    }
    const std::size_t n = book.size();
    const double smallest_tail = 1.0 - levels.back();
    const double tail_floor = 0.1 * smallest_tail;
    const unsigned threads = std::max(1U, opt.threads);
    double total_loss = 0.0;
    for (const FactorExposure& e : book) {
      out.expected_loss += e.pd * e.loss_amount;
      if (e.pd > 0.0) total_loss += e.loss_amount;
    }

    // The grid: automatic reach (doubled while the top holds too much) or a fixed unit.
    double reach = opt.loss_unit > 0.0 ? 0.0 : std::min(total_loss, reach_estimate(book, smallest_tail));
    Quadrature q;
    Model m;
    std::vector<Workspace> ws(threads);
    for (int attempt = 1;; ++attempt) {
      out.grid_attempts = attempt;
      m = grid_model(book, opt, reach, total_loss);
      for (Workspace& w : ws) w.init(m.K);
      integrate(m, opt, tail_floor, q, ws, threads);
      set_probability(m, q, out);
      const bool short_grid = out.top_mass > 0.25 * smallest_tail;
      if (opt.loss_unit == 0.0 && short_grid && reach < total_loss && attempt < 8) {
        reach = std::min(total_loss, 2.0 * reach);
        continue;
      }
      break;
    }
    set_summaries(m, q, out);
    // Expected loss on the grid from the conditional means (consistent with the contributions).
    double grid_mean = 0.0;
    for (std::size_t j = 0; j < q.nodes.size(); ++j) grid_mean += q.node_weight[j] * q.nodes[j].mean_units;

    out.status = q.converged ? LossStatus::ok : LossStatus::tolerance_not_met;
    const std::vector<Index> var_index = set_tails(m, levels, grid_mean, out);
    if (!opt.contributions || out.status == LossStatus::grid_too_short) return out;
    set_contributions(m, q, var_index, levels, n, threads, ws, out);
    return out;
  } catch (...) {
    out = LossDistribution{};
    out.message = "out of memory";
    return out;
  }
}

}  // namespace firmcall
