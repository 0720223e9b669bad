// Choosing, before routing, the bounded set of reaches whose series the
// report draws, and keeping them as the router streams them.
#include <algorithm>
#include <numeric>

#include "reachwise/Error.hpp"
#include "reachwise/network/PlanRanking.hpp"
#include "reachwise/report/Report.hpp"

namespace reachwise::report {


ReportSeries::ReportSeries(const network::NetworkPlan& plan, const routing::TimeAxis& axis,
                           std::vector<std::uint32_t> named)
    : plan_(plan), axis_(axis), named_(std::move(named)), written_(plan.size(), false) {
  for (const std::uint32_t r : named_) REACHWISE_ASSERT(r < plan.size());
  REACHWISE_ASSERT(plan.up_offset.size() == plan.size() + 1);
  const std::vector<double> size = network::upstreamSize(plan);
  std::vector<std::uint32_t> outlets;
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    if (plan.isOutlet(i)) outlets.push_back(i);
  outlet_count_ = outlets.size();
  outlets_ = network::largestFirst(std::move(outlets), size, kMaxOutlets);
  confluences_ = network::largestFirst(network::confluenceReaches(plan), size, kMaxCandidateConfluences);
  for (const std::uint32_t o : outlets_) q_[o];
  for (const std::uint32_t r : named_) q_[r];
  for (const std::uint32_t c : confluences_) {
    q_[c];
    for (std::uint32_t k = plan.up_offset[c]; k < plan.up_offset[c + 1]; ++k) q_[plan.up_reach[k]];
  }
}

void ReportSeries::write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double>,
                         std::span<const double>) {
  const std::lock_guard<std::mutex> lock(mutex_);
  const auto it = q_.find(reach);
  if (it == q_.end()) return;
  it->second.assign(q_m3s.begin(), q_m3s.end());
  written_[reach] = true;
}

std::span<const double> ReportSeries::series(std::uint32_t reach) const {
  const std::lock_guard<std::mutex> lock(mutex_);
  const auto it = q_.find(reach);
  if (it == q_.end()) return {};
  return {it->second.data(), it->second.size()};
}

bool ReportSeries::has(std::uint32_t reach) const {
  const std::lock_guard<std::mutex> lock(mutex_);
  return reach < written_.size() && written_[reach];
}

}  // namespace reachwise::report
