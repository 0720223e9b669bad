#include "reachwise/network/PlanPart.hpp"

#include <algorithm>
#include <limits>
#include <stdexcept>

namespace reachwise::network {

namespace {

template <class T>
void take(const std::vector<T>& from, const std::vector<std::uint32_t>& rows, std::vector<T>& to) {
  to.clear();
  if (from.empty()) return;
  to.reserve(rows.size());
  for (const auto r : rows) to.push_back(from[r]);
}

}  // namespace

PlanPart planPart(const NetworkPlan& plan, const std::vector<std::uint32_t>& reaches) {
  constexpr auto kOutside = std::numeric_limits<std::uint32_t>::max();
  std::vector<std::uint32_t> local(plan.size(), kOutside);
  for (std::size_t k = 0; k < reaches.size(); ++k) {
    if (reaches[k] >= plan.size() || (k > 0 && reaches[k] <= reaches[k - 1]))
      throw std::invalid_argument("a plan part needs sorted reach indices of the plan, without repeats");
    local[reaches[k]] = static_cast<std::uint32_t>(k);
  }
  PlanPart part;
  part.whole = reaches;
  NetworkPlan& p = part.plan;
  take(plan.reach_id, reaches, p.reach_id);
  take(plan.fid, reaches, p.fid);
  take(plan.record, reaches, p.record);
  take(plan.line_id, reaches, p.line_id);
  take(plan.piece, reaches, p.piece);
  take(plan.length_m, reaches, p.length_m);
  take(plan.section, reaches, p.section);
  take(plan.muskingum_k_s, reaches, p.muskingum_k_s);
  take(plan.muskingum_x, reaches, p.muskingum_x);
  take(plan.base_flow_m3s, reaches, p.base_flow_m3s);
  take(plan.basin, reaches, p.basin);
  take(plan.strahler, reaches, p.strahler);
  take(plan.split, reaches, p.split);
  take(plan.side_arm_return, reaches, p.side_arm_return);
  take(plan.top, reaches, p.top);
  take(plan.bottom, reaches, p.bottom);
  take(plan.reversed, reaches, p.reversed);

  p.up_offset.assign(1, 0);
  p.down_offset.assign(1, 0);
  for (std::size_t k = 0; k < reaches.size(); ++k) {
    const std::uint32_t r = reaches[k];
    for (std::uint32_t u = plan.up_offset[r]; u < plan.up_offset[r + 1]; ++u) {
      const std::uint32_t from = plan.up_reach[u];
      if (local[from] == kOutside) {
        part.boundary.push_back({static_cast<std::uint32_t>(k), from, plan.up_fraction[u]});
      } else {
        p.up_reach.push_back(local[from]);
        p.up_fraction.push_back(plan.up_fraction[u]);
      }
    }
    p.up_offset.push_back(static_cast<std::uint32_t>(p.up_reach.size()));
    for (std::uint32_t d = plan.down_offset[r]; d < plan.down_offset[r + 1]; ++d)
      if (local[plan.down_reach[d]] != kOutside) p.down_reach.push_back(local[plan.down_reach[d]]);
    p.down_offset.push_back(static_cast<std::uint32_t>(p.down_reach.size()));
  }
  return part;
}

}  // namespace reachwise::network
