#include "reachwise/routing/PartForcing.hpp"

#include <algorithm>

#include "reachwise/Error.hpp"

namespace reachwise::routing {

PartForcing::PartForcing(const ForcingProvider& whole, const network::PlanPart& part,
                         const std::function<const std::vector<double>&(std::uint32_t from)>& outflow)
    : whole_(whole), part_(part), offset_(part.plan.size() + 1, 0) {
  for (const auto& b : part.boundary) ++offset_[b.reach + 1];
  for (std::size_t i = 1; i < offset_.size(); ++i) offset_[i] += offset_[i - 1];
  links_.resize(part.boundary.size());
  std::vector<std::uint32_t> fill(offset_.begin(), offset_.end() - 1);
  for (const auto& b : part.boundary) links_[fill[b.reach]++] = {&outflow(b.from), b.fraction};
}

bool PartForcing::inflow(std::uint32_t reach, std::span<double> out) const {
  const bool has = whole_.inflow(part_.whole[reach], out);
  if (offset_[reach] == offset_[reach + 1]) return has;
  if (!has) std::fill(out.begin(), out.end(), 0.0);
  for (std::uint32_t k = offset_[reach]; k < offset_[reach + 1]; ++k) {
    const Link& link = links_[k];
    REACHWISE_ASSERT(link.q->size() == out.size());
    for (std::size_t n = 0; n < out.size(); ++n) out[n] += link.fraction * (*link.q)[n];
  }
  return true;
}

bool PartForcing::lateral(std::uint32_t reach, std::span<double> out) const {
  return whole_.lateral(part_.whole[reach], out);
}

}  // namespace reachwise::routing
