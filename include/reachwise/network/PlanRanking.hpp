#pragma once
/// \file
/// Ranking reaches by the size of the network above them: how the report
/// and the default hydrograph selection pick the main confluences and
/// outlets of a large network with a bounded count.

#include <cstddef>
#include <cstdint>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"

namespace reachwise::network {

/// Reaches upstream of (and including) each reach, accumulated in the
/// plan's topological order. Below a bifurcation a reach is counted once
/// per path, which only over-weights braided parts; it is a ranking, not a
/// measurement. Doubles: the counts can exceed 32 bits on braided networks.
std::vector<double> upstreamSize(const NetworkPlan& plan);

/// Plan indices of the reaches leaving a confluence (two or more reaches
/// above; the confluence is the node at their top), in plan order. A
/// side-arm return (a side arm rejoining the channel it left,
/// NetworkPlan::side_arm_return) is not a confluence here.
std::vector<std::uint32_t> confluenceReaches(const NetworkPlan& plan);

/// The `limit` of `candidates` with the largest `size`, largest first
/// (ties: lower plan index first).
std::vector<std::uint32_t> largestFirst(std::vector<std::uint32_t> candidates, const std::vector<double>& size,
                                        std::size_t limit);

}  // namespace reachwise::network
