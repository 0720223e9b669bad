#include "reachwise/parallel/MpiRanks.hpp"

#include <algorithm>
#include <chrono>
#include <cstdint>
#include <cstdlib>
#include <limits>
#include <thread>

#include "reachwise/Error.hpp"

namespace reachwise::parallel {

namespace {

/// Bytes per MPI call: MPI counts are ints.
constexpr std::size_t kChunk = std::size_t{1} << 30;

void check(int code, const char* what) {
  if (code == MPI_SUCCESS) return;
  char text[MPI_MAX_ERROR_STRING];
  int length = 0;
  MPI_Error_string(code, text, &length);
  throw InternalError(std::string("MPI: ") + what + ": " + std::string(text, static_cast<std::size_t>(length)));
}

/// Waits for `request` sleeping between tests (50 µs, doubling to 5 ms):
/// a rank waiting for another (rank 0 writing the outputs, say) leaves
/// the core to it, where MPI's own blocking calls would spin on it.
void waitGently(MPI_Request& request, const char* what) {
  auto pause = std::chrono::microseconds(50);
  for (;;) {
    int done = 0;
    check(MPI_Test(&request, &done, MPI_STATUS_IGNORE), what);
    if (done) return;
    std::this_thread::sleep_for(pause);
    pause = std::min(pause * 2, std::chrono::microseconds(5000));
  }
}

/// Sends `data` to `to` in pieces of at most kChunk bytes.
void sendAll(const std::byte* data, std::size_t n, int to, MPI_Comm comm) {
  for (std::size_t at = 0; at < n; at += kChunk) {
    const int count = static_cast<int>(std::min(kChunk, n - at));
    MPI_Request r;
    check(MPI_Isend(data + at, count, MPI_BYTE, to, 0, comm, &r), "send");
    waitGently(r, "send");
  }
}

void receiveAll(std::byte* data, std::size_t n, int from, MPI_Comm comm) {
  for (std::size_t at = 0; at < n; at += kChunk) {
    const int count = static_cast<int>(std::min(kChunk, n - at));
    MPI_Request r;
    check(MPI_Irecv(data + at, count, MPI_BYTE, from, 0, comm, &r), "receive");
    waitGently(r, "receive");
  }
}

/// MPI_Bcast, waited for gently.
void broadcastBytes(void* data, int count, MPI_Datatype type, int root, MPI_Comm comm, const char* what) {
  MPI_Request r;
  check(MPI_Ibcast(data, count, type, root, comm, &r), what);
  waitGently(r, what);
}

}  // namespace

bool launchedByMpi() {
  // Open MPI's launcher, and PMI / PMIx launchers (MPICH's, Slurm's).
  for (const char* name : {"OMPI_COMM_WORLD_SIZE", "PMIX_RANK", "PMI_RANK", "PMI_SIZE"})
    if (std::getenv(name)) return true;
  return false;
}

MpiRanks::MpiRanks(int* argc, char*** argv) {
  int provided = 0;
  check(MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided), "initialise");
  if (provided < MPI_THREAD_FUNNELED) {
    MPI_Finalize();
    throw InternalError("MPI: this MPI library cannot be used from a threaded program (no MPI_THREAD_FUNNELED)");
  }
  // Errors come back as codes (then InternalError), not as an abort.
  MPI_Comm_set_errhandler(MPI_COMM_WORLD, MPI_ERRORS_RETURN);
  check(MPI_Comm_rank(MPI_COMM_WORLD, &rank_), "rank");
  check(MPI_Comm_size(MPI_COMM_WORLD, &size_), "size");
  check(MPI_Comm_dup(MPI_COMM_WORLD, &messages_), "communicator");
  check(MPI_Comm_dup(MPI_COMM_WORLD, &collective_), "communicator");
  MPI_Comm machine = MPI_COMM_NULL;
  check(MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, rank_, MPI_INFO_NULL, &machine), "machine");
  check(MPI_Comm_size(machine, &local_), "machine size");
  MPI_Comm_free(&machine);
}

MpiRanks::~MpiRanks() {
  // Every send was received before the last barrier; a run that stopped on
  // an exception may leave some: they are cancelled.
  for (Pending& p : pending_) {
    MPI_Cancel(&p.request);
    MPI_Request_free(&p.request);
  }
  if (in_barrier_) MPI_Wait(&barrier_, MPI_STATUS_IGNORE);
  MPI_Comm_free(&messages_);
  MPI_Comm_free(&collective_);
  MPI_Finalize();
}

void MpiRanks::send(int to, int tag, std::vector<std::byte> data) {
  if (data.size() > static_cast<std::size_t>(std::numeric_limits<int>::max()))
    throw InternalError("MPI: a message of " + std::to_string(data.size()) + " bytes is beyond one send");
  pending_.push_back({MPI_REQUEST_NULL, std::move(data)});
  Pending& p = pending_.back();
  static std::byte none{};
  check(MPI_Isend(p.data.empty() ? &none : p.data.data(), static_cast<int>(p.data.size()), MPI_BYTE, to, tag,
                  messages_, &p.request),
        "send");
}

