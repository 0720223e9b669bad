// ReachGraph::freeze(): the graph turned into the plain arrays of NetworkPlan.
#include <algorithm>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Strahler.hpp"

namespace reachwise::network {

namespace {

constexpr double kSecondsPerHour = 3600.0;

[[noreturn]] void refuseCycle(const ReachGraph& graph) {
  const auto cycles = graph.cycles();
  REACHWISE_ASSERT(!cycles.empty());
  const auto first = cycles.front().front();
  InputLocation at;
  at.file = graph.table().source;
  at.layer = graph.table().layer;
  at.fid = graph.record(first).fid;
  at.reach_id = graph.id(first);
  throw InputError(at, "the network has a cycle through this reach; it cannot be routed");
}

void fillReach(NetworkPlan& plan, const ReachGraph& graph, ReachGraph::Vertex v,
               std::uint32_t basin, std::uint16_t strahler, bool side_arm_return) {
  const auto& r = graph.record(v);
  plan.reach_id.push_back(r.id);
  plan.fid.push_back(r.fid);
  plan.record.push_back(v);
  plan.line_id.push_back(r.line_id);
  plan.piece.push_back(r.piece);
  plan.length_m.push_back(graph.lengthM(v));
  try {
    plan.section.push_back(hydraulics::Section::fromSpec(r.section));
  } catch (const InvalidParameter& e) {
    // validate() reports a bad section first; freezing a table that was
    // not validated still names the reach.
    InputLocation at;
    at.file = graph.table().source;
    at.layer = graph.table().layer;
    at.fid = r.fid;
    at.reach_id = r.id;
    at.field = e.quantity();
    throw InputError(at, e.what());
  }
  plan.muskingum_k_s.push_back(r.muskingum_k_h * kSecondsPerHour);
  plan.muskingum_x.push_back(r.muskingum_x);
  plan.base_flow_m3s.push_back(r.base_flow_m3s);
  plan.basin.push_back(basin);
  plan.strahler.push_back(strahler);
  plan.split.push_back(graph.share(v));
  plan.side_arm_return.push_back(side_arm_return);
  plan.top.push_back(graph.top(v));
  plan.bottom.push_back(graph.bottom(v));
  plan.reversed.push_back(graph.flipped(v));
}

}  // namespace

NetworkPlan ReachGraph::freeze() const {
  const auto order = topologicalOrder();
  if (!order) refuseCycle(*this);
  const auto arms = sideArms(*this, *order);
  const auto strahler = strahlerOrder(*this, *order, arms);
  const auto basins = components();

  std::vector<std::uint32_t> position(size());
  for (std::uint32_t i = 0; i < order->size(); ++i) position[(*order)[i]] = i;

  NetworkPlan plan;
  const auto n = size();
  for (auto* column : {&plan.up_offset, &plan.down_offset}) column->reserve(n + 1);
  plan.up_offset.push_back(0);
  plan.down_offset.push_back(0);
  for (const auto v : *order) {
    fillReach(plan, *this, v, basins.basin[v], strahler[v], arms.side_arm_return[v]);

    auto up = upstream(v);
    std::sort(up.begin(), up.end(),
              [&](Vertex a, Vertex b) { return position[a] < position[b]; });
    for (const auto u : up) {
      plan.up_reach.push_back(position[u]);
      plan.up_fraction.push_back(fraction(u, v));
    }
    plan.up_offset.push_back(static_cast<std::uint32_t>(plan.up_reach.size()));

    auto down = downstream(v);
    std::sort(down.begin(), down.end(),
              [&](Vertex a, Vertex b) { return position[a] < position[b]; });
    for (const auto d : down) plan.down_reach.push_back(position[d]);
    plan.down_offset.push_back(static_cast<std::uint32_t>(plan.down_reach.size()));
  }
  return plan;
}

}  // namespace reachwise::network
