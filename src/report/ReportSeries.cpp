// Choosing, before routing, the bounded set of reaches whose series the
// report draws, and keeping them as the router streams them.
#include <algorithm>
#include <numeric>

#include "reachwise/Error.hpp"
#include "reachwise/report/Report.hpp"

namespace reachwise::report {

namespace {

/// Reaches upstream of (and including) each reach, accumulated in the
/// plan's topological order. Below a bifurcation a reach is counted once
/// per path, which only over-weights braided parts; it is a ranking, not a
/// measurement. Doubles: the counts can exceed 32 bits on braided networks.
std::vector<double> upstreamSize(const network::NetworkPlan& plan) {
  std::vector<double> size(plan.size(), 1.0);
  for (std::size_t i = 0; i < plan.size(); ++i)
    for (std::uint32_t k = plan.up_offset[i]; k < plan.up_offset[i + 1]; ++k)
      size[i] += size[plan.up_reach[k]];
  return size;
}

/// The `limit` indices with the largest `size` (ties: lower plan index).
std::vector<std::uint32_t> largest(std::vector<std::uint32_t> candidates, const std::vector<double>& size,
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

}  // namespace

ReportSeries::ReportSeries(const network::NetworkPlan& plan, const routing::TimeAxis& axis)
    : plan_(plan), axis_(axis), written_(plan.size(), false) {
  REACHWISE_ASSERT(plan.up_offset.size() == plan.size() + 1);
  const std::vector<double> size = upstreamSize(plan);
  std::vector<std::uint32_t> outlets, confluences;
  for (std::uint32_t i = 0; i < plan.size(); ++i) {
    if (plan.isOutlet(i)) outlets.push_back(i);
    if (plan.up_offset[i + 1] - plan.up_offset[i] >= 2) confluences.push_back(i);
  }
  outlet_count_ = outlets.size();
  outlets_ = largest(std::move(outlets), size, kMaxOutlets);
  confluences_ = largest(std::move(confluences), size, kMaxCandidateConfluences);
  for (const std::uint32_t o : outlets_) q_[o];
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
