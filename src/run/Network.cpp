#include "reachwise/run/Network.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <set>

#include "reachwise/io/LakeReader.hpp"
#include "reachwise/io/ProblemsWriter.hpp"
#include "reachwise/network/Validation.hpp"

namespace reachwise::run {

namespace {

std::string coordinate(double v) { return std::isfinite(v) ? fmt::format("{}", v) : "-"; }

std::size_t countErrors(const network::ProblemList& problems) {
  std::size_t n = 0;
  for (const auto& p : problems) n += p.severity == network::Severity::Error;
  return n;
}

/// Re-wires the table so that every lake with one outflowing reach sits on
/// a node: the reaches lying inside it are dropped (their `lake_piece`
/// problems list them), and every inflowing reach, and any reach that
/// flowed into a dropped one, flows into the outflowing reach. Returns
/// whether anything changed. Lakes with no or several outflowing reaches
/// are left as they are (routing refuses them by name).
bool joinThroughLakes(LoadedNetwork& net) {
  const auto& plan = *net.lake_plan;
  std::set<std::uint32_t> drop;                     // table records
  std::map<std::string, std::string> into;           // dropped reach id -> the outflowing reach id
  std::map<std::uint32_t, std::string> redirect;     // table record -> new to_reach
  for (const auto& links : net.lake_links) {
    if (links.outflow.size() != 1) continue;
    const std::string& out = plan.reach_id[links.outflow.front()];
    for (const auto r : links.inside) {
      drop.insert(plan.record[r]);
      into[plan.reach_id[r]] = out;
    }
    for (const auto r : links.inflow) {
      const auto& rec = net.table.reaches[plan.record[r]];
      if (rec.to_reach.value_or("") != out) redirect[plan.record[r]] = out;
    }
  }
  bool changed = !drop.empty() || !redirect.empty();
  for (auto& [record, out] : redirect) net.table.reaches[record].to_reach = out;
  if (!into.empty())
    for (std::size_t k = 0; k < net.table.reaches.size(); ++k) {
      auto& rec = net.table.reaches[k];
      if (drop.count(static_cast<std::uint32_t>(k)) || !rec.to_reach) continue;
      const auto it = into.find(*rec.to_reach);
      if (it != into.end()) rec.to_reach = it->second;
    }
  if (!drop.empty()) {
    std::vector<network::ReachRecord> kept;
    kept.reserve(net.table.reaches.size() - drop.size());
    for (std::size_t k = 0; k < net.table.reaches.size(); ++k)
      if (!drop.count(static_cast<std::uint32_t>(k))) kept.push_back(std::move(net.table.reaches[k]));
    net.table.reaches = std::move(kept);
  }
  return changed;
}

}  // namespace

NetworkHasErrors::NetworkHasErrors(network::ProblemList problems)
    : Error(fmt::format("the network has {} error(s), so it cannot be routed", countErrors(problems))),
      problems_(std::move(problems)) {}

void requireExisting(const std::string& source) {
  const bool plain_path = source.find(':') == std::string::npos && source.rfind("/vsi", 0) != 0;
  if (!plain_path || std::filesystem::exists(source)) return;
  InputLocation at;
  at.file = source;
  throw InputError(at, "no such file or directory");
}

std::unique_ptr<LoadedNetwork> loadNetwork(const NetworkSource& source) {
  requireExisting(source.path);
  io::ReadOptions read_options;
  if (!source.config.empty()) {
    requireExisting(source.config);
    read_options.config = io::NetworkConfig::fromFile(source.config);
  }
  read_options.layer = source.layer;
  const std::string dem = source.dem.empty() ? read_options.config.dem : source.dem;
  if (!dem.empty()) requireExisting(dem);
  read_options.derive_attributes = !dem.empty();
  read_options.dem = dem;
  auto net = std::make_unique<LoadedNetwork>();
  net->source = source;
  net->config = read_options.config;
  net->table = io::readNetwork(source.path, read_options, net->problems, &net->read);
  net->graph.emplace(net->table, net->config.splits);
  if (!dem.empty() && net->graph->topologicalOrder()) {
    const io::PrepareConfig prepare =
        source.config.empty() ? io::PrepareConfig{} : io::PrepareConfig::fromFile(source.config);
    net->derived = deriveAttributes(*net, dem, prepare);
  }
  network::mergeProblems(net->problems, network::validate(*net->graph));
  const std::string lakes = !source.lakes.empty() ? source.lakes : net->config.lakes;
  if (!lakes.empty()) {
    requireExisting(lakes);
    io::LakeReadOptions lake_options;
    lake_options.layer = !source.lakes_layer.empty() ? source.lakes_layer : net->config.lakes_layer;
    lake_options.network_crs_wkt = net->table.crs_wkt;
    lake_options.length_unit_m = net->config.length_unit_m;
    lake_options.fields = net->config.lake_fields;
    net->lakes = io::readLakes(lakes, lake_options);
    for (const auto& lake : net->lakes->lakes) net->lake_pools.push_back(lake.levelPool());
    if (!net->hasErrors()) {
      net->lake_plan = net->graph->freeze();
      const double tolerance = net->config.snap_tolerance_m / net->lakes->metres_per_unit;
      network::ProblemList found;
      net->lake_links = network::linkLakes(*net->lake_plan, *net->lakes, tolerance, found);
      network::mergeProblems(net->problems, std::move(found));
      if (!net->hasErrors() && joinThroughLakes(*net)) {
        // The graph again, on the re-wired table: lakes now sit on nodes.
        net->graph.emplace(net->table, net->config.splits);
        network::mergeProblems(net->problems, network::validate(*net->graph));
        if (!net->hasErrors()) {
          net->lake_plan = net->graph->freeze();
          network::ProblemList again;
          net->lake_links = network::linkLakes(*net->lake_plan, *net->lakes, tolerance, again);
        } else {
          net->lake_plan.reset();
          net->lake_links.clear();
        }
      }
    }
  }
  return net;
}

std::string problemLine(const network::Problem& p) {
  return fmt::format("{} {} {} {} ({}, {}): {}", io::severityName(p.severity), p.codeName(),
                     p.reach_id.empty() ? "-" : p.reach_id,
                     p.fid < 0 ? std::string("-") : std::to_string(p.fid), coordinate(p.x),
                     coordinate(p.y), p.message);
}

void writeProblems(const std::string& out, const LoadedNetwork& net) {
  // Near-misses go to the layer only: as stderr lines they would bury the
  // problems (most headwaters of a regional layer lie near another line).
  network::ProblemList all = net.problems;
  for (const auto& n : net.read.topology.near_misses) all.push_back(network::geos::nearMissProblem(n));
  io::writeProblemsGeoPackage(out, *net.graph, all);
}

network::NetworkPlan routablePlan(const LoadedNetwork& net) {
  if (net.hasErrors()) throw NetworkHasErrors(net.problems);
  return net.graph->freeze();
}

std::vector<const routing::LevelPool*> lakesAtTop(const LoadedNetwork& net, const network::NetworkPlan& plan) {
  std::vector<const routing::LevelPool*> at_top;
  if (!net.lakes) return at_top;
  REACHWISE_ASSERT(net.lake_plan && net.lake_plan->size() == plan.size());
  at_top.assign(plan.size(), nullptr);
  const auto& lp = *net.lake_plan;
  for (std::size_t l = 0; l < net.lakes->lakes.size(); ++l) {
    const auto& links = net.lake_links[l];
    InputLocation at;
    at.file = net.lakes->source;
    at.layer = net.lakes->layer;
    at.fid = net.lakes->lakes[l].fid;
    at.lake_id = net.lakes->lakes[l].lake_id;
    const auto refuse = [&](const std::string& why) {
      throw InputError(at, why + "; only a lake on a node of the network (one outflowing reach, the reaches "
                                 "joined to its top flowing in, none inside) is routed so far");
    };
    if (links.outflow.empty()) refuse("a terminal lake is not routed yet");
    if (links.outflow.size() > 1) refuse("a lake with several outflowing reaches is not routed yet");
    if (!links.inside.empty()) refuse("a lake with reaches inside it is not routed yet");
    const std::uint32_t o = links.outflow.front();
    std::vector<std::uint32_t> ups(lp.up_reach.begin() + lp.up_offset[o], lp.up_reach.begin() + lp.up_offset[o + 1]);
    std::vector<std::uint32_t> in = links.inflow;
    std::sort(ups.begin(), ups.end());
    std::sort(in.begin(), in.end());
    if (ups != in)
      refuse(fmt::format("its inflowing reaches are not the reaches the network joins to the top of {}",
                         lp.reach_id[o]));
    // The same reach in `plan` (frozen from the same graph: same order).
    REACHWISE_ASSERT(plan.reach_id[o] == lp.reach_id[o]);
    if (at_top[o]) refuse(fmt::format("reach {} starts on two lakes", lp.reach_id[o]));
    at_top[o] = &net.lake_pools[l];
  }
  return at_top;
}

}  // namespace reachwise::run
