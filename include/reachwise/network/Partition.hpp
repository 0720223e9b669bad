#pragma once
/// \file
/// Cutting a network plan into parts of similar work and giving the parts
/// to ranks (processes routing one network together, routing/Ranks.hpp).
///
/// Parts grow down the plan: a reach joins the part of the reaches above
/// it; at a confluence the parts above merge while their work stays within
/// the target (the total over ranks × parts_per_rank), else they are
/// closed there and the reach below starts a new part. A basin smaller
/// than the target therefore stays whole; a larger one is cut at
/// confluences only (never along a chain of reaches, never between the
/// outflowing reaches of one lake: `together`). The parts then go to the
/// ranks largest first, each to the rank with the least work so far
/// (longest-processing-time-first, Graham 1969, "Bounds on multiprocessing
/// timing anomalies", SIAM J. Appl. Math. 17(2)).
///
/// Work is counted as one unit per reach: a reach's grid (its cells per
/// step) is chosen only when it is routed, from the flows that reach it.

#include <cstddef>
#include <cstdint>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"

namespace reachwise::network {

struct Partition {
  std::vector<std::uint32_t> part;    ///< per reach: its part
  std::vector<int> owner;             ///< per reach: the rank that routes it
  std::vector<double> part_work;      ///< per part
  std::vector<int> part_rank;         ///< per part: its rank
  std::vector<double> rank_work;      ///< per rank
  /// Links (upstream reach -> downstream reach) between two ranks, and the
  /// series they send: one per upstream reach and receiving rank.
  std::size_t cut_links = 0;
  std::size_t messages = 0;
  /// Most work on one rank over the mean (1 = perfect balance).
  double imbalance() const;
};

/// The partition of `plan` over `ranks` ranks (>= 1). `together`: groups
/// of reaches (plan indices) that must share a rank, e.g. a lake's
/// outflowing reaches. Deterministic: the same plan gives the same
/// partition.
Partition partitionPlan(const NetworkPlan& plan, int ranks,
                        const std::vector<std::vector<std::uint32_t>>& together = {}, int parts_per_rank = 4);

}  // namespace reachwise::network
