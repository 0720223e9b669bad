#include "reachwise/network/PlanRanking.hpp"

#include <algorithm>

namespace reachwise::network {

std::vector<double> upstreamSize(const NetworkPlan& plan) {
  std::vector<double> size(plan.size(), 1.0);
  for (std::size_t i = 0; i < plan.size(); ++i)
    for (std::uint32_t k = plan.up_offset[i]; k < plan.up_offset[i + 1]; ++k)
      size[i] += size[plan.up_reach[k]];
  return size;
}

std::vector<std::uint32_t> confluenceReaches(const NetworkPlan& plan) {
  std::vector<std::uint32_t> out;
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    if (plan.up_offset[i + 1] - plan.up_offset[i] >= 2 && !plan.isSideArmReturn(i)) out.push_back(i);
  return out;
}

std::vector<std::uint32_t> largestFirst(std::vector<std::uint32_t> candidates, const std::vector<double>& size,
                                        std::size_t limit) {
  const auto bigger = [&](std::uint32_t a, std::uint32_t b) {
    return size[a] != size[b] ? size[a] > size[b] : a < b;
  };
  if (candidates.size() > limit) {
    std::nth_element(candidates.begin(), candidates.begin() + static_cast<std::ptrdiff_t>(limit),
                     candidates.end(), bigger);
    candidates.resize(limit);
  }
  std::sort(candidates.begin(), candidates.end(), bigger);
  return candidates;
}

}  // namespace reachwise::network
