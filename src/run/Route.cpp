#include "reachwise/run/Route.hpp"

#include <fmt/format.h>

#include <chrono>
#include <cmath>
#include <map>
#include <optional>

#include "reachwise/io/Database.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/SavedState.hpp"
#include "reachwise/network/Partition.hpp"
#include "reachwise/network/Problem.hpp"

namespace reachwise::run {

namespace {

/// Every method, the default first (names: routing::methodName).
constexpr routing::Method kMethods[] = {routing::Method::VariableParameter, routing::Method::ConstantParameter,
                                        routing::Method::Muskingum, routing::Method::DiffusionWave};

/// How the run was asked for, as run_info and the NetCDF history record it.
std::string provenance(const RouteRequest& request) {
  return request.command_line.empty() ? "reachwise library" : request.command_line;
}

[[noreturn]] void stateError(const std::string& file, const std::string& field, const std::string& message,
                             const std::string& reach = {}, const std::string& lake = {}) {
  InputLocation at;
  at.file = file;
  at.field = field;
  at.reach_id = reach;
  at.lake_id = lake;
  throw InputError(at, message);
}

/// The time of a state as ISO 8601 text.
std::string isoOf(double unix_s, int offset_min) {
  return io::formatIsoTime(unix_s, offset_min, unix_s == std::floor(unix_s) ? 0 : 3);
}

/// Binds the saved state `st` (read from `file`) to this run: the same
/// method, step and start time, every reach and lake of the network in it
/// and nothing else. Returns the reaches' states by plan index and sets
/// each lake's initial storage and sub-steps in `lakes`.
std::vector<routing::ReachState> bindState(const std::string& file, io::SavedState st, const RouteRequest& request,
                                           const LoadedNetwork& net, const network::NetworkPlan& plan,
                                           const routing::TimeAxis& axis, std::vector<routing::NetworkLake>& lakes) {
  const std::string method(routing::methodName(request.method));
  if (st.method != method)
    stateError(file, "method", "the state was saved by a `" + st.method + "` run, but this run's method is `" +
                                   method + "`: a run continues with the method that saved the state");
  if (std::abs(st.dt_s - axis.dt_s) > 1e-9 * axis.dt_s)
    stateError(file, "time_step_s", fmt::format("the state was saved with a step of {} s, but this run's step is {} s",
                                                st.dt_s, axis.dt_s));
  if (st.time_unix_s != static_cast<double>(axis.start_unix_s))
    stateError(file, "time",
               "the state's time " + isoOf(st.time_unix_s, axis.utc_offset_min) + " is not the forcing's first time " +
                   isoOf(static_cast<double>(axis.start_unix_s), axis.utc_offset_min) +
                   ": a continued run's forcing starts at the state's time");
  std::map<std::string, std::size_t> in_state;
  for (std::size_t i = 0; i < st.reach_ids.size(); ++i) in_state[st.reach_ids[i]] = i;
  std::vector<routing::ReachState> out(plan.size());
  for (std::uint32_t i = 0; i < plan.size(); ++i) {
    const auto it = in_state.find(plan.reach_id[i]);
    if (it == in_state.end())
      stateError(file, "reach_id", "the reach is in the network but not in the saved state (a state continues the "
                                   "network that saved it)", plan.reach_id[i]);
    out[i] = std::move(st.reaches[it->second]);
    in_state.erase(it);
  }
  if (!in_state.empty())
    stateError(file, "reach_id", "the saved state has this reach, but the network does not (a state continues the "
                                 "network that saved it)", in_state.begin()->first);
  std::map<std::string, const io::LakeState*> lake_states;
  for (const auto& l : st.lakes) lake_states[l.lake_id] = &l;
  for (std::size_t k = 0; k < lakes.size(); ++k) {
    const std::string& id = net.lakes->lakes[k].lake_id;
    const auto it = lake_states.find(id);
    if (it == lake_states.end())
      stateError(file, "lake_id", "the lake is in the lakes layer but not in the saved state", {}, id);
    lakes[k].initial_storage_m3 = it->second->storage_m3;
    lakes[k].substeps = it->second->substeps;
    lake_states.erase(it);
  }
  if (!lake_states.empty())
    stateError(file, "lake_id", "the saved state has this lake, but the run has no such lake", {},
               lake_states.begin()->first);
  return out;
}

}  // namespace

std::string_view methodName(routing::Method method) { return routing::methodName(method); }

std::vector<std::string> methodNames() {
  std::vector<std::string> names;
  for (const routing::Method m : kMethods) names.emplace_back(routing::methodName(m));
  return names;
}

std::optional<routing::Method> methodFromName(std::string_view name) {
  for (const routing::Method m : kMethods)
    if (routing::methodName(m) == name) return m;
  return std::nullopt;
}

const LakeResult* RouteSummary::lake(std::string_view lake_id) const {
  for (const auto& l : lakes)
    if (l.lake_id == lake_id) return &l;
  return nullptr;
}

io::RunInfo runInfo(const RouteRequest& request, const routing::NetworkResults& results) {
  io::RunInfo info;
  // A database connection is recorded without its password.
  const auto shown = [](const std::string& source) {
    return io::isDatabaseSource(source) ? io::redactedConnection(source) : source;
  };
  info.inputs = {shown(request.network.path)};
  for (const std::string* f : {&request.forcing.inflow, &request.forcing.lateral, &request.network.config,
                               &request.network.lakes, &request.gauges.observed, &request.gauges.gauges,
                               &request.initial_state})
    if (!f->empty()) info.inputs.push_back(shown(*f));
  info.method = routing::methodName(request.method);
  info.ranks = request.ranks ? request.ranks->size() : 1;
  info.command_line = io::redactedConnection(provenance(request));
  info.warnings = results.warnings;
  info.series_file = request.outputs.series_nc;
  return info;
}

routing::NetworkRouteOptions networkRouteOptions(const LoadedNetwork& net, const network::NetworkPlan& plan,
                                                 routing::Method method, double diffusion_below_ponce,
                                                 double grid_spread_budget, unsigned threads) {
  routing::NetworkRouteOptions ro;
  ro.reach.method = method;
  ro.reach.diffusion_below_ponce = diffusion_below_ponce;
  ro.reach.grid_spread_budget = grid_spread_budget;
  ro.threads = threads;
  ro.base_flow_m3s = baseFlows(plan);
  ro.lakes = networkLakes(net, plan);
  return ro;
}

std::vector<io::NamedPath> inputPaths(const RouteRequest& request, const LoadedNetwork* net) {
  std::vector<io::NamedPath> in = {{"NETWORK", request.network.path},       {"--config", request.network.config},
                                   {"--dem", request.network.dem},          {"--lakes", request.network.lakes},
                                   {"--inflow", request.forcing.inflow},    {"--lateral", request.forcing.lateral},
                                   {"--observed", request.gauges.observed}, {"--gauges", request.gauges.gauges},
                                   {"--initial-state", request.initial_state}};
  if (net && net->lakes) in.push_back({"[network] lakes", net->lakes->source});
  if (net) in.push_back({"[network] dem", net->config.dem});
  return in;
}

RouteSummary route(const RouteRequest& request, Progress* progress) {
  Progress silent;
  Progress& tell = progress ? *progress : silent;
  if (!request.members.empty()) throw InternalError("run::route: an ensemble (members) is routed by routeEnsemble");
  RouteSummary summary;
  // Among ranks, every step below runs on every rank and fails on all when
  // it fails on one; rank 0 alone writes.
  routing::Ranks* const ranks = request.ranks && request.ranks->size() > 1 ? request.ranks : nullptr;
  const bool writes = !ranks || ranks->rank() == 0;
  std::optional<RunForcing> forcing_read;
  routing::NetworkRouteOptions ro;
  std::vector<routing::ReachState> start_states, end_states;
  std::vector<std::uint32_t> gauged;
  std::optional<OutflowCapture> capture_made;
  std::optional<Outputs> outputs_made;
  routing::Distribution distribution;
  routing::onEveryRank(ranks, [&] {
    // An output never replaces an input (write-back adds layers beside the
    // network and is not an output path here).
    const std::vector<io::NamedPath> outputs_named = outputPaths(request.outputs);
    io::refuseOutputOverInput(outputs_named, inputPaths(request, nullptr));
    if (!request.outputs.state_nc.empty() && request.method == routing::Method::DiffusionWave) {
      InputLocation at;
      at.field = "save_state";
      throw InputError(at, "the diffusion method has no saved state (its state is a depth profile on a grid of its "
                           "own): choose vpmc, mc or muskingum to save one");
    }
    tell.stage("reading " + request.network.path);
    summary.network = loadNetwork(request.network);
    const LoadedNetwork& net = *summary.network;
    io::refuseOutputOverInput(outputs_named, inputPaths(request, &net));
    summary.plan = routablePlan(net);
    const network::NetworkPlan& plan = summary.plan;

    tell.stage("reading the forcing");
    const RunForcing& forcing =
        forcing_read.emplace(request.forcing, plan, net.config.forcingUnits(), &net.dropped_in_lake);
    requireHydrographRows(request.outputs.hydrographs, plan, forcing.axis().steps, request.max_hydrograph_rows);
    summary.gauges = bindGauges(request.gauges, net, plan, forcing.axis(), net.config.forcingUnits());
    ro = networkRouteOptions(net, plan, request.method, request.diffusion_below_ponce, request.grid_spread_budget,
                             request.threads);
    if (!request.initial_state.empty()) {
      tell.stage("reading " + request.initial_state);
      start_states = bindState(request.initial_state, io::readStateFile(request.initial_state), request, net, plan,
                               forcing.axis(), ro.lakes);
      ro.initial_states = &start_states;
    }
    if (!request.outputs.state_nc.empty()) ro.final_states = &end_states;
    for (const auto& g : summary.gauges.gauges) gauged.push_back(g.reach);
    OutflowCapture& capture = capture_made.emplace(plan.size(), gauged);
    std::vector<routing::SeriesSink*> sinks = request.sinks;
    if (!gauged.empty()) sinks.push_back(&capture);
    std::vector<std::string> gauge_ids;
    for (const auto& g : summary.gauges.gauges) gauge_ids.push_back(g.gauge_id);
    if (writes)
      outputs_made.emplace(request.outputs, net, plan, forcing.axis(), provenance(request), sinks,
                           std::move(gauge_ids));
    if (ranks) {
      // A lake's outflowing reaches stay on one rank (it routes the lake).
      std::vector<std::vector<std::uint32_t>> together;
      for (const auto& lake : ro.lakes) together.push_back(lake.outflow_reaches);
      distribution.ranks = ranks;
      distribution.owner = network::partitionPlan(plan, ranks->size(), together).owner;
      ro.distribution = &distribution;
    }
  });
  const LoadedNetwork& net = *summary.network;
  const network::NetworkPlan& plan = summary.plan;
  const RunForcing& forcing = *forcing_read;
  OutflowCapture& capture = *capture_made;

  tell.stage("routing");
  ro.progress = [&tell](std::size_t done, std::size_t total) { tell.routed(done, total); };
  std::vector<routing::LakeRouting> lake_routing;
  ro.lake_results = &lake_routing;
  const auto t0 = std::chrono::steady_clock::now();
  routing::onEveryRank(ranks, [&] {
    summary.results = routing::routeNetwork(plan, forcing.axis(), forcing.provider(), ro,
                                            outputs_made ? &outputs_made->sink() : nullptr);
  });
  summary.routing_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  routing::onEveryRank(ranks, [&] {
    if (!writes) return;  // rank 0 writes; the others' results hold their own reaches only
    Outputs& outputs = *outputs_made;
    for (std::size_t k = 0; k < ro.lakes.size(); ++k)
      summary.lakes.push_back({k, net.lakes->lakes[k].lake_id, ro.lakes[k].inflow_reaches, ro.lakes[k].outflow_reaches,
                               ro.lakes[k].outflow_shares, std::move(lake_routing[k])});

    tell.stage("writing the results");
    summary.gauge_scores = scoreGauges(summary.gauges.gauges, capture, forcing.axis());
    std::vector<io::GaugeOutput> gauge_rows;
    for (std::size_t g = 0; g < summary.gauges.gauges.size(); ++g) {
      const Gauge& gauge = summary.gauges.gauges[g];
      summary.gauge_outflow.push_back(capture.outflow(gauge.reach));
      const network::Point2 at = gauge.point.value_or(plan.bottom[gauge.reach]);
      gauge_rows.push_back({gauge.gauge_id, gauge.reach_id, at.x, at.y, gauge.snap_distance_m,
                            summary.gauge_scores[g], &gauge.observed, nullptr});
    }
    for (std::size_t g = 0; g < gauge_rows.size(); ++g) gauge_rows[g].simulated = &summary.gauge_outflow[g];
    auto& warnings = summary.results.warnings;
    warnings.insert(warnings.end(), forcing.warnings().begin(), forcing.warnings().end());
    warnings.insert(warnings.end(), summary.gauges.warnings.begin(), summary.gauges.warnings.end());
    for (const auto& p : net.problems)
      if (p.severity == network::Severity::Warning)
        warnings.push_back(std::string(p.codeName()) + " " + p.reach_id + ": " + p.message);
    summary.info = runInfo(request, summary.results);
    summary.info.units = outputs.units();
    const std::vector<io::LakeOutput> lakes = routedLakes(net, plan, summary.lakes);
    markLakeNodes(summary.results, summary.lakes);
    std::optional<io::SavedState> saved;
    if (!request.outputs.state_nc.empty()) {
      const routing::TimeAxis& axis = forcing.axis();
      saved.emplace();
      saved->method = routing::methodName(request.method);
      saved->time_unix_s = axis.at(static_cast<double>(axis.steps - 1));
      saved->utc_offset_min = axis.utc_offset_min;
      saved->dt_s = axis.dt_s;
      saved->reach_ids = plan.reach_id;
      saved->reaches = std::move(end_states);
      for (const LakeResult& l : summary.lakes) {
        const routing::LevelPoolResult& r = l.routing.result;
        if (!l.routing.routed || r.storage_m3.empty())
          throw InternalError("lake " + l.lake_id + " was not routed: no state to save");
        saved->lakes.push_back(
            {l.lake_id, r.storage_m3.back(), r.level_m.back(), static_cast<std::uint32_t>(r.substeps)});
      }
    }
    outputs.commit(summary.results, summary.info, lakes, gauge_rows, saved ? &*saved : nullptr);
    summary.gpkg = outputs.geopackage();
    summary.notes = outputs.notes();
  });
  return summary;
}

std::vector<io::LakeOutput> routedLakes(const RouteSummary& summary) {
  if (!summary.network) return {};
  return routedLakes(*summary.network, summary.plan, summary.lakes);
}

}  // namespace reachwise::run