std::optional<routing::Ranks::Message> MpiRanks::receive() {
  int flag = 0;
  MPI_Status status;
  check(MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, messages_, &flag, &status), "probe");
  if (!flag) return std::nullopt;
  int count = 0;
  check(MPI_Get_count(&status, MPI_BYTE, &count), "count");
  Message m;
  m.from = status.MPI_SOURCE;
  m.tag = status.MPI_TAG;
  m.data.resize(static_cast<std::size_t>(count));
  static std::byte none{};
  check(MPI_Recv(m.data.empty() ? &none : m.data.data(), count, MPI_BYTE, m.from, m.tag, messages_,
                 MPI_STATUS_IGNORE),
        "receive");
  return m;
}

bool MpiRanks::allSent() {
  for (auto it = pending_.begin(); it != pending_.end();) {
    int done = 0;
    check(MPI_Test(&it->request, &done, MPI_STATUS_IGNORE), "test a send");
    it = done ? pending_.erase(it) : std::next(it);
  }
  return pending_.empty();
}

void MpiRanks::enterBarrier() {
  check(MPI_Ibarrier(messages_, &barrier_), "barrier");
  in_barrier_ = true;
}

bool MpiRanks::barrierPassed() {
  if (!in_barrier_) return false;
  int done = 0;
  check(MPI_Test(&barrier_, &done, MPI_STATUS_IGNORE), "barrier");
  if (!done) return false;
  in_barrier_ = false;
  // Every rank passes here once per run: the next run talks on a fresh
  // communicator, where nothing a failed run left unreceived can reach it.
  MPI_Comm_free(&messages_);
  check(MPI_Comm_dup(MPI_COMM_WORLD, &messages_), "communicator");
  return true;
}

std::optional<routing::Ranks::Failure> MpiRanks::firstFailure(const std::optional<Failure>& mine) {
  int first = mine ? rank_ : size_;
  MPI_Request r;
  check(MPI_Iallreduce(MPI_IN_PLACE, &first, 1, MPI_INT, MPI_MIN, collective_, &r), "agree");
  waitGently(r, "agree");
  if (first == size_) return std::nullopt;
  std::vector<std::byte> text;
  int internal = 0;
  if (first == rank_) {
    internal = mine->internal ? 1 : 0;
    const auto* p = reinterpret_cast<const std::byte*>(mine->message.data());
    text.assign(p, p + mine->message.size());
  }
  broadcastBytes(&internal, 1, MPI_INT, first, collective_, "agree");
  std::uint64_t n = text.size();
  broadcastBytes(&n, 1, MPI_UINT64_T, first, collective_, "agree");
  text.resize(n);
  if (n) broadcastBytes(text.data(), static_cast<int>(std::min<std::uint64_t>(n, kChunk)), MPI_BYTE, first, collective_, "agree");
  Failure f;
  f.rank = first;
  f.internal = internal != 0;
  f.message.assign(reinterpret_cast<const char*>(text.data()), text.size());
  return f;
}

std::vector<std::vector<std::byte>> MpiRanks::gather(const std::vector<std::byte>& mine) {
  std::uint64_t n = mine.size();
  std::vector<std::uint64_t> sizes(rank_ == 0 ? static_cast<std::size_t>(size_) : 0);
  MPI_Request r;
  check(MPI_Igather(&n, 1, MPI_UINT64_T, sizes.data(), 1, MPI_UINT64_T, 0, collective_, &r), "gather");
  waitGently(r, "gather");
  if (rank_ != 0) {
    sendAll(mine.data(), mine.size(), 0, collective_);
    return {};
  }
  std::vector<std::vector<std::byte>> all(static_cast<std::size_t>(size_));
  all[0] = mine;
  for (int r = 1; r < size_; ++r) {
    all[static_cast<std::size_t>(r)].resize(sizes[static_cast<std::size_t>(r)]);
    receiveAll(all[static_cast<std::size_t>(r)].data(), all[static_cast<std::size_t>(r)].size(), r, collective_);
  }
  return all;
}

void MpiRanks::broadcast(std::vector<std::byte>& data) {
  std::uint64_t n = data.size();
  broadcastBytes(&n, 1, MPI_UINT64_T, 0, collective_, "broadcast");
  data.resize(n);
  for (std::size_t at = 0; at < n; at += kChunk)
    broadcastBytes(data.data() + at, static_cast<int>(std::min<std::size_t>(kChunk, n - at)), MPI_BYTE, 0,
                   collective_, "broadcast");
}

}  // namespace reachwise::parallel
