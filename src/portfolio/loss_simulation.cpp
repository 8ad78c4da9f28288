// Monte Carlo portfolio losses in the multi-factor model, with importance sampling by a shift of
// the factor mean (Glasserman and Li 2005) in a defensive mixture (Hesterberg 1995). See
// include/firmcall/loss_simulation.hpp.
#include "firmcall/portfolio/loss_simulation.hpp"

#include <algorithm>
#include <boost/random/normal_distribution.hpp>
#include <cmath>
#include <limits>
#include <memory>
#include <numbers>
#include <numeric>

#include "firmcall/model/normal.hpp"
#include "firmcall/util/parallel.hpp"
#include "portfolio/confidence_levels.hpp"

namespace firmcall {

std::string_view to_string(SimulationStatus s) noexcept {
  switch (s) {
    case SimulationStatus::ok:
      return "ok";
    case SimulationStatus::invalid_input:
      return "invalid_input";
    case SimulationStatus::peer_failed:
      return "peer_failed";
  }
  return "invalid_input";
}

ScenarioRange scenario_range(std::uint64_t scenarios, unsigned rank, unsigned ranks) noexcept {
  const std::uint64_t p = std::max(1U, ranks);
  const std::uint64_t q = scenarios / p, extra = scenarios % p;
  const std::uint64_t r = std::min<std::uint64_t>(rank, p);
  const std::uint64_t begin = r * q + std::min(r, extra);
  return {begin, begin + q + (r < extra ? 1 : 0)};
}

OptionCheck SimulationOptions::validate() const {
  if (!detail::confidence_levels_valid(confidence_levels)) {
    return OptionProblem{"confidence_levels", detail::number_list_text(confidence_levels),
                         "must be distinct, ascending and inside (0, 1)"};
  }
  if (scenarios < 2 || scenarios > (std::uint64_t{1} << 40)) {
    return OptionProblem{"scenarios", std::to_string(scenarios), "must lie in [2, 2^40]"};
  }
  if (!std::is_sorted(exceedance_points.begin(), exceedance_points.end())) {
    return OptionProblem{"exceedance_points", detail::number_list_text(exceedance_points),
                         "must be ascending"};
  }
  return std::nullopt;
}

namespace {

constexpr std::uint64_t kTask = 1024;  // scenarios per parallel task

std::uint64_t splitmix64(std::uint64_t& x) noexcept {
  std::uint64_t z = (x += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

// xoshiro256++ 1.0 (Blackman and Vigna 2018), a UniformRandomBitGenerator for Boost.Random.
class Xoshiro256pp {
 public:
  using result_type = std::uint64_t;
  Xoshiro256pp(std::uint64_t seed, std::uint64_t stream) noexcept {
    std::uint64_t x = seed * 0x9E3779B97F4A7C15ULL ^ (stream + 1) * 0xD1B54A32D192ED03ULL;
    for (auto& w : s_) w = splitmix64(x);
  }
  static constexpr result_type min() noexcept { return 0; }
  static constexpr result_type max() noexcept { return std::numeric_limits<result_type>::max(); }
  result_type operator()() noexcept {
    const std::uint64_t result = rotl(s_[0] + s_[3], 23) + s_[0];
    const std::uint64_t t = s_[1] << 17;
    s_[2] ^= s_[0];
    s_[3] ^= s_[1];
    s_[1] ^= s_[2];
    s_[0] ^= s_[3];
    s_[2] ^= t;
    s_[3] = rotl(s_[3], 45);
    return result;
  }

 private:
  static std::uint64_t rotl(std::uint64_t x, int k) noexcept { return (x << k) | (x >> (64 - k)); }
  std::uint64_t s_[4];
};

struct Prepared {
  std::size_t index = 0;   // in the book
  double threshold = 0.0;  // G(PD); +inf for PD = 1
  double loading = 0.0;    // sqrt(rho)
  double inv_idio = 1.0;   // 1 / sqrt(1 - rho)
  double loss = 0.0;
  std::uint32_t factor = 0;
};

struct Model {
  std::vector<Prepared> obligors;
  const FactorCholesky* factors = nullptr;
  std::vector<double> shift;  // mu, empty without importance sampling
  double shift_norm2 = 0.0;
  std::uint64_t seed = 0;
};

// Per-thread scratch.
struct Scratch {
  std::vector<double> g;
  std::vector<double> y;
};

// Draws scenario s; returns its loss, sets its log-likelihood ratio, and calls on_default(k) for
// each defaulting obligor (k in model order) when given.
template <class OnDefault>
double draw_scenario(const Model& m, std::uint64_t s, Scratch& sc, double& log_w,
                     OnDefault&& on_default) noexcept {
  Xoshiro256pp rng(m.seed, s);
  boost::random::normal_distribution<double> normal;
  const std::size_t nf = m.factors->factors;
  const double* a = m.factors->lower.data();
  log_w = 0.0;
  // Importance sampling: odd scenarios draw G around the shifted mean, even ones from the model;
  // the weight is the model density over the mixture's, 1 / (1/2 + exp(mu.G - |mu|^2 / 2) / 2),
  // which never exceeds 2 (a deterministic defensive mixture).
  const bool shifted = !m.shift.empty() && (s & 1U) != 0;
  double mu_g = 0.0;
  for (std::size_t j = 0; j < nf; ++j) {
    sc.g[j] = normal(rng);
    if (shifted) sc.g[j] += m.shift[j];
    if (!m.shift.empty()) mu_g += m.shift[j] * sc.g[j];
  }
  if (!m.shift.empty()) {
    const double x = mu_g - 0.5 * m.shift_norm2;  // log of phi(G - mu) / phi(G)
    const double softplus = x > 0.0 ? x + std::log1p(std::exp(-x)) : std::log1p(std::exp(x));
    log_w = std::numbers::ln2 - softplus;
  }
  for (std::size_t i = 0; i < nf; ++i) {
    double v = 0.0;
    for (std::size_t j = 0; j <= i; ++j) v += a[i * nf + j] * sc.g[j];
    sc.y[i] = v;
  }
  double loss = 0.0;
  for (std::size_t k = 0; k < m.obligors.size(); ++k) {
    const Prepared& ob = m.obligors[k];
    const double e = normal(rng);
    if (e <= (ob.threshold - ob.loading * sc.y[ob.factor]) * ob.inv_idio) {
      loss += ob.loss;
      on_default(k);
    }
  }
  return loss;
}

// Importance-sampling shift: the fixed point mu = r grad m(mu) / |grad m(mu)|, m the
// large-portfolio loss as a function of the independent normals G, r = G(a_max).
std::vector<double> factor_shift(const Model& m, double radius) {
  const std::size_t nf = m.factors->factors;
  const double* a = m.factors->lower.data();
  std::vector<double> mu(nf, 0.0), y(nf), h(nf), grad(nf);
  for (int iter = 0; iter < 100; ++iter) {
    for (std::size_t i = 0; i < nf; ++i) {
      double v = 0.0;
      for (std::size_t j = 0; j <= i; ++j) v += a[i * nf + j] * mu[j];
      y[i] = v;
    }
    std::fill(h.begin(), h.end(), 0.0);
    for (const Prepared& ob : m.obligors) {
      if (!std::isfinite(ob.threshold)) continue;
      const double t = (ob.threshold - ob.loading * y[ob.factor]) * ob.inv_idio;
      h[ob.factor] -= ob.loss * norm_pdf(t) * ob.loading * ob.inv_idio;  // d m / d y_f
    }
    double norm2 = 0.0;
    for (std::size_t j = 0; j < nf; ++j) {  // grad = A^T h
      double v = 0.0;
      for (std::size_t i = j; i < nf; ++i) v += a[i * nf + j] * h[i];
      grad[j] = v;
      norm2 += v * v;
    }
    if (!(norm2 > 0.0)) return std::vector<double>(nf, 0.0);
    const double scale = radius / std::sqrt(norm2);
    double change = 0.0;
    for (std::size_t j = 0; j < nf; ++j) {
      const double next = scale * grad[j];
      change = std::max(change, std::fabs(next - mu[j]));
      mu[j] = next;
    }
    if (change < 1e-12 * radius) break;
  }
  return mu;
}

// The exposures that can default and lose (PD > 0, loss > 0) into m.obligors, in book order; the
// message naming the first invalid exposure, or "" when all are valid.
std::string prepare_obligors(std::span<const SectorExposure> book, const FactorCholesky& factors, Model& m) {
  for (std::size_t i = 0; i < book.size(); ++i) {
    const SectorExposure& e = book[i];
    if (!(e.pd >= 0.0 && e.pd <= 1.0) || !(e.asset_correlation >= 0.0 && e.asset_correlation < 1.0) ||
        !(e.loss_amount >= 0.0) || !std::isfinite(e.loss_amount) || e.factor >= factors.factors) {
      return "exposure " + std::to_string(i + 1) +
             ": PD must lie in [0, 1], asset correlation in [0, 1), the loss amount be finite and "
             "non-negative and the factor index below the number of factors";
    }
    if (e.pd == 0.0 || e.loss_amount == 0.0) continue;
    Prepared p;
    p.index = i;
    p.threshold = e.pd == 1.0 ? std::numeric_limits<double>::infinity() : norm_quantile(e.pd);
    p.loading = std::sqrt(e.asset_correlation);
    p.inv_idio = 1.0 / std::sqrt(1.0 - e.asset_correlation);
    p.loss = e.loss_amount;
    p.factor = e.factor;
    m.obligors.push_back(p);
  }
  return {};
}

std::vector<Scratch> make_scratch(unsigned threads, std::size_t factors) {
  std::vector<Scratch> scratch(threads);
  for (Scratch& sc : scratch) {
    sc.g.assign(factors, 0.0);
    sc.y.assign(factors, 0.0);
  }
  return scratch;
}

// Every scenario's loss and, with importance sampling, its log-likelihood ratio (on a process of
// a shared run before the gather: those of its own range only, from scenario `first` on).
struct Draws {
  std::vector<double> loss;
  std::vector<double> log_w;  // empty without importance sampling
  double weight(std::uint64_t s) const noexcept { return log_w.empty() ? 1.0 : std::exp(log_w[s]); }
};

// Draws the scenarios of `range` in tasks of kTask into d (index s - first), reporting progress
// between batches of about 1% of the range. The root's arrays hold the whole run (first = 0).
void draw_losses(const Model& m, const SimulationOptions& opt, ScenarioRange range, std::uint64_t first,
                 unsigned threads, std::vector<Scratch>& scratch, Draws& d) {
  const std::uint64_t n = range.end - range.begin;
  const std::uint64_t batch = std::max<std::uint64_t>(kTask * threads, (n / 100 + kTask - 1) / kTask * kTask);
  for (std::uint64_t b0 = range.begin; b0 < range.end; b0 += batch) {
    const std::uint64_t b1 = std::min(range.end, b0 + batch);
    const std::uint64_t tasks = (b1 - b0 + kTask - 1) / kTask;
    parallel_for(static_cast<std::size_t>(tasks), threads, [&](std::size_t t, unsigned worker) {
      const std::uint64_t s0 = b0 + t * kTask;
      const std::uint64_t s1 = std::min(b1, s0 + kTask);
      for (std::uint64_t s = s0; s < s1; ++s) {
        double lw = 0.0;
        d.loss[s - first] = draw_scenario(m, s, scratch[worker], lw, [](std::size_t) {});
        if (!d.log_w.empty()) d.log_w[s - first] = lw;
      }
    });
    if (opt.progress) opt.progress(b1 - range.begin, n);
  }
}

// Shared run: every process sends its draws to the root, which receives them in rank order into
// its arrays of the whole run; the other processes' arrays are released.
void gather_draws(ScenarioExchange& x, std::uint64_t n, Draws& d) {
  const unsigned ranks = x.ranks();
  if (x.rank() != 0) {
    x.send_to_root(d.loss);
    if (!d.log_w.empty()) x.send_to_root(d.log_w);
    d = Draws{};
    return;
  }
  for (unsigned q = 1; q < ranks; ++q) {
    const ScenarioRange rq = scenario_range(n, q, ranks);
    const auto size = static_cast<std::size_t>(rq.end - rq.begin);
    x.receive_from(q, std::span<double>(d.loss).subspan(static_cast<std::size_t>(rq.begin), size));
    if (!d.log_w.empty())
      x.receive_from(q, std::span<double>(d.log_w).subspan(static_cast<std::size_t>(rq.begin), size));
  }
}

// Expected loss and the effective sample size, in scenario order.
void set_expected_loss(const Draws& d, SimulationResult& r) noexcept {
  const std::uint64_t n = d.loss.size();
  const double dn = static_cast<double>(n);
  double sum_wl = 0.0, sum_wl2 = 0.0, sum_w = 0.0, sum_w2 = 0.0;
  for (std::uint64_t s = 0; s < n; ++s) {
    const double w = d.weight(s);
    sum_wl += w * d.loss[s];
    sum_wl2 += (w * d.loss[s]) * (w * d.loss[s]);
    sum_w += w;
    sum_w2 += w * w;
  }
  r.scenarios = n;
  r.expected_loss = sum_wl / dn;
  r.expected_loss_se = std::sqrt(std::max(0.0, sum_wl2 / dn - r.expected_loss * r.expected_loss) / dn);
  r.effective_scenarios = sum_w * sum_w / sum_w2;
}

// Losses in ascending order (ties by scenario index) with suffix sums of w and w^2: the estimates
// of P(L > x) and of the loss quantiles.
struct SortedLosses {
  std::vector<std::uint64_t> order;
  std::vector<double> sorted, s1, s2;
  double dn = 0.0;

  explicit SortedLosses(const Draws& d) {
    const std::uint64_t n = d.loss.size();
    const std::vector<double>& loss = d.loss;
    dn = static_cast<double>(n);
    order.resize(n);
    std::iota(order.begin(), order.end(), std::uint64_t{0});
    std::sort(order.begin(), order.end(), [&](std::uint64_t x, std::uint64_t y) {
      return loss[x] < loss[y] || (loss[x] == loss[y] && x < y);
    });
    sorted.resize(n);
    s1.assign(n + 1, 0.0);
    s2.assign(n + 1, 0.0);
    for (std::uint64_t k = 0; k < n; ++k) sorted[k] = loss[order[k]];
    for (std::uint64_t k = n; k-- > 0;) {
      const double w = d.weight(order[k]);
      s1[k] = s1[k + 1] + w;
      s2[k] = s2[k + 1] + w * w;
    }
  }
  // Number of simulated losses at or below x.
  std::uint64_t above(double x) const noexcept {
    return static_cast<std::uint64_t>(std::upper_bound(sorted.begin(), sorted.end(), x) - sorted.begin());
  }
  // P(L > x) and its standard error.
  double exceed(double x) const noexcept { return s1[above(x)] / dn; }
  double exceed_se(double x) const noexcept {
    const std::uint64_t k = above(x);
    const double p = s1[k] / dn;
    return std::sqrt(std::max(0.0, s2[k] / dn - p * p) / dn);
  }
  // The smallest simulated loss v with P(L > v) <= tail (the largest loss when tail <= 0).
  double quantile(double tail) const noexcept {
    const std::uint64_t n = sorted.size();
    std::uint64_t lo = 0, hi = n - 1;  // exceed(sorted[n - 1]) = 0 <= tail when tail >= 0
    if (tail < 0.0) return sorted[n - 1];
    while (lo < hi) {
      const std::uint64_t mid = lo + (hi - lo) / 2;
      if (exceed(sorted[mid]) <= tail) {
        hi = mid;
      } else {
        lo = mid + 1;
      }
    }
    return sorted[lo];
  }
};

// VaR, ES and their standard errors at every level, then P(L > x) at the exceedance points.
void set_tails(const SimulationOptions& opt, const Draws& d, const SortedLosses& sl, SimulationResult& r) {
  const auto& levels = opt.confidence_levels;
  const std::uint64_t n = d.loss.size();
  const double dn = sl.dn;
  r.tails.resize(levels.size());
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const double tail = 1.0 - levels[l];
    SimulatedTail& t = r.tails[l];
    t.confidence_level = levels[l];
    t.var = sl.quantile(tail);
    t.exceedance = sl.exceed(t.var);
    const double se_tail = sl.exceed_se(t.var);
    t.var_se = 0.5 * (sl.quantile(tail - se_tail) - sl.quantile(tail + se_tail));
    double sum_e = 0.0, sum_e2 = 0.0;
    for (std::uint64_t k = sl.above(t.var); k < n; ++k) {
      const double e = d.weight(sl.order[k]) * (sl.sorted[k] - t.var);
      sum_e += e;
      sum_e2 += e * e;
    }
    t.es = t.var + sum_e / (dn * tail);
    const double mean_e = sum_e / dn;
    t.es_se = std::sqrt(std::max(0.0, sum_e2 / dn - mean_e * mean_e) / dn) / tail;
  }
  r.exceedance.resize(opt.exceedance_points.size());
  r.exceedance_se.resize(opt.exceedance_points.size());
  for (std::size_t j = 0; j < opt.exceedance_points.size(); ++j) {
    r.exceedance[j] = sl.exceed(opt.exceedance_points[j]);
    r.exceedance_se[j] = sl.exceed_se(opt.exceedance_points[j]);
  }
}

// One task's sums for the contributions (level-major, lev * book size + book index).
struct TailSums {
  std::vector<double> above, above2, at, atom;
  std::vector<std::size_t> defaulted;
  TailSums(std::size_t levels, std::size_t book_size, std::size_t obligors) {
    above.assign(levels * book_size, 0.0);
    above2.assign(levels * book_size, 0.0);
    at.assign(levels * book_size, 0.0);
    atom.assign(levels, 0.0);
    defaulted.reserve(obligors);
  }
  void reset() noexcept {
    std::fill(above.begin(), above.end(), 0.0);
    std::fill(above2.begin(), above2.end(), 0.0);
    std::fill(at.begin(), at.end(), 0.0);
    std::fill(atom.begin(), atom.end(), 0.0);
  }
};

// Draws the tail scenarios tail[k0, k1) again and adds each defaulter's weighted loss to the sums
// of the levels whose VaR the scenario's loss exceeds (above) or equals (at).
void add_tail_scenarios(const Model& m, const std::vector<std::uint64_t>& tail, std::size_t k0,
                        std::size_t k1, const std::vector<SimulatedTail>& tails, std::size_t nb, Scratch& sc,
                        TailSums& x) {
  const std::size_t L = tails.size();
  for (std::size_t k = k0; k < k1; ++k) {
    const std::uint64_t s = tail[k];
    double lw = 0.0;
    x.defaulted.clear();
    const double l = draw_scenario(m, s, sc, lw, [&](std::size_t j) { x.defaulted.push_back(j); });
    const double w = std::exp(lw);
    const double ws = m.shift.empty() ? 1.0 : w;
    for (std::size_t lev = 0; lev < L; ++lev) {
      const double v = tails[lev].var;
      if (l > v) {
        for (std::size_t j : x.defaulted) {
          const Prepared& ob = m.obligors[j];
          const double wx = ws * ob.loss;
          x.above[lev * nb + ob.index] += wx;
          x.above2[lev * nb + ob.index] += wx * wx;
        }
      } else if (l == v) {
        x.atom[lev] += ws;
        for (std::size_t j : x.defaulted) {
          const Prepared& ob = m.obligors[j];
          x.at[lev * nb + ob.index] += ws * ob.loss;
        }
      }
    }
  }
}

// The scenarios whose loss is at or above the smallest VaR, in scenario order.
std::vector<std::uint64_t> tail_scenarios(const SortedLosses& sl, double smallest_var) {
  const auto first = std::lower_bound(sl.sorted.begin(), sl.sorted.end(), smallest_var) - sl.sorted.begin();
  std::vector<std::uint64_t> tail(sl.order.begin() + first, sl.order.end());
  std::sort(tail.begin(), tail.end());
  return tail;
}

// The contribution sums over the tail scenarios, added block by block in block order.
struct ContributionSums {
  std::vector<double> above, above2, at, atom;
  ContributionSums(std::size_t levels, std::size_t book_size)
      : above(levels * book_size, 0.0),
        above2(levels * book_size, 0.0),
        at(levels * book_size, 0.0),
        atom(levels, 0.0) {}
  void add(const TailSums& x) noexcept {
    for (std::size_t k = 0; k < above.size(); ++k) {
      above[k] += x.above[k];
      above2[k] += x.above2[k];
      at[k] += x.at[k];
    }
    for (std::size_t lev = 0; lev < atom.size(); ++lev) atom[lev] += x.atom[lev];
  }
};

// A block's sums as one message: above, above2, at, atom.
void pack(const TailSums& x, std::vector<double>& out) {
  out.clear();
  out.insert(out.end(), x.above.begin(), x.above.end());
  out.insert(out.end(), x.above2.begin(), x.above2.end());
  out.insert(out.end(), x.at.begin(), x.at.end());
  out.insert(out.end(), x.atom.begin(), x.atom.end());
}
void unpack(const std::vector<double>& in, TailSums& x) noexcept {
  auto it = in.begin();
  const auto take = [&it](std::vector<double>& v) {
    std::copy(it, it + static_cast<std::ptrdiff_t>(v.size()), v.begin());
    it += static_cast<std::ptrdiff_t>(v.size());
  };
  take(x.above);
  take(x.above2);
  take(x.at);
  take(x.atom);
}

// Contributions: the tail scenarios are drawn again in blocks of kTask, block k on process
// k mod P, each process's blocks in rounds of one per worker; the root adds every block's sums in
// block order, so that they depend neither on the number of threads nor on that of processes.
// Only the root sets r's contributions.
void set_contributions(const Model& m, const std::vector<std::uint64_t>& scenarios, double dn, std::size_t nb,
                       const std::vector<double>& levels, unsigned threads, std::vector<Scratch>& scratch,
                       ScenarioExchange* exchange, SimulationResult& r) {
  const std::size_t L = levels.size();
  const unsigned rank = exchange ? exchange->rank() : 0;
  const unsigned ranks = exchange ? exchange->ranks() : 1;
  const std::size_t tasks = (scenarios.size() + kTask - 1) / kTask;
  std::vector<std::size_t> mine;  // this process's blocks, ascending
  for (std::size_t k = rank; k < tasks; k += ranks) mine.push_back(k);
  ContributionSums sums(rank == 0 ? L : 0, rank == 0 ? nb : 0);
  std::vector<TailSums> acc;
  acc.reserve(threads);
  for (unsigned t = 0; t < threads; ++t) acc.emplace_back(L, nb, m.obligors.size());
  std::vector<double> message;
  std::unique_ptr<TailSums> received;
  std::size_t next = 0;  // the root's next block to add
  for (std::size_t r0 = 0; r0 < mine.size(); r0 += threads) {
    const std::size_t r1 = std::min(mine.size(), r0 + threads);
    parallel_for(r1 - r0, threads, [&](std::size_t t, unsigned worker) {
      TailSums& x = acc[t];
      x.reset();
      const std::size_t k0 = mine[r0 + t] * kTask;
      const std::size_t k1 = std::min(scenarios.size(), k0 + kTask);
      add_tail_scenarios(m, scenarios, k0, k1, r.tails, nb, scratch[worker], x);
    });
    if (rank != 0) {
      for (std::size_t t = 0; t < r1 - r0; ++t) {
        pack(acc[t], message);
        exchange->send_to_root(message);
      }
      continue;
    }
    // The root adds the blocks before each of its own in order, receiving the others' as it goes.
    for (std::size_t t = 0; t < r1 - r0; ++t) {
      for (; next < mine[r0 + t]; ++next) {
        if (!received) received = std::make_unique<TailSums>(L, nb, 0);
        message.resize(3 * L * nb + L);
        exchange->receive_from(static_cast<unsigned>(next % ranks), message);
        unpack(message, *received);
        sums.add(*received);
      }
      sums.add(acc[t]);
      ++next;
    }
  }
  if (rank != 0) return;
  for (; next < tasks; ++next) {  // blocks after the root's last
    if (!received) received = std::make_unique<TailSums>(L, nb, 0);
    message.resize(3 * L * nb + L);
    exchange->receive_from(static_cast<unsigned>(next % ranks), message);
    unpack(message, *received);
    sums.add(*received);
  }
  const std::vector<double>&sum_above = sums.above, &sum_above2 = sums.above2, &sum_at = sums.at,
        &atom_weight = sums.atom;
  r.es_contributions.assign(L * nb, 0.0);
  r.es_contribution_se.assign(L * nb, 0.0);
  for (std::size_t lev = 0; lev < L; ++lev) {
    const double tail = 1.0 - levels[lev];
    const double share = atom_weight[lev] > 0.0 ? (tail - r.tails[lev].exceedance) / atom_weight[lev] : 0.0;
    for (std::size_t i = 0; i < nb; ++i) {
      const std::size_t k = lev * nb + i;
      const double mean = sum_above[k] / dn;
      r.es_contributions[k] = (mean + sum_at[k] * share) / tail;
      r.es_contribution_se[k] = std::sqrt(std::max(0.0, sum_above2[k] / dn - mean * mean) / dn) / tail;
    }
  }
}

// The message simulate_losses gives for an invalid option or factor model ("" when all are valid),
// in the order it has always checked them.
std::string problem_of(const SimulationOptions& opt, const FactorCholesky& factors) {
  const OptionCheck bad = opt.validate();
  if (bad && bad->field == "confidence_levels")
    return "confidence levels must be distinct, ascending and inside (0, 1)";
  if (bad && bad->field == "scenarios") return "the number of scenarios must lie in [2, 2^40]";
  if (factors.factors == 0 || factors.lower.size() != factors.factors * factors.factors) {
    return "the factor model has no valid Cholesky factor";
  }
  if (bad) return "exceedance points must be ascending";
  return {};
}

// Shared run: the root's tail scenarios and VaRs to every process (each process's r.tails gets
// the VaRs; only the root's has the rest of the tail figures).
void share_tail(ScenarioExchange& x, std::size_t levels, std::vector<std::uint64_t>& tail,
                SimulationResult& r) {
  std::uint64_t count = tail.size();
  x.broadcast(std::span<std::uint64_t>(&count, 1));
  tail.resize(static_cast<std::size_t>(count));
  x.broadcast(std::span<std::uint64_t>(tail));
  std::vector<double> vars(levels);
  if (x.rank() == 0) {
    for (std::size_t l = 0; l < levels; ++l) vars[l] = r.tails[l].var;
  }
  x.broadcast(std::span<double>(vars));
  if (x.rank() != 0) {
    r.tails.resize(levels);
    for (std::size_t l = 0; l < levels; ++l) r.tails[l].var = vars[l];
  }
}

// Shared run: the root's result to every process (all sizes follow from the common inputs).
void share_result(ScenarioExchange& x, const SimulationOptions& opt, std::size_t nb, SimulationResult& r) {
  const std::size_t L = opt.confidence_levels.size(), E = opt.exceedance_points.size();
  const std::size_t C = opt.contributions ? L * nb : 0;
  std::vector<double> v;
  if (x.rank() == 0) {
    v = {r.expected_loss, r.expected_loss_se, r.effective_scenarios};
    for (const SimulatedTail& t : r.tails) v.insert(v.end(), {t.var, t.var_se, t.es, t.es_se, t.exceedance});
    v.insert(v.end(), r.exceedance.begin(), r.exceedance.end());
    v.insert(v.end(), r.exceedance_se.begin(), r.exceedance_se.end());
    v.insert(v.end(), r.es_contributions.begin(), r.es_contributions.end());
    v.insert(v.end(), r.es_contribution_se.begin(), r.es_contribution_se.end());
  } else {
    v.resize(3 + 5 * L + 2 * E + 2 * C);
  }
  x.broadcast(std::span<double>(v));
  if (x.rank() == 0) return;
  auto it = v.begin();
  r.expected_loss = *it++;
  r.expected_loss_se = *it++;
  r.effective_scenarios = *it++;
  r.tails.resize(L);
  for (std::size_t l = 0; l < L; ++l) {
    r.tails[l] = {opt.confidence_levels[l], it[0], it[1], it[2], it[3], it[4]};
    it += 5;
  }
  const auto take = [&it](std::vector<double>& out, std::size_t k) {
    out.assign(it, it + static_cast<std::ptrdiff_t>(k));
    it += static_cast<std::ptrdiff_t>(k);
  };
  take(r.exceedance, E);
  take(r.exceedance_se, E);
  take(r.es_contributions, C);
  take(r.es_contribution_se, C);
}

}  // namespace

SimulationResult simulate_losses(std::span<const SectorExposure> book, const FactorCholesky& factors,
                                 const SimulationOptions& opt) noexcept {
  SimulationResult r;
  ScenarioExchange* const x = opt.exchange != nullptr && opt.exchange->ranks() > 1 ? opt.exchange : nullptr;
  Model m;
  try {
    r.message = problem_of(opt, factors);
    if (r.message.empty()) {
      m.factors = &factors;
      m.seed = opt.seed;
      r.message = prepare_obligors(book, factors, m);
    }
  } catch (...) {
    r.message = "out of memory";
  }
  // Every process checks the same inputs; should one refuse them, all stop here, before any draw.
  if (x != nullptr && !x->all_ok(r.message.empty()) && r.message.empty()) {
    r.status = SimulationStatus::peer_failed;
    r.message = "another process of the run refused its input";
    return r;
  }
  if (!r.message.empty()) return r;
  try {
    if (opt.importance_sampling) {
      m.shift = factor_shift(m, norm_quantile_upper(1.0 - opt.confidence_levels.back()));
      for (double s : m.shift) m.shift_norm2 += s * s;
      r.factor_shift = m.shift;
    }
    const unsigned threads = std::max(1U, opt.threads);
    std::vector<Scratch> scratch = make_scratch(threads, factors.factors);
    const std::uint64_t n = opt.scenarios;
    const bool root = x == nullptr || x->rank() == 0;
    const ScenarioRange range = x == nullptr ? ScenarioRange{0, n} : scenario_range(n, x->rank(), x->ranks());
    const std::uint64_t first = root ? 0 : range.begin;
    const std::uint64_t held = root ? n : range.end - range.begin;
    Draws draws;
    draws.loss.resize(static_cast<std::size_t>(held));
    draws.log_w.resize(m.shift.empty() ? 0 : static_cast<std::size_t>(held));
    draw_losses(m, opt, range, first, threads, scratch, draws);
    if (x != nullptr) gather_draws(*x, n, draws);
    std::vector<std::uint64_t> tail;
    double dn = static_cast<double>(n);
    if (root) {
      set_expected_loss(draws, r);
      const SortedLosses sorted(draws);
      set_tails(opt, draws, sorted, r);
      if (opt.contributions) tail = tail_scenarios(sorted, r.tails[0].var);
      dn = sorted.dn;
    }
    draws = Draws{};
    if (opt.contributions) {
      if (x != nullptr) share_tail(*x, opt.confidence_levels.size(), tail, r);
      set_contributions(m, tail, dn, book.size(), opt.confidence_levels, threads, scratch, x, r);
    }
    if (x != nullptr) share_result(*x, opt, book.size(), r);
    r.scenarios = n;
    r.status = SimulationStatus::ok;
    return r;
  } catch (...) {
    // Past the first draw the processes can no longer agree to stop: the run ends everywhere.
    if (x != nullptr) x->abort_run("out of memory");
    r = SimulationResult{};
    r.message = "out of memory";
    return r;
  }
}

}  // namespace firmcall
