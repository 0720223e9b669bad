#pragma once
/// \file
/// The lakes a run routed, each with its record, the reach its outflow
/// enters and its routing: what the report (and any other output) shows.

#include <cstdint>
#include <string>
#include <vector>

#include "reachwise/io/LakesWriter.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

namespace reachwise::run {

struct LoadedNetwork;

/// One lake as a run routed it (RouteSummary::lakes).
struct LakeResult {
  /// Which lake: index into `RouteSummary::network->lakes->lakes` (the
  /// lakes layer's order), and its id.
  std::size_t lake = 0;
  std::string lake_id;
  /// Plan indices (RouteSummary::plan) of the reaches flowing into it, and
  /// of those its outflow enters, with their shares (summing to 1; one
  /// reach: 1). No outflowing reach: a terminal lake, whose outflow (what
  /// it spills) leaves the network.
  std::vector<std::uint32_t> inflow_reaches, outflow_reaches;
  std::vector<double> outflow_shares;
  /// Its inflow (the sum of what arrives at it, m^3/s on the run's axis)
  /// and level-pool routing: outflow, level and storage series, volumes.
  routing::LakeRouting routing;

  bool terminal() const { return outflow_reaches.empty(); }
};


/// The routed lakes as output rows, in the lakes layer's order: each
/// lake's record, the reach(es) its outflow enters (`;`-separated, empty
/// for a terminal lake) and its routing. Empty without lakes. The rows
/// point into `net` and `lakes`, which must outlive them.
std::vector<io::LakeOutput> routedLakes(const LoadedNetwork& net, const network::NetworkPlan& plan,
                                        const std::vector<LakeResult>& lakes);

}  // namespace reachwise::run
