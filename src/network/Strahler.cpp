#include "reachwise/network/Strahler.hpp"

#include <algorithm>
#include <limits>

#include "reachwise/Error.hpp"

namespace reachwise::network {

std::vector<std::uint16_t> strahlerOrder(const ReachGraph& graph,
                                         const std::vector<ReachGraph::Vertex>& order) {
  REACHWISE_ASSERT(order.size() == graph.size());
  // Strahler (1957): 1 at the sources; the maximum of the feeders, + 1 when
  // the maximum is reached by at least two of them. 0 marks "not yet seen"
  // so that an order that is not topological is caught.
  std::vector<std::uint16_t> strahler(graph.size(), 0);
  for (const auto v : order) {
    std::uint16_t highest = 0;
    int at_highest = 0;
    for (const auto u : graph.upstream(v)) {
      REACHWISE_ASSERT(strahler[u] > 0);
      if (strahler[u] > highest) {
        highest = strahler[u];
        at_highest = 1;
      } else if (strahler[u] == highest) {
        ++at_highest;
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

}  // namespace reachwise::network
