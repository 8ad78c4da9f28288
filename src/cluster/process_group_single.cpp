// A group of one process: the build without MPI.
#include "cluster/process_group.hpp"

#include <utility>

namespace firmcall::cluster {

struct ProcessGroup::State {};

ProcessGroup::ProcessGroup(int&, char**&) {}
ProcessGroup::~ProcessGroup() = default;
unsigned ProcessGroup::rank() const noexcept {
  return 0;
}
unsigned ProcessGroup::size() const noexcept {
  return 1;
}
ScenarioExchange* ProcessGroup::exchange() noexcept {
  return nullptr;
}
ProcessGroup::Outcome ProcessGroup::finish(int code, std::string message) {
  return {code, std::move(message)};
}

}  // namespace firmcall::cluster
