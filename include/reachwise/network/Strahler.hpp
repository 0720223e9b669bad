#pragma once
/// \file
/// Strahler stream order of every reach, and the side arms of braided
/// channels that it leaves out.
///
/// Strahler, A. N. (1957). Quantitative analysis of watershed geomorphology.
/// Transactions, American Geophysical Union 38(6), 913-920.
/// A headwater reach has order 1. Below a junction the order is the highest
/// order among the reaches that feed it, plus one when that highest order
/// arrives from two or more of them. Both branches of a bifurcation inherit
/// the order of the reach that splits.
///
/// Side arms: the main branch of a bifurcation is the one with the largest
/// share (BifurcationShares::main); every other branch is a side arm, and
/// so is each reach below it until it meets a channel that is not a side
/// arm (a reach is a side arm when everything flowing into it arrives as a
/// side arm). Inflows arriving as side arms do not count towards the "two
/// of the highest order" rule, so a braid that rejoins its channel does not
/// raise the order (a channel that splits and rejoins is still one stream).

#include <cstdint>
#include <vector>

#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::network {

struct SideArms {
  std::vector<bool> side_arm;          ///< per vertex: the reach is a side arm
  /// Per vertex: the node at its top is a confluence where a side arm
  /// rejoins the channel it left (a side-arm inflow and another inflow
  /// both trace upstream to the same bifurcation).
  std::vector<bool> side_arm_return;
};

/// Side arms per vertex. `order` must be a topological order of `graph`.
SideArms sideArms(const ReachGraph& graph, const std::vector<ReachGraph::Vertex>& order);

/// True when the outflow of `from` arrives in `to` as a side arm: `from` is
/// a side arm, or `to` is a side-arm branch of `from`. Precondition: a link from→to.
bool arrivesAsSideArm(const ReachGraph& graph, const SideArms& arms, ReachGraph::Vertex from,
                      ReachGraph::Vertex to);

/// Order per vertex. `order` must be a topological order of `graph`
/// (ReachGraph::topologicalOrder()); throws InternalError otherwise.
std::vector<std::uint16_t> strahlerOrder(const ReachGraph& graph,
                                         const std::vector<ReachGraph::Vertex>& order,
                                         const SideArms& arms);
/// The same, finding the side arms first.
std::vector<std::uint16_t> strahlerOrder(const ReachGraph& graph,
                                         const std::vector<ReachGraph::Vertex>& order);

}  // namespace reachwise::network
