// How a Monte Carlo run shares its work between processes (for example MPI ranks on a cluster):
// the few collective operations simulate_losses needs, behind an interface so that the numerical
// core does not depend on any message-passing library. The cluster layer implements it with MPI;
// the tests implement it with threads.
//
// Every process calls the collective operations (all_ok, broadcast) in the same order; send_to_root
// and receive_from pair up in the order they are called between one sender and the root (process
// 0), as MPI's point-to-point messages do (MPI 4.0 standard, section 3.5, "Order").
#pragma once

#include <cstdint>
#include <span>
#include <string_view>

namespace firmcall {

class ScenarioExchange {
 public:
  virtual ~ScenarioExchange() = default;
  virtual unsigned rank() const noexcept = 0;   ///< this process, in [0, ranks()); 0 is the root
  virtual unsigned ranks() const noexcept = 0;  ///< number of processes, at least 1
  /// Collective: true when every process passes true.
  virtual bool all_ok(bool ok) noexcept = 0;
  /// Collective: every process's `values` becomes the root's (same size on every process).
  virtual void broadcast(std::span<double> values) noexcept = 0;
  virtual void broadcast(std::span<std::uint64_t> values) noexcept = 0;
  /// Sends `values` from this process (not the root) to the root.
  virtual void send_to_root(std::span<const double> values) noexcept = 0;
  /// On the root: receives the next values `sender` sent, exactly values.size() of them.
  virtual void receive_from(unsigned sender, std::span<double> values) noexcept = 0;
  /// Ends the run on every process, the message naming this process; for failures after the
  /// processes have started to exchange draws (when they can no longer agree to stop).
  [[noreturn]] virtual void abort_run(std::string_view message) noexcept = 0;
};

/// The scenarios [begin, end) one process draws: contiguous, in rank order, sizes differing by at
/// most one.
struct ScenarioRange {
  std::uint64_t begin = 0;
  std::uint64_t end = 0;
};
ScenarioRange scenario_range(std::uint64_t scenarios, unsigned rank, unsigned ranks) noexcept;

}  // namespace firmcall
