// The processes one firmcall run is started as: `mpirun -np N firmcall ...` in a build with
// FIRMCALL_MPI=ON (docs/cluster.md), or this process alone. Process 0, the root, reads the options'
// outputs and writes them; the others take part in the portfolio simulation only.
//
// A run ends with finish(): every process gives its exit code and, when it failed, its message;
// they agree on one outcome, which the root reports. A process that fails before the simulation
// begins is met there by the others (ScenarioExchange::all_ok), so that no process waits forever.
#pragma once

#include <memory>
#include <string>

#include "firmcall/portfolio/scenario_exchange.hpp"

namespace firmcall::cluster {

class ProcessGroup {
 public:
  /// Starts MPI when the build has it (MPI_Init_thread, MPI_THREAD_FUNNELED: only the calling
  /// thread communicates); otherwise a group of one.
  ProcessGroup(int& argc, char**& argv);
  ~ProcessGroup();
  ProcessGroup(const ProcessGroup&) = delete;
  ProcessGroup& operator=(const ProcessGroup&) = delete;

  unsigned rank() const noexcept;
  unsigned size() const noexcept;
  bool root() const noexcept { return rank() == 0; }
  /// For SimulationOptions::exchange; nullptr in a group of one.
  ScenarioExchange* exchange() noexcept;

  struct Outcome {
    int code = 0;         ///< the exit code of every process
    std::string message;  ///< on the root: what to print (empty: nothing failed)
  };
  /// Collective, the last of the run. `message` is this process's failure ("" when it did not
  /// fail). The outcome is the first failure by rank among the processes that failed of their own
  /// accord (not because another stopped the run), named "process r of N: ..." when r > 0; with
  /// none, the root's code.
  Outcome finish(int code, std::string message);

  struct State;

 private:
  std::unique_ptr<State> state_;
};

}  // namespace firmcall::cluster
