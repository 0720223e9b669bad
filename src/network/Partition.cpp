#include "reachwise/network/Partition.hpp"

#include <algorithm>
#include <numeric>
#include <stdexcept>

namespace reachwise::network {

namespace {

/// Disjoint sets over reaches (union by size, path halving).
class Sets {
public:
  explicit Sets(std::size_t n) : parent_(n), size_(n, 1) { std::iota(parent_.begin(), parent_.end(), 0u); }
  std::uint32_t find(std::uint32_t x) {
    while (parent_[x] != x) x = parent_[x] = parent_[parent_[x]];
    return x;
  }
  /// Joins the sets of a and b; returns the new root.
  std::uint32_t join(std::uint32_t a, std::uint32_t b) {
    a = find(a), b = find(b);
    if (a == b) return a;
    if (size_[a] < size_[b]) std::swap(a, b);
    parent_[b] = a;
    size_[a] += size_[b];
    return a;
  }
  std::uint32_t size(std::uint32_t x) { return size_[find(x)]; }

private:
  std::vector<std::uint32_t> parent_, size_;
};

}  // namespace

double Partition::imbalance() const {
  if (rank_work.empty()) return 1;
  const double total = std::accumulate(rank_work.begin(), rank_work.end(), 0.0);
  if (total <= 0) return 1;
  return *std::max_element(rank_work.begin(), rank_work.end()) / (total / static_cast<double>(rank_work.size()));
}

Partition partitionPlan(const NetworkPlan& plan, int ranks, const std::vector<std::vector<std::uint32_t>>& together,
                        int parts_per_rank) {
  if (ranks < 1) throw std::invalid_argument("partitionPlan: at least one rank");
  const std::size_t n = plan.size();
  Partition out;
  out.part.assign(n, 0);
  out.owner.assign(n, 0);
  out.rank_work.assign(static_cast<std::size_t>(ranks), 0.0);
  if (n == 0) return out;

  // Parts grow down the plan (upstream reaches come first in it). A part is
  // a set; `closed` marks a set's root once a confluence closed it.
  const double target = std::max(1.0, static_cast<double>(n) / (static_cast<double>(ranks) * std::max(parts_per_rank, 1)));
  Sets sets(n);
  std::vector<bool> closed(n, false);
  std::vector<std::uint32_t> open;
  for (std::uint32_t i = 0; i < n; ++i) {
    open.clear();
    for (std::uint32_t k = plan.up_offset[i]; k < plan.up_offset[i + 1]; ++k) {
      const std::uint32_t root = sets.find(plan.up_reach[k]);
      if (!closed[root] && std::find(open.begin(), open.end(), root) == open.end()) open.push_back(root);
    }
    if (open.size() == 1) {
      sets.join(open.front(), i);
    } else if (open.size() > 1) {
      double work = 1;
      for (const std::uint32_t r : open) work += sets.size(r);
      if (work <= target) {
        for (const std::uint32_t r : open) sets.join(r, i);
      } else {
        for (const std::uint32_t r : open) closed[r] = true;
      }
    }
    // A set whose root moved keeps its closed mark on the new root.
    const std::uint32_t root = sets.find(i);
    if (root != i && closed[i]) closed[root] = true;
  }
  for (const auto& group : together)
    for (std::size_t k = 1; k < group.size(); ++k) {
      if (group[k] >= n || group.front() >= n) throw std::invalid_argument("partitionPlan: reach outside the plan");
      sets.join(group.front(), group[k]);
    }

  // Parts numbered by their first reach in the plan.
  std::vector<std::uint32_t> id_of_root(n, UINT32_MAX);
  for (std::uint32_t i = 0; i < n; ++i) {
    const std::uint32_t root = sets.find(i);
    if (id_of_root[root] == UINT32_MAX) {
      id_of_root[root] = static_cast<std::uint32_t>(out.part_work.size());
      out.part_work.push_back(0);
    }
    out.part[i] = id_of_root[root];
    out.part_work[out.part[i]] += 1;
  }

  // Largest part first, to the rank with the least work (ties: the lower
  // part, the lower rank).
  std::vector<std::uint32_t> order(out.part_work.size());
  std::iota(order.begin(), order.end(), 0u);
  std::stable_sort(order.begin(), order.end(),
                   [&](std::uint32_t a, std::uint32_t b) { return out.part_work[a] > out.part_work[b]; });
  out.part_rank.assign(out.part_work.size(), 0);
  for (const std::uint32_t p : order) {
    const auto least = std::min_element(out.rank_work.begin(), out.rank_work.end());
    out.part_rank[p] = static_cast<int>(least - out.rank_work.begin());
    *least += out.part_work[p];
  }
  for (std::uint32_t i = 0; i < n; ++i) out.owner[i] = out.part_rank[out.part[i]];

  std::vector<int> told;
  for (std::uint32_t u = 0; u < n; ++u) {
    told.clear();
    for (std::uint32_t k = plan.down_offset[u]; k < plan.down_offset[u + 1]; ++k) {
      const int to = out.owner[plan.down_reach[k]];
      if (to == out.owner[u]) continue;
      ++out.cut_links;
      if (std::find(told.begin(), told.end(), to) == told.end()) told.push_back(to);
    }
    out.messages += told.size();
  }
  return out;
}

}  // namespace reachwise::network
