#pragma once
/// \file
/// Forcing read ahead of the routing that needs it (private to routing):
/// one thread of its own reads the series a provider reads from a file on
/// demand (ForcingProvider::readsOnDemand), in the order the router expects
/// to route the reaches, and holds them, within a bound, until a worker asks.
/// The workers then copy a series from memory instead of each reading the
/// file in turn under the file library's one lock.

#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <exception>
#include <mutex>
#include <span>
#include <thread>
#include <unordered_map>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

namespace reachwise::routing {

/// The order in which one thread would route the reaches of `plan` for which
/// `mine` is true: headwaters in plan order, each followed, depth first, by
/// the reaches below it that it leaves with nothing more to wait for (the
/// last of their upstream reaches). The workers take headwaters in plan
/// order and what they make ready first, so on several threads the order is
/// this one, interleaved. Every reach of `mine` appears once; one whose
/// upstream reaches are all another rank's counts as a headwater (it comes
/// when their outflows do, so its series may wait in memory or, once the
/// bound is full, be read when asked).
std::vector<std::uint32_t> routingOrder(const network::NetworkPlan& plan, const std::vector<bool>& mine);

class ForcingReadAhead final : public ForcingProvider {
public:
  /// Held at most, as series of 8-byte values (and a few bytes for each
  /// series found empty): thousands of reaches' series at 720 steps, some
  /// hundreds at 8,760, ahead of workers that ask in about the order read.
  static constexpr std::size_t kDefaultMaxBytes = std::size_t{16} << 20;

  /// Starts the reading thread. `inner` must outlive this object; `order`
  /// lists the reaches in the order they will about be asked for (each
  /// once); `steps` is the length of every series.
  ForcingReadAhead(const ForcingProvider& inner, std::vector<std::uint32_t> order, std::size_t steps,
                   std::size_t max_bytes = kDefaultMaxBytes);
  /// Stops the reading thread (it finishes the series it is reading).
  ~ForcingReadAhead() override;
  ForcingReadAhead(const ForcingReadAhead&) = delete;
  ForcingReadAhead& operator=(const ForcingReadAhead&) = delete;

  /// A series read ahead is handed over once (and its error, if reading it
  /// failed, thrown then, as the inner provider would have); asked again,
  /// or before the thread got to it, the inner provider reads it.
  bool inflow(std::uint32_t reach, std::span<double> out) const override;
  bool lateral(std::uint32_t reach, std::span<double> out) const override;
  ReadsOnDemand readsOnDemand() const override { return {}; }

  /// Series handed over from memory, and series the inner provider read
  /// because they were not there (kinds it reads on demand only).
  struct Counts {
    std::size_t ahead = 0, on_demand = 0;
  };
  Counts counts() const;

private:
  enum State : std::uint8_t { Waiting, Reading, Ready, Gone };
  struct Held {
    bool has = false;
    std::vector<double> values;
    std::exception_ptr error;
  };
  bool take(int kind, std::uint32_t reach, std::span<double> out) const;
  bool readInner(int kind, std::uint32_t reach, std::span<double> out) const;
  void read();
  /// What a series counts against the bound: its values, if it has any,
  /// and kOverhead for every series held, also one found empty.
  std::size_t bytes(bool has) const { return kOverhead + (has ? steps_ * sizeof(double) : 0); }
  static constexpr std::size_t kOverhead = 64;

  const ForcingProvider& inner_;
  const std::vector<std::uint32_t> order_;
  const std::size_t steps_, max_bytes_;
  const bool kinds_[2];  // read ahead: inflow, lateral
  mutable std::mutex mutex_;
  mutable std::condition_variable space_, ready_;
  mutable std::vector<State> state_[2];                       // by reach
  mutable std::unordered_map<std::uint32_t, Held> held_[2];  // by reach
  mutable std::size_t held_bytes_ = 0, waiting_ = 0;  // waiting_: workers waiting for a series being read
  bool reader_waits_ = false;  // for room
  mutable Counts counts_;
  bool stop_ = false;
  std::thread reader_;
};

}  // namespace reachwise::routing
