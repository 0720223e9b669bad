#pragma once
/// \file
/// routing::Ranks over MPI (the build option REACHWISE_MPI): the processes
/// `mpirun -n N reachwise route ...` starts route one network together.

#include <mpi.h>

#include <list>

#include "reachwise/routing/Ranks.hpp"

namespace reachwise::parallel {

/// True when an MPI launcher (mpirun, mpiexec) started this process: its
/// environment names the process's rank.
bool launchedByMpi();

/// MPI for the life of the object: initialises it (the "funneled" level:
/// only this thread talks to the other ranks) and finalises it. One per
/// process.
class MpiRanks final : public routing::Ranks {
public:
  MpiRanks(int* argc, char*** argv);
  ~MpiRanks() override;
  MpiRanks(const MpiRanks&) = delete;
  MpiRanks& operator=(const MpiRanks&) = delete;

  int rank() const override { return rank_; }
  int size() const override { return size_; }
  int onThisMachine() const override { return local_; }
  void send(int to, int tag, std::vector<std::byte> data) override;
  std::optional<Message> receive() override;
  bool allSent() override;
  void enterBarrier() override;
  bool barrierPassed() override;
  std::optional<Failure> firstFailure(const std::optional<Failure>& mine) override;
  std::vector<std::vector<std::byte>> gather(const std::vector<std::byte>& mine) override;
  void broadcast(std::vector<std::byte>& data) override;

private:
  struct Pending {
    MPI_Request request;
    std::vector<std::byte> data;
  };
  int rank_ = 0, size_ = 1, local_ = 1;
  MPI_Comm messages_ = MPI_COMM_NULL;     ///< point-to-point messages while routing
  MPI_Comm collective_ = MPI_COMM_NULL;   ///< collectives and gathers, apart from those
  std::list<Pending> pending_;            ///< sends not yet received (a list: the buffers must not move)
  MPI_Request barrier_ = MPI_REQUEST_NULL;
  bool in_barrier_ = false;
};

}  // namespace reachwise::parallel
