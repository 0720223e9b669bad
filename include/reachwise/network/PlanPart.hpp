#pragma once
/// \file
/// A part of a network plan routed on its own: a chosen set of reaches,
/// with the outflow of the reaches just above it (outside the part) handed
/// in at its boundary. Routing the part with those outflows as extra top
/// inflow gives what routing the whole plan gives on the part's reaches
/// (to round-off: the sum at a boundary node is taken in another order).

#include <cstdint>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"

namespace reachwise::network {

struct PlanPart {
  /// The part as a plan of its own: the chosen reaches in their order in
  /// the whole plan (so still topological), links between them kept,
  /// links to reaches outside dropped. Every per-reach column the whole
  /// plan has is carried (empty columns stay empty).
  NetworkPlan plan;
  /// Part index -> index in the whole plan.
  std::vector<std::uint32_t> whole;
  /// A link into the part from a reach outside it: part reach `reach`
  /// takes `fraction` of the outflow of whole-plan reach `from`.
  struct Inflow {
    std::uint32_t reach = 0;
    std::uint32_t from = 0;
    double fraction = 1;
  };
  std::vector<Inflow> boundary;  ///< in part order, then upstream order
};

/// The part of `plan` made of `reaches` (whole-plan indices, sorted,
/// without repeats; throws std::invalid_argument otherwise).
PlanPart planPart(const NetworkPlan& plan, const std::vector<std::uint32_t>& reaches);

}  // namespace reachwise::network
