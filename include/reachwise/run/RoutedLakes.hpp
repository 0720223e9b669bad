#pragma once
/// \file
/// The lakes a run routed, each with its record, the reach its outflow
/// enters and its routing: what the report (and any other output) shows.

#include <vector>

#include "reachwise/io/LakesWriter.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

namespace reachwise::run {

struct LoadedNetwork;

/// The routed lakes of `net` in the lakes layer's order, from `lakes` as
/// routing::routeNetwork filled it (RouteSummary::lakes). The one place
/// that knows how those results are indexed: today by the plan index of
/// the reach whose top holds the lake (its one outflowing reach). Lakes
/// not routed are left out; empty without lakes. The entries point into
/// `net` and `lakes`, which must outlive them.
std::vector<io::LakeOutput> routedLakes(const LoadedNetwork& net, const network::NetworkPlan& plan,
                                        const std::vector<routing::LakeRouting>& lakes);

}  // namespace reachwise::run
