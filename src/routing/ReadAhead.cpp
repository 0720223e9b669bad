#include "ReadAhead.hpp"

#include <algorithm>
#include <utility>

namespace reachwise::routing {

std::vector<std::uint32_t> routingOrder(const network::NetworkPlan& plan, const std::vector<bool>& mine) {
  const std::size_t n = plan.size();
  // What a reach waits for: its upstream reaches of `mine` (the others are
  // routed elsewhere and arrive whenever they do).
  std::vector<std::uint32_t> pending(n, 0), order, stack;
  order.reserve(n);
  for (std::uint32_t i = 0; i < n; ++i)
    for (std::uint32_t k = plan.up_offset[i]; k < plan.up_offset[i + 1]; ++k)
      pending[i] += mine[plan.up_reach[k]] ? 1 : 0;
  std::vector<std::uint32_t> roots;
  for (std::uint32_t i = 0; i < n; ++i)
    if (mine[i] && pending[i] == 0) roots.push_back(i);
  for (const std::uint32_t root : roots) {
    stack.push_back(root);
    while (!stack.empty()) {
      const std::uint32_t i = stack.back();
      stack.pop_back();
      order.push_back(i);
      // The workers' own queues are last in, first out: of the reaches
      // made ready together, the last one is routed first.
      for (std::uint32_t k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k) {
        const std::uint32_t d = plan.down_reach[k];
        if (mine[d] && --pending[d] == 0) stack.push_back(d);
      }
    }
  }
  return order;
}

ForcingReadAhead::ForcingReadAhead(const ForcingProvider& inner, std::vector<std::uint32_t> order,
                                   std::size_t steps, std::size_t max_bytes)
    : inner_(inner), order_(std::move(order)), steps_(steps), max_bytes_(max_bytes),
      kinds_{inner.readsOnDemand().inflow, inner.readsOnDemand().lateral} {
  const std::size_t n = order_.empty() ? 0 : std::size_t{*std::max_element(order_.begin(), order_.end())} + 1;
  for (int k = 0; k < 2; ++k) state_[k].assign(kinds_[k] ? n : 0, Waiting);
  if (!order_.empty() && (kinds_[0] || kinds_[1])) reader_ = std::thread([this] { read(); });
}

ForcingReadAhead::~ForcingReadAhead() {
  {
    const std::lock_guard lock(mutex_);
    stop_ = true;
  }
  space_.notify_all();
  if (reader_.joinable()) reader_.join();
}

void ForcingReadAhead::read() {
  for (const std::uint32_t reach : order_) {
    for (int kind = 0; kind < 2; ++kind) {
      if (!kinds_[kind]) continue;
      {
        std::unique_lock lock(mutex_);
        // Without room for one more series (with nothing held there always
        // is), wait until half the bound is free: woken once per half the
        // bound rather than once per series handed over.
        if (held_bytes_ > 0 && held_bytes_ + bytes(true) > max_bytes_) {
          reader_waits_ = true;
          space_.wait(lock, [&] { return stop_ || held_bytes_ <= max_bytes_ / 2; });
          reader_waits_ = false;
        }
        if (stop_) return;
        if (state_[kind][reach] != Waiting) continue;  // a worker got there first
        state_[kind][reach] = Reading;
      }
      Held h;
      try {
        h.values.resize(steps_);
        h.has = readInner(kind, reach, h.values);
        if (!h.has) h.values = {};
      } catch (...) {
        h.has = false;
        h.values = {};
        h.error = std::current_exception();
      }
      bool wake;
      {
        const std::lock_guard lock(mutex_);
        held_bytes_ += bytes(h.has);
        held_[kind].emplace(reach, std::move(h));
        state_[kind][reach] = Ready;
        wake = waiting_ > 0;
      }
      if (wake) ready_.notify_all();
    }
  }
}

bool ForcingReadAhead::readInner(int kind, std::uint32_t reach, std::span<double> out) const {
  return kind == 0 ? inner_.inflow(reach, out) : inner_.lateral(reach, out);
}

bool ForcingReadAhead::take(int kind, std::uint32_t reach, std::span<double> out) const {
  if (!kinds_[kind] || reach >= state_[kind].size()) return readInner(kind, reach, out);
  std::unique_lock lock(mutex_);
  State& st = state_[kind][reach];
  if (st == Reading) {  // the reading thread has it in hand
    ++waiting_;
    ready_.wait(lock, [&] { return st != Reading; });
    --waiting_;
  }
  if (st != Ready) {  // not read yet (it no longer will be), or asked again
    st = Gone;
    ++counts_.on_demand;
    lock.unlock();
    return readInner(kind, reach, out);
  }
  const auto it = held_[kind].find(reach);
  Held h = std::move(it->second);
  held_[kind].erase(it);
  held_bytes_ -= bytes(h.has);
  st = Gone;
  ++counts_.ahead;
  const bool wake = reader_waits_ && held_bytes_ <= max_bytes_ / 2;
  lock.unlock();
  if (wake) space_.notify_one();
  if (h.error) std::rethrow_exception(h.error);
  if (!h.has) {
    std::fill(out.begin(), out.end(), 0.0);
    return false;
  }
  std::copy(h.values.begin(), h.values.end(), out.begin());
  return true;
}

bool ForcingReadAhead::inflow(std::uint32_t reach, std::span<double> out) const { return take(0, reach, out); }
bool ForcingReadAhead::lateral(std::uint32_t reach, std::span<double> out) const { return take(1, reach, out); }

ForcingReadAhead::Counts ForcingReadAhead::counts() const {
  const std::lock_guard lock(mutex_);
  return counts_;
}

}  // namespace reachwise::routing
