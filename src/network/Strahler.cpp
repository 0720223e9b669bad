#include "reachwise/network/Strahler.hpp"

#include <algorithm>
#include <limits>

#include "reachwise/Error.hpp"

namespace reachwise::network {

namespace {

using Vertex = ReachGraph::Vertex;
constexpr Vertex kNone = std::numeric_limits<Vertex>::max();

/// Downstream searches bounded by a topological position: is a reach
/// downstream of (or the same as) another? Downstream of a reach a network
/// is mostly one path to the outlet, so the search stays short.
class DownstreamSearch {
public:
  DownstreamSearch(const ReachGraph& graph, const std::vector<Vertex>& order)
      : graph_(graph), position_(graph.size()), seen_(graph.size(), 0) {
    for (std::uint32_t i = 0; i < order.size(); ++i) position_[order[i]] = i;
  }

  /// True when `target` is `from` or lies downstream of it.
  bool reaches(Vertex from, Vertex target) {
    ++stamp_;
    std::vector<Vertex> todo{from};
    seen_[from] = stamp_;
    while (!todo.empty()) {
      const Vertex v = todo.back();
      todo.pop_back();
      if (v == target) return true;
      for (const auto d : graph_.downstream(v)) {
        // Nothing below `target` in topological order can lead to it.
        if (seen_[d] == stamp_ || position_[d] > position_[target]) continue;
        seen_[d] = stamp_;
        todo.push_back(d);
      }
    }
    return false;
  }

private:
  const ReachGraph& graph_;
  std::vector<std::uint32_t> position_, seen_;
  std::uint32_t stamp_ = 0;
};

}  // namespace

bool arrivesAsSideArm(const ReachGraph& graph, const SideArms& arms, Vertex from, Vertex to) {
  return arms.side_arm[from] || graph.leavesAsSideArm(from, to);
}

SideArms sideArms(const ReachGraph& graph, const std::vector<Vertex>& order) {
  REACHWISE_ASSERT(order.size() == graph.size());
  SideArms arms;
  arms.side_arm.assign(graph.size(), false);
  arms.side_arm_return.assign(graph.size(), false);
  if (graph.splits().bifurcations.empty()) return arms;
  // The bifurcation each side arm left (kNone for other reaches).
  std::vector<Vertex> left(graph.size(), kNone);
  const auto origin = [&](Vertex from, Vertex to) {
    return graph.leavesAsSideArm(from, to) ? from : left[from];
  };
  DownstreamSearch search(graph, order);
  for (const auto v : order) {
    const auto up = graph.upstream(v);
    bool all_side = !up.empty();
    for (const auto u : up) all_side = all_side && arrivesAsSideArm(graph, arms, u, v);
    if (all_side) {
      arms.side_arm[v] = true;
      left[v] = origin(up.front(), v);
    }
    if (up.size() < 2) continue;
    for (const auto u : up) {
      if (!arrivesAsSideArm(graph, arms, u, v)) continue;
      const Vertex from = origin(u, v);
      for (const auto w : up)
        if (w != u && search.reaches(from, w)) arms.side_arm_return[v] = true;
      if (arms.side_arm_return[v]) break;
    }
  }
  return arms;
}

std::vector<std::uint16_t> strahlerOrder(const ReachGraph& graph, const std::vector<Vertex>& order,
                                         const SideArms& arms) {
  REACHWISE_ASSERT(order.size() == graph.size());
  // Strahler (1957): 1 at the sources; the maximum of the feeders, + 1 when
  // the maximum is reached by at least two of them, side arms not counted
  // (see the header). 0 marks "not yet seen" so that an order that is not
  // topological is caught.
  std::vector<std::uint16_t> strahler(graph.size(), 0);
  for (const auto v : order) {
    std::uint16_t highest = 0;
    int at_highest = 0;
    for (const auto u : graph.upstream(v)) {
      REACHWISE_ASSERT(strahler[u] > 0);
      const int counts = arrivesAsSideArm(graph, arms, u, v) ? 0 : 1;
      if (strahler[u] > highest) {
        highest = strahler[u];
        at_highest = counts;
      } else if (strahler[u] == highest) {
        at_highest += counts;
      }
    }
    if (highest == 0)
      strahler[v] = 1;
    else if (at_highest >= 2 && highest < std::numeric_limits<std::uint16_t>::max())
      strahler[v] = static_cast<std::uint16_t>(highest + 1);
    else
      strahler[v] = highest;
  }
  return strahler;
}

std::vector<std::uint16_t> strahlerOrder(const ReachGraph& graph, const std::vector<Vertex>& order) {
  return strahlerOrder(graph, order, sideArms(graph, order));
}

}  // namespace reachwise::network
