#pragma once
/// \file
/// Strahler stream order of every reach.
///
/// Strahler, A. N. (1957). Quantitative analysis of watershed geomorphology.
/// Transactions, American Geophysical Union 38(6), 913-920.
/// A headwater reach has order 1. Below a junction the order is the highest
/// order among the reaches that feed it, plus one when that highest order
/// arrives from two or more of them. Both branches of a bifurcation inherit
/// the order of the reach that splits.

#include <cstdint>
#include <vector>

#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::network {

/// Order per vertex. `order` must be a topological order of `graph`
/// (ReachGraph::topologicalOrder()); throws InternalError otherwise.
std::vector<std::uint16_t> strahlerOrder(const ReachGraph& graph,
                                         const std::vector<ReachGraph::Vertex>& order);

}  // namespace reachwise::network
