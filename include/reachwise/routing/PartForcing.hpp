#pragma once
/// \file
/// Forcing for a part of a plan (network::PlanPart): the whole plan's
/// forcing of each reach of the part, and, at the part's boundary, the
/// outflow of the reaches just above it (their shares) added to the top
/// inflow, so that routing the part alone gives what the whole plan gives
/// on its reaches.

#include <cstdint>
#include <functional>
#include <span>
#include <vector>

#include "reachwise/network/PlanPart.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

namespace reachwise::routing {

class PartForcing final : public ForcingProvider {
public:
  /// `whole`: the whole plan's forcing; `outflow(from)`: the outflow of
  /// whole-plan reach `from` on the run's axis, asked once per boundary
  /// link here (the series must outlive this object). `whole` and `part`
  /// must outlive it too.
  PartForcing(const ForcingProvider& whole, const network::PlanPart& part,
              const std::function<const std::vector<double>&(std::uint32_t from)>& outflow);
  bool inflow(std::uint32_t reach, std::span<double> out) const override;
  bool lateral(std::uint32_t reach, std::span<double> out) const override;

private:
  struct Link {
    const std::vector<double>* q = nullptr;
    double fraction = 1;
  };
  const ForcingProvider& whole_;
  const network::PlanPart& part_;
  std::vector<std::uint32_t> offset_;  ///< CSR over links_, by part reach
  std::vector<Link> links_;
};

}  // namespace reachwise::routing
