#include "reachwise/network/NetworkSummary.hpp"

#include <algorithm>
#include <cmath>

#include "reachwise/network/Strahler.hpp"

namespace reachwise::network {

NetworkSummary summarize(const ReachGraph& graph) {
  NetworkSummary s;
  s.reaches = graph.size();
  s.links = graph.linkCount();
  for (ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    const auto up = graph.upstreamCount(v), down = graph.downstreamCount(v);
    s.headwaters += up == 0;
    s.confluences += up >= 2;
    s.outlets += down == 0;
    s.bifurcations += down >= 2;
    const double length_m = graph.lengthM(v);
    if (std::isfinite(length_m)) s.total_length_km += length_m / 1000.0;
  }
  s.basins = graph.components().count;
  s.cycles = graph.cycles().size();
  if (const auto order = graph.topologicalOrder()) {
    const auto arms = sideArms(graph, *order);
    const auto strahler = strahlerOrder(graph, *order, arms);
    if (!strahler.empty()) s.max_strahler = *std::max_element(strahler.begin(), strahler.end());
    s.side_arm_returns = static_cast<std::size_t>(
        std::count(arms.side_arm_return.begin(), arms.side_arm_return.end(), true));
    s.confluences -= s.side_arm_returns;
  }
  return s;
}

}  // namespace reachwise::network
