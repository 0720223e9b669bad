#pragma once
/// \file
/// Counts that describe a reach network at a glance (what `reachwise check` prints).

#include <cstddef>
#include <cstdint>

#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::network {

struct NetworkSummary {
  std::size_t reaches = 0;
  std::size_t links = 0;
  std::size_t headwaters = 0;
  std::size_t confluences = 0;    ///< reaches with >= 2 upstream reaches, side-arm returns not counted
  std::size_t side_arm_returns = 0;  ///< where a side arm rejoins the channel it left (see Strahler.hpp)
  std::size_t bifurcations = 0;   ///< reaches with >= 2 downstream reaches
  std::size_t outlets = 0;
  std::size_t basins = 0;         ///< weakly connected components
  std::size_t cycles = 0;
  double total_length_km = 0;     ///< sum of reach lengths (NaN lengths skipped)
  std::uint16_t max_strahler = 0; ///< 0 when the graph has a cycle
};

NetworkSummary summarize(const ReachGraph& graph);

}  // namespace reachwise::network
