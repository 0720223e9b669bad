#include "reachwise/run/RoutedLakes.hpp"

#include "reachwise/Error.hpp"
#include "reachwise/run/Network.hpp"

namespace reachwise::run {

std::vector<io::LakeOutput> routedLakes(const LoadedNetwork& net, const network::NetworkPlan& plan,
                                        const std::vector<routing::LakeRouting>& lakes) {
  std::vector<io::LakeOutput> out;
  if (!net.lakes || lakes.empty()) return out;
  REACHWISE_ASSERT(lakes.size() == plan.size());
  REACHWISE_ASSERT(net.lake_links.size() == net.lakes->lakes.size());
  for (std::size_t l = 0; l < net.lakes->lakes.size(); ++l) {
    const auto& links = net.lake_links[l];
    if (links.outflow.size() != 1) continue;
    const std::uint32_t o = links.outflow.front();  // a lake_plan index: the same order as `plan`
    if (o >= lakes.size() || !lakes[o].routed) continue;
    out.push_back({&net.lakes->lakes[l], plan.reach_id[o], &lakes[o]});
  }
  return out;
}

}  // namespace reachwise::run
