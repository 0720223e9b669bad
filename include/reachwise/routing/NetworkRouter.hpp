#pragma once
/// \file
/// Routing a whole network: reaches in topological order, confluence inflow
/// as the sum of upstream outflows (their shares below a bifurcation) plus
/// point inflow, lateral inflow along each reach. Independent sub-trees run
/// in parallel (oneTBB); the result does not depend on the thread count,
/// because every reach sums its inputs in the plan's fixed order.

#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <optional>
#include <span>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/LevelPool.hpp"
#include "reachwise/routing/Ranks.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "reachwise/routing/Results.hpp"

namespace reachwise::routing {

/// Forcing per reach (plan index) on the run's time axis. Must be safe to
/// call from several threads at once. Returning false means "none" (zero).
class ForcingProvider {
public:
  virtual ~ForcingProvider() = default;
  /// Point inflow at the top of the reach, m^3/s.
  virtual bool inflow(std::uint32_t reach, std::span<double> out) const = 0;
  /// Total lateral inflow along the reach, m^3/s.
  virtual bool lateral(std::uint32_t reach, std::span<double> out) const = 0;
  /// Which kinds are read from a file as they are asked for (one reader at
  /// a time): the router then reads them ahead, on a thread of its own, in
  /// the order it expects to route the reaches.
  struct ReadsOnDemand {
    bool inflow = false, lateral = false;
  };
  virtual ReadsOnDemand readsOnDemand() const { return {}; }
};

/// Forcing held in memory, by plan index (an empty vector = none).
class MemoryForcing : public ForcingProvider {
public:
  std::vector<std::vector<double>> inflow_m3s, lateral_m3s;
  bool inflow(std::uint32_t reach, std::span<double> out) const override;
  bool lateral(std::uint32_t reach, std::span<double> out) const override;
};

/// One lake as the network routed it: the inflow it took (m^3/s, on the
/// run's axis) and its level-pool routing (outflow, level and storage
/// series, volumes).
struct LakeRouting {
  bool routed = false;
  std::vector<double> inflow_m3s;
  LevelPoolResult result;
};

/// A lake on a node of the network (NetworkRouteOptions::lakes).
///
/// With outflowing reaches, the lake sits at their top: it takes
/// everything the plan brings there (the upstream reaches' outflows, their
/// fractions, summed over all its outflowing reaches, plus the point
/// inflow at the top of each of them) and each outflowing reach k takes
/// `outflow_shares[k]` of the lake's outflow as its top inflow. Every
/// outflowing reach must have the same upstream reaches (the lake's
/// inflowing reaches). With none, the lake is terminal: it takes the
/// outflows of `inflow_reaches` (outlets of the plan) and what it lets out
/// leaves the network.
struct NetworkLake {
  const LevelPool* pool = nullptr;               ///< must outlive the call
  std::vector<std::uint32_t> outflow_reaches;    ///< plan indices; empty: a terminal lake
  std::vector<double> outflow_shares;            ///< per outflowing reach, >= 0, summing to 1 (within 1e-6)
  /// Plan indices of the reaches flowing in. Routing reads it for a
  /// terminal lake only (they must be outlets); otherwise informative.
  std::vector<std::uint32_t> inflow_reaches;
  /// Level at the start; NaN: the steady state of the first inflow.
  double initial_level_m = std::numeric_limits<double>::quiet_NaN();
  /// Storage at the start (m^3), e.g. a saved state's; wins over the level.
  std::optional<double> initial_storage_m3 = std::nullopt;
  /// Sub-steps per step (a saved state's); 0: chosen by LevelPool::route.
  std::size_t substeps = 0;
};

struct NetworkRouteOptions {
  RouteOptions reach;            ///< method, scheme, forced grid (applies to every reach)
  unsigned threads = 0;          ///< 0 = all cores; more than the cores: as many as the cores
  /// Constant base flow per reach (m^3/s, by plan index), added to its
  /// lateral inflow; empty = none. The steady initial state accumulates it
  /// down the network.
  std::vector<double> base_flow_m3s;
  /// Called with (reaches routed, total) about 200 times over a run and
  /// once at the end, from whichever thread finished the reach, one call
  /// at a time. Empty = no reports.
  std::function<void(std::size_t done, std::size_t total)> progress;
  /// Lakes on nodes of the network (NetworkLake), empty = none. A reach
  /// is the outflowing reach of one lake at most. Each lake is routed once
  /// (LevelPool::route from its steady state, or its initial level). The
  /// network's volume balance counts their storage change as storage and
  /// what terminal lakes let out as outflow (docs/methods.md, "Lakes and
  /// reservoirs").
  std::vector<NetworkLake> lakes;
  /// Where each lake's routing goes, by index into `lakes` (resized to
  /// it); null = not kept.
  std::vector<LakeRouting>* lake_results = nullptr;
  /// Saved states to start from, by plan index (ReachState; one per reach,
  /// a dry one or none = the steady state of the first sample); null: none.
  const std::vector<ReachState>* initial_states = nullptr;
  /// Where each reach's end state goes, by plan index (resized to the
  /// plan); null = not kept. A reach routed with the diffusion wave has no
  /// state: the run fails naming it (InputError, field `state`).
  std::vector<ReachState>* final_states = nullptr;
  /// Routing shared among ranks (Ranks.hpp), each routing the reaches it
  /// owns; null or one rank: this process routes every reach. Every rank
  /// calls routeNetwork with the same plan, forcing and options. Outflows
  /// cross ranks as messages as soon as a reach is routed; the series
  /// `sink` wants (asked at rank 0) and the reaches' summaries go to rank
  /// 0, whose results are those of a single process, bit for bit (each
  /// reach sums its inputs in the plan's order, wherever they came from);
  /// the other ranks' results hold their own reaches' summaries only.
  /// `threads` is per rank (0: the machine's cores shared among its
  /// ranks). Should any rank fail, every rank throws its error (Error, or
  /// InternalError for a bug), the failing rank's message at every rank.
  const Distribution* distribution = nullptr;
};

/// Routes every reach of `plan` over `axis`. Each finished reach's outflow
/// (with depth and velocity) goes to `sink` (may be null), one call at a
/// time; its series is dropped once every downstream reach has used it.
/// The results carry the network's volume balance and cell updates.
/// Throws InputError naming the reach for a bad section or forcing.
NetworkResults routeNetwork(const network::NetworkPlan& plan, const TimeAxis& axis,
                            const ForcingProvider& forcing, const NetworkRouteOptions& options,
                            SeriesSink* sink = nullptr);

}  // namespace reachwise::routing
