#pragma once
/// \file
/// Processes that route one network together, each owning a part of the
/// plan (MPI ranks: parallel/MpiRanks.hpp). The router and the run layer
/// see only this interface, so that the library builds without MPI.
///
/// Every call is made from the thread that created the object (MPI's
/// "funneled" threading level). The collectives (firstFailure, gather,
/// broadcast) must be called by every rank in the same order.

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <exception>
#include <functional>
#include <optional>
#include <span>
#include <stdexcept>
#include <string>
#include <type_traits>
#include <vector>

namespace reachwise::routing {

class Ranks {
public:
  struct Message {
    int from = 0;
    int tag = 0;
    std::vector<std::byte> data;
  };
  /// What went wrong on a rank: its message and whether it was a bug
  /// (InternalError) rather than bad input.
  struct Failure {
    int rank = 0;
    bool internal = false;
    std::string message;
  };

  virtual ~Ranks() = default;
  virtual int rank() const = 0;
  virtual int size() const = 0;
  /// Ranks on this machine (this one included): the default worker
  /// threads per rank are the cores shared among them.
  virtual int onThisMachine() const = 0;

  /// Sends `data` to rank `to` without waiting for it to be received (the
  /// bytes are kept until then).
  virtual void send(int to, int tag, std::vector<std::byte> data) = 0;
  /// A message that has arrived, if any; does not wait.
  virtual std::optional<Message> receive() = 0;
  /// True once every message sent has been received.
  virtual bool allSent() = 0;
  /// A barrier that does not block: enter, then poll until it is passed
  /// (every rank has entered). Messages keep flowing meanwhile.
  virtual void enterBarrier() = 0;
  virtual bool barrierPassed() = 0;

  /// Collective: the failure of the lowest rank that reports one (`mine`
  /// on this rank), on every rank; nothing when no rank failed.
  virtual std::optional<Failure> firstFailure(const std::optional<Failure>& mine) = 0;
  /// Collective: every rank's bytes, in rank order, at rank 0 (empty
  /// elsewhere).
  virtual std::vector<std::vector<std::byte>> gather(const std::vector<std::byte>& mine) = 0;
  /// Collective: rank 0's `data` on every rank.
  virtual void broadcast(std::vector<std::byte>& data) = 0;
};

/// Bytes for messages between ranks: plain values, series and texts,
/// read back in the order written (by the same program on every rank).
class ByteWriter {
public:
  template <typename T>
  void put(const T& v) {
    static_assert(std::is_trivially_copyable_v<T>);
    const auto* p = reinterpret_cast<const std::byte*>(&v);
    bytes.insert(bytes.end(), p, p + sizeof(T));
  }
  template <typename T>
  void put(std::span<const T> v) {
    static_assert(std::is_trivially_copyable_v<T>);
    put(static_cast<std::uint64_t>(v.size()));
    const auto* p = reinterpret_cast<const std::byte*>(v.data());
    bytes.insert(bytes.end(), p, p + v.size_bytes());
  }
  template <typename T>
  void put(const std::vector<T>& v) {
    put(std::span<const T>(v));
  }
  void put(const std::string& s) { put(std::span<const char>(s.data(), s.size())); }
  std::vector<std::byte> bytes;
};

class ByteReader {
public:
  explicit ByteReader(const std::vector<std::byte>& b) : b_(b) {}
  template <typename T>
  T get() {
    static_assert(std::is_trivially_copyable_v<T>);
    T v;
    need(sizeof(T));
    std::memcpy(&v, b_.data() + at_, sizeof(T));
    at_ += sizeof(T);
    return v;
  }
  template <typename T = double>
  std::vector<T> series() {
    const auto n = get<std::uint64_t>();
    need(n * sizeof(T));
    std::vector<T> v(n);
    if (n) std::memcpy(v.data(), b_.data() + at_, n * sizeof(T));
    at_ += n * sizeof(T);
    return v;
  }
  std::string text() {
    const std::vector<char> c = series<char>();
    return std::string(c.begin(), c.end());
  }
  bool done() const { return at_ == b_.size(); }

private:
  void need(std::size_t n) const {
    if (n > b_.size() - at_) throw std::length_error("a message between ranks ended early");
  }
  const std::vector<std::byte>& b_;
  std::size_t at_ = 0;
};

/// The failure an exception stands for, on rank `rank`.
Ranks::Failure failureOf(const std::exception_ptr& error, int rank);
/// Throws `f` as an error (InternalError for a bug) with its message.
[[noreturn]] void throwFailure(const Ranks::Failure& f);

/// Runs `step` on every rank (`ranks` null or of one rank: just runs it).
/// When it throws on any rank, every rank throws: its own error, or the
/// first failing rank's (throwFailure). A collective.
void onEveryRank(Ranks* ranks, const std::function<void()>& step);

/// Which rank routes each reach (by plan index) and the ranks themselves,
/// for routing::routeNetwork (NetworkRouteOptions::distribution).
struct Distribution {
  Ranks* ranks = nullptr;
  std::vector<int> owner;   ///< per reach: the rank that routes it
};

}  // namespace reachwise::routing
