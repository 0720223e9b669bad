#pragma once
/// \file
/// One call routes a network: read and validate the layer, open and bind
/// the forcing, route every reach, write the outputs.
///
///     reachwise::run::RouteRequest request;
///     request.network.path = "network.gpkg";
///     request.forcing.inflow = "inflow.csv";
///     request.outputs.gpkg = "results.gpkg";
///     const auto summary = reachwise::run::route(request);
///
/// The pieces it is made of (loadNetwork, RunForcing, Outputs, runInfo)
/// are public, for callers that route one network many times.

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/run/Forcing.hpp"
#include "reachwise/run/Network.hpp"
#include "reachwise/run/Outputs.hpp"
#include "reachwise/run/SeriesChoice.hpp"
#include "reachwise/run/Gauges.hpp"
#include "reachwise/run/RoutedLakes.hpp"

namespace reachwise::run {

/// The caution every output and summary carries.
using io::kResultsCaution;

/// The method names of the command line and run files: `vpmc`, `mc`,
/// `muskingum`, `diffusion` (routing::methodName).
std::string_view methodName(routing::Method method);
/// Every method name, the default (`vpmc`) first.
std::vector<std::string> methodNames();
/// The method of a name above; nothing for any other name.
std::optional<routing::Method> methodFromName(std::string_view name);

struct RouteRequest {
  NetworkSource network;
  ForcingFiles forcing;
  routing::Method method = routing::Method::VariableParameter;
  /// `vpmc` hands reaches with a Ponce number below this to the diffusion
  /// wave (routing::RouteOptions::diffusion_below_ponce); 0: never.
  double diffusion_below_ponce = routing::kDiffusionWaveMinPonce;
  /// `vpmc` on quick reaches (routing::RouteOptions::grid_spread_budget).
  double grid_spread_budget = routing::kGridSpreadBudget;
  unsigned threads = 0;              ///< worker threads; 0 = all cores
  OutputRequest outputs;
  /// Most hydrograph rows (chosen reaches × steps) the run may write
  /// (requireHydrographRows, checked before routing).
  std::size_t max_hydrograph_rows = kDefaultMaxHydrographRows;
  /// Observed hydrographs (and a gauge layer) to compare the run with;
  /// empty `observed`: none.
  GaugeFiles gauges;
  /// How the run was asked for, recorded in run_info and the NetCDF
  /// history (the command line; empty: "reachwise library").
  std::string command_line;
  /// Further series sinks (owned by the caller), given every routed series.
  std::vector<routing::SeriesSink*> sinks;
  /// A saved state (OutputRequest::state_nc of an earlier run) to start
  /// from instead of the steady state: same network, method and step, and
  /// the forcing's first time at the state's time (docs/formats.md, "Saved
  /// state"); empty: none.
  std::string initial_state;
  /// Processes routing this run together (MPI ranks, routing/Ranks.hpp):
  /// every rank calls route() with the same request; the network is cut
  /// into parts (network::partitionPlan), each rank routes its own, and
  /// rank 0 alone writes the outputs, which equal a single process's. A
  /// failure on any rank fails route() on every rank. Null: this process
  /// alone.
  routing::Ranks* ranks = nullptr;
  /// A forecast ensemble (run/Ensemble.hpp, routeEnsemble()): a folder of
  /// forcing files or a glob pattern, each file a member replacing
  /// `forcing.inflow`; empty: a single run. route() refuses it.
  std::string members;
};

/// Told what a run is doing. Called from the thread that called route(),
/// except routed(), which comes from whichever worker finished a reach,
/// one call at a time.
class Progress {
public:
  virtual ~Progress() = default;
  /// A new stage starts ("reading NETWORK", "reading the forcing", "routing",
  /// "writing the results").
  virtual void stage(std::string_view /*what*/) {}
  /// Reaches routed so far, about 200 times over a run.
  virtual void routed(std::size_t /*done*/, std::size_t /*total*/) {}
};

/// Every input path `request` names (and, once read, `net`'s lakes source
/// from the run file), with its option, for io::refuseOutputOverInput.
std::vector<io::NamedPath> inputPaths(const RouteRequest& request, const LoadedNetwork* net);

/// One lake as a run routed it (RouteSummary::lakes).

struct RouteSummary {
  std::unique_ptr<LoadedNetwork> network;   ///< the layer as read, its graph and its problems
  network::NetworkPlan plan;
  /// Per-reach and per-node results; `warnings` holds the forcing readers'
  /// and the network's warnings too.
  routing::NetworkResults results;
  io::RunInfo info;                         ///< what run_info records
  std::string gpkg;                         ///< the GeoPackage written, or empty
  /// Notes for the user from putting the outputs in place (an interrupted
  /// earlier run's outputs finished; io::OutputCommit).
  std::vector<std::string> notes;
  double routing_s = 0;                     ///< wall time of the routing alone (threads: results.threads)
  /// Every lake, in the lakes layer's order (`lakes[k].lake == k`; empty
  /// when no lakes were given): where it sits in the plan and its routing.
  /// Every lake of the layer is routed (a lake that cannot be is an
  /// error), terminal lakes included.
  std::vector<LakeResult> lakes;
  /// The gauges compared (RouteRequest::gauges), their records and skill
  /// (`gauge_scores[g]` for `gauges.gauges[g]`), and each gauge's reach's
  /// simulated outflow (`gauge_outflow[g]`).
  BoundGauges gauges;
  std::vector<gauges::SkillScores> gauge_scores;
  std::vector<std::vector<double>> gauge_outflow;
  /// The lake of that id; nullptr when there is none.
  const LakeResult* lake(std::string_view lake_id) const;
};

/// How route() routes `plan` (routablePlan(net)): the method, the Ponce
/// hand-over to the diffusion wave, vpmc's grid budget on quick reaches
/// (routing::RouteOptions::grid_spread_budget), threads, base flows and
/// lakes. For callers that route one network many times (e.g. calibration).
routing::NetworkRouteOptions networkRouteOptions(const LoadedNetwork& net, const network::NetworkPlan& plan,
                                                 routing::Method method, double diffusion_below_ponce,
                                                 double grid_spread_budget, unsigned threads);

/// Routes `request`. Throws NetworkHasErrors when the network cannot be
/// routed, InputError naming file / feature / field for bad input or an
/// output that may not be written; nothing is left behind then.
RouteSummary route(const RouteRequest& request, Progress* progress = nullptr);

/// The lakes `summary` routed, in the lakes layer's order, each with its
/// record, the reach its outflow enters and its routing (routedLakes()
/// above; pointers into `summary`, which must outlive them).
std::vector<io::LakeOutput> routedLakes(const RouteSummary& summary);

/// The run_info record of a run: inputs, method, command line, warnings.
io::RunInfo runInfo(const RouteRequest& request, const routing::NetworkResults& results);

}  // namespace reachwise::run
