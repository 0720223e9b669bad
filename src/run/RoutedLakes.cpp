#include "reachwise/run/RoutedLakes.hpp"

#include "reachwise/run/Network.hpp"

namespace reachwise::run {

std::vector<io::LakeOutput> routedLakes(const LoadedNetwork& net, const network::NetworkPlan& plan,
                                        const std::vector<LakeResult>& lakes) {
  std::vector<io::LakeOutput> out;
  if (!net.lakes) return out;
  for (const LakeResult& lake : lakes) {
    std::string into;  // empty for a terminal lake
    for (const auto o : lake.outflow_reaches) into += (into.empty() ? "" : ";") + plan.reach_id[o];
    const std::uint32_t reach = lake.outflow_reaches.empty() ? ~0u : lake.outflow_reaches.front();
    out.push_back({&net.lakes->lakes[lake.lake], into, reach, &lake.routing});
  }
  return out;
}

}  // namespace reachwise::run
