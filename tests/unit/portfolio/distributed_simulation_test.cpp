// Tests of a Monte Carlo run shared between processes (loss_simulation.hpp, "Across processes"):
// processes are stood in for by threads that exchange through shared memory, with the ordering
// MPI gives point-to-point messages (MPI 4.0, section 3.5: messages between one pair do not
// overtake). The reference is the one-process run of the same seed: a shared run must equal it
// bit for bit, whatever the number of processes and threads.
#include <doctest/doctest.h>

#include <barrier>
#include <condition_variable>
#include <cstdint>
#include <cstdlib>
#include <deque>
#include <mutex>
#include <thread>
#include <vector>

#include "firmcall/portfolio/factor_model.hpp"
#include "firmcall/portfolio/loss_simulation.hpp"
#include "firmcall/portfolio/scenario_exchange.hpp"

using namespace firmcall;

namespace {

// What the processes of one run share.
struct Hub {
  explicit Hub(unsigned n) : ranks(n), sync(n), boxes(n) {}
  unsigned ranks;
  std::barrier<> sync;
  std::vector<double> doubles;
  std::vector<std::uint64_t> words;
  bool all = true;
  std::mutex lock;
  std::condition_variable arrived;
  std::vector<std::deque<std::vector<double>>> boxes;  // messages from each sender to the root
};

class ThreadExchange final : public ScenarioExchange {
 public:
  ThreadExchange(Hub& hub, unsigned rank) : hub_(hub), rank_(rank) {}
  unsigned rank() const noexcept override { return rank_; }
  unsigned ranks() const noexcept override { return hub_.ranks; }
  bool all_ok(bool ok) noexcept override {
    if (rank_ == 0) hub_.all = true;
    hub_.sync.arrive_and_wait();
    if (!ok) {
      std::lock_guard<std::mutex> g(hub_.lock);
      hub_.all = false;
    }
    hub_.sync.arrive_and_wait();
    const bool all = hub_.all;
    hub_.sync.arrive_and_wait();
    return all;
  }
  void broadcast(std::span<double> values) noexcept override { share(values, hub_.doubles); }
  void broadcast(std::span<std::uint64_t> values) noexcept override { share(values, hub_.words); }
  void send_to_root(std::span<const double> values) noexcept override {
    std::lock_guard<std::mutex> g(hub_.lock);
    hub_.boxes[rank_].emplace_back(values.begin(), values.end());
    hub_.arrived.notify_all();
  }
  void receive_from(unsigned sender, std::span<double> values) noexcept override {
    std::unique_lock<std::mutex> g(hub_.lock);
    hub_.arrived.wait(g, [&] { return !hub_.boxes[sender].empty(); });
    std::vector<double> m = std::move(hub_.boxes[sender].front());
    hub_.boxes[sender].pop_front();
    if (m.size() != values.size()) std::abort();  // a size mismatch is a bug of the protocol
    std::copy(m.begin(), m.end(), values.begin());
  }
  [[noreturn]] void abort_run(std::string_view) noexcept override { std::abort(); }

