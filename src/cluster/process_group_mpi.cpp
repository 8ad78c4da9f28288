// The process group over MPI (Open MPI from Debian: libopenmpi-dev, openmpi-bin). Every MPI call
// is made from the thread that started MPI (MPI_THREAD_FUNNELED); the simulation's workers never
// communicate. Transfers are cut into pieces of at most 2^27 values, as MPI counts are int.
// The C interface only: the deprecated C++ bindings would need their own library.
#define OMPI_SKIP_MPICXX 1
#define MPICH_SKIP_MPICXX 1
#include <mpi.h>

#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <string>
#include <utility>
#include <vector>

#include "cluster/process_group.hpp"

namespace firmcall::cluster {

namespace {

constexpr std::size_t kPiece = std::size_t{1} << 27;
constexpr int kTagValues = 1;
constexpr int kTagMessage = 2;

template <class T>
MPI_Datatype type_of();
template <>
MPI_Datatype type_of<double>() {
  return MPI_DOUBLE;
}
template <>
MPI_Datatype type_of<std::uint64_t>() {
  return MPI_UINT64_T;
}

class MpiExchange final : public ScenarioExchange {
 public:
  MpiExchange(unsigned rank, unsigned ranks) : rank_(rank), ranks_(ranks) {}
  unsigned rank() const noexcept override { return rank_; }
  unsigned ranks() const noexcept override { return ranks_; }

  bool all_ok(bool ok) noexcept override {
    int v = ok ? 1 : 0;
    MPI_Allreduce(MPI_IN_PLACE, &v, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (v == 0) {
      failure_agreed = true;
      stopped_by_another = ok;
    }
    return v != 0;
  }
  void broadcast(std::span<double> values) noexcept override { share(values); }
  void broadcast(std::span<std::uint64_t> values) noexcept override { share(values); }
  void send_to_root(std::span<const double> values) noexcept override {
    for (std::size_t i = 0; i < values.size() || i == 0; i += kPiece) {
      const std::size_t k = std::min(kPiece, values.size() - i);
      MPI_Send(values.data() + i, static_cast<int>(k), MPI_DOUBLE, 0, kTagValues, MPI_COMM_WORLD);
      if (values.empty()) break;
    }
  }
  void receive_from(unsigned sender, std::span<double> values) noexcept override {
    for (std::size_t i = 0; i < values.size() || i == 0; i += kPiece) {
      const std::size_t k = std::min(kPiece, values.size() - i);
      MPI_Recv(values.data() + i, static_cast<int>(k), MPI_DOUBLE, static_cast<int>(sender), kTagValues,
               MPI_COMM_WORLD, MPI_STATUS_IGNORE);
      if (values.empty()) break;
    }
  }
  [[noreturn]] void abort_run(std::string_view message) noexcept override {
    std::fprintf(stderr, "firmcall: error: process %u of %u: %.*s\n", rank_, ranks_,
                 static_cast<int>(message.size()), message.data());
    std::fflush(stderr);
    MPI_Abort(MPI_COMM_WORLD, 3);
    std::abort();  // MPI_Abort does not return
  }

  bool failure_agreed = false;      // an all_ok returned false: finish skips its own vote
  bool stopped_by_another = false;  // ... and this process had voted ok

 private:
  template <class T>
  void share(std::span<T> values) noexcept {
    for (std::size_t i = 0; i < values.size(); i += kPiece) {
      const std::size_t k = std::min(kPiece, values.size() - i);
      MPI_Bcast(values.data() + i, static_cast<int>(k), type_of<T>(), 0, MPI_COMM_WORLD);
    }
  }
  unsigned rank_;
  unsigned ranks_;
};

}  // namespace

struct ProcessGroup::State {
  std::unique_ptr<MpiExchange> exchange;
  unsigned rank = 0;
  unsigned size = 1;
};

ProcessGroup::ProcessGroup(int& argc, char**& argv) : state_(std::make_unique<State>()) {
  int provided = 0;
  MPI_Init_thread(&argc, &argv, MPI_THREAD_FUNNELED, &provided);
  int rank = 0, size = 1;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  state_->rank = static_cast<unsigned>(rank);
  state_->size = static_cast<unsigned>(size);
  state_->exchange = std::make_unique<MpiExchange>(state_->rank, state_->size);
}

ProcessGroup::~ProcessGroup() {
  MPI_Finalize();
}

unsigned ProcessGroup::rank() const noexcept {
  return state_->rank;
}
unsigned ProcessGroup::size() const noexcept {
  return state_->size;
}
ScenarioExchange* ProcessGroup::exchange() noexcept {
  return state_->size > 1 ? state_->exchange.get() : nullptr;
}

ProcessGroup::Outcome ProcessGroup::finish(int code, std::string message) {
  if (state_->size == 1) return {code, std::move(message)};
  MpiExchange& x = *state_->exchange;
  const bool failed = !message.empty();
  const bool all_ok = x.failure_agreed ? false : x.all_ok(!failed);
  if (all_ok) {
    MPI_Bcast(&code, 1, MPI_INT, 0, MPI_COMM_WORLD);
    return {code, {}};
  }
  // Who failed of its own accord, who failed at all, the message's length and the exit code.
  const int own = failed && !x.stopped_by_another ? 1 : 0;
  int mine[4] = {own, failed ? 1 : 0, static_cast<int>(message.size()), code};
  std::vector<int> all(x.rank() == 0 ? 4 * state_->size : 0);
  MPI_Gather(mine, 4, MPI_INT, all.data(), 4, MPI_INT, 0, MPI_COMM_WORLD);
  int chosen[2] = {-1, code};  // the process whose failure is reported, and its exit code
  if (x.rank() == 0) {
    for (unsigned r = 0; r < state_->size && chosen[0] < 0; ++r)
      if (all[4 * r] != 0) chosen[0] = static_cast<int>(r);
    for (unsigned r = 0; r < state_->size && chosen[0] < 0; ++r)
      if (all[4 * r + 1] != 0) chosen[0] = static_cast<int>(r);
    if (chosen[0] >= 0) chosen[1] = all[4 * chosen[0] + 3];
  }
  MPI_Bcast(chosen, 2, MPI_INT, 0, MPI_COMM_WORLD);
  Outcome out;
  out.code = chosen[1];
  if (chosen[0] > 0 && x.rank() == static_cast<unsigned>(chosen[0])) {
    MPI_Send(message.data(), static_cast<int>(message.size()), MPI_CHAR, 0, kTagMessage, MPI_COMM_WORLD);
  }
  if (x.rank() == 0) {
    if (chosen[0] == 0) {
      out.message = std::move(message);
    } else if (chosen[0] > 0) {
      std::string text(static_cast<std::size_t>(all[4 * chosen[0] + 2]), '\0');
      MPI_Recv(text.data(), static_cast<int>(text.size()), MPI_CHAR, chosen[0], kTagMessage, MPI_COMM_WORLD,
               MPI_STATUS_IGNORE);
      out.message = "process " + std::to_string(chosen[0]) + " of " + std::to_string(state_->size) + ": ";
      out.message.append(text);
    }
  }
  return out;
}

}  // namespace firmcall::cluster