 private:
  template <class T>
  void share(std::span<T> values, std::vector<T>& slot) {
    if (rank_ == 0) slot.assign(values.begin(), values.end());
    hub_.sync.arrive_and_wait();
    if (rank_ != 0) {
      if (slot.size() != values.size()) std::abort();
      std::copy(slot.begin(), slot.end(), values.begin());
    }
    hub_.sync.arrive_and_wait();
  }
  Hub& hub_;
  unsigned rank_;
};

// Runs simulate_losses on `ranks` stand-in processes; the results in rank order.
std::vector<SimulationResult> shared_run(const std::vector<SectorExposure>& book, const FactorCholesky& a,
                                         SimulationOptions opt, unsigned ranks) {
  Hub hub(ranks);
  std::vector<SimulationResult> out(ranks);
  std::vector<std::thread> procs;
  for (unsigned r = 0; r < ranks; ++r) {
    procs.emplace_back([&, r] {
      ThreadExchange x(hub, r);
      SimulationOptions mine = opt;
      mine.exchange = &x;
      out[r] = simulate_losses(book, a, mine);
    });
  }
  for (auto& t : procs) t.join();
  return out;
}

// Sixty obligors in three correlated sectors, PDs 0.2% to 8%, unequal losses.
std::vector<SectorExposure> sector_book() {
  std::vector<SectorExposure> book;
  for (std::uint32_t i = 0; i < 60; ++i) {
    book.push_back({0.002 + 0.0013 * i, 1.0 + (i * 37 % 23) * 0.75, 0.08 + 0.004 * (i % 40), i % 3});
  }
  return book;
}

FactorCholesky three_sectors() {
  FactorCholesky a;
  const std::vector<double> c = {1, 0.5, 0.3, 0.5, 1, 0.4, 0.3, 0.4, 1};
  REQUIRE(cholesky_of_correlation(c, 3, a).ok());
  return a;
}

void require_identical(const SimulationResult& a, const SimulationResult& b) {
  REQUIRE(a.status == SimulationStatus::ok);
  REQUIRE(b.status == SimulationStatus::ok);
  CHECK(a.scenarios == b.scenarios);
  CHECK(a.expected_loss == b.expected_loss);
  CHECK(a.expected_loss_se == b.expected_loss_se);
  CHECK(a.effective_scenarios == b.effective_scenarios);
  REQUIRE(a.tails.size() == b.tails.size());
  for (std::size_t l = 0; l < a.tails.size(); ++l) {
    CHECK(a.tails[l].confidence_level == b.tails[l].confidence_level);
    CHECK(a.tails[l].var == b.tails[l].var);
    CHECK(a.tails[l].var_se == b.tails[l].var_se);
    CHECK(a.tails[l].es == b.tails[l].es);
    CHECK(a.tails[l].es_se == b.tails[l].es_se);
    CHECK(a.tails[l].exceedance == b.tails[l].exceedance);
  }
  CHECK(a.es_contributions == b.es_contributions);
  CHECK(a.es_contribution_se == b.es_contribution_se);
  CHECK(a.exceedance == b.exceedance);
  CHECK(a.exceedance_se == b.exceedance_se);
  CHECK(a.factor_shift == b.factor_shift);
}

}  // namespace

TEST_CASE("scenario ranges cover the run in rank order, sizes within one of each other") {
  for (std::uint64_t n : {2ULL, 7ULL, 60001ULL, 1000000ULL}) {
    for (unsigned p : {1U, 2U, 3U, 8U}) {
      std::uint64_t next = 0, smallest = n, largest = 0;
      for (unsigned r = 0; r < p; ++r) {
        const ScenarioRange s = scenario_range(n, r, p);
        CHECK(s.begin == next);
        next = s.end;
        smallest = std::min(smallest, s.end - s.begin);
        largest = std::max(largest, s.end - s.begin);
      }
      CHECK(next == n);
      CHECK(largest - smallest <= 1);
    }
  }
}

TEST_CASE("a run shared by 2 or 3 processes equals the one-process run bit for bit") {
  const std::vector<SectorExposure> book = sector_book();
  const FactorCholesky a = three_sectors();
  for (bool is : {false, true}) {
    SimulationOptions opt;
    opt.scenarios = 60001;  // not a multiple of the task size or of the number of processes
    opt.seed = 20261204;
    opt.importance_sampling = is;
    opt.exceedance_points = {5.0, 20.0, 60.0};
    opt.threads = 1;
    const SimulationResult alone = simulate_losses(book, a, opt);
    REQUIRE(alone.status == SimulationStatus::ok);
    REQUIRE(alone.es_contributions.size() == 3 * book.size());
    for (unsigned ranks : {2U, 3U}) {
      for (unsigned threads : {1U, 2U}) {
        CAPTURE(is);
        CAPTURE(ranks);
        CAPTURE(threads);
        opt.threads = threads;
        const std::vector<SimulationResult> shared = shared_run(book, a, opt, ranks);
        for (const SimulationResult& r : shared) require_identical(alone, r);
      }
    }
  }
}

TEST_CASE("a shared run without contributions equals the one-process run") {
  const std::vector<SectorExposure> book = sector_book();
  const FactorCholesky a = three_sectors();
  SimulationOptions opt;
  opt.scenarios = 30000;
  opt.contributions = false;
  const SimulationResult alone = simulate_losses(book, a, opt);
  for (const SimulationResult& r : shared_run(book, a, opt, 2)) {
    require_identical(alone, r);
    CHECK(r.es_contributions.empty());
  }
}

TEST_CASE("invalid input stops every process of a shared run before any draw") {
  std::vector<SectorExposure> book = sector_book();
  book[3].pd = 1.5;
  const FactorCholesky a = three_sectors();
  SimulationOptions opt;
  opt.scenarios = 10000;
  for (const SimulationResult& r : shared_run(book, a, opt, 3)) {
    CHECK(r.status == SimulationStatus::invalid_input);
    CHECK(r.message.find("exposure 4") != std::string::npos);
  }
}
