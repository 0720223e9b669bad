#include "reachwise/run/Network.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <filesystem>
#include <functional>
#include <map>
#include <set>

#include "reachwise/io/LakeReader.hpp"
#include "reachwise/io/ProblemsWriter.hpp"
#include "reachwise/network/Validation.hpp"

namespace reachwise::run {

namespace {

/// A coordinate to about a centimetre: 2 decimals in metres or feet, 7 in
/// degrees (1e-7 degree is 1.1 cm at the equator); common practice.
std::string coordinate(double v, bool geographic) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, geographic ? 7 : 2) : "-";
}

std::size_t countErrors(const network::ProblemList& problems) {
  std::size_t n = 0;
  for (const auto& p : problems) n += p.severity == network::Severity::Error;
  return n;
}

/// The lake's location, for messages.
InputLocation lakeLocation(const network::LakeTable& lakes, std::size_t l) {
  InputLocation at;
  at.file = lakes.source;
  at.layer = lakes.layer;
  at.fid = lakes.lakes[l].fid;
  at.lake_id = lakes.lakes[l].lake_id;
  return at;
}

/// Takes the `[[network.split]]` tables whose `at` names a lake and no
/// reach out of `rules` (they would name no bifurcation of the graph).
std::vector<network::SplitOverride> takeLakeSplits(network::SplitRules& rules, const network::ReachTable& table,
                                                   const network::LakeTable& lakes) {
  std::set<std::string_view> reaches, lake_ids;
  for (const auto& r : table.reaches) reaches.insert(r.id);
  for (const auto& l : lakes.lakes) lake_ids.insert(l.lake_id);
  std::vector<network::SplitOverride> taken, kept;
  for (auto& o : rules.overrides)
    (!reaches.count(o.at) && lake_ids.count(o.at) ? taken : kept).push_back(std::move(o));
  rules.overrides = std::move(kept);
  return taken;
}

/// Checks a `[[network.split]]` table naming lake `l` against its
/// outflowing reaches; throws InputError naming the run file and key.
void checkLakeSplit(const network::SplitOverride& o, const std::string& origin, const network::NetworkPlan& plan,
                    const network::LakeLinks& links) {
  const auto refuse = [&](const std::string& key, const std::string& why) {
    InputLocation at;
    at.file = origin;
    at.field = key;
    throw InputError(at, why);
  };
  if (links.outflow.size() < 2)
    refuse(o.key + ".at", fmt::format("lake {} has {} outflowing reach{}: shares need several", o.at,
                                      links.outflow.size(), links.outflow.size() == 1 ? "" : "es"));
  std::vector<bool> given(links.outflow.size(), false);
  double sum = 0;
  for (const auto& [id, value] : o.shares) {
    std::size_t k = 0;
    while (k < links.outflow.size() && plan.reach_id[links.outflow[k]] != id) ++k;
    if (k == links.outflow.size()) {
      std::string outs;
      for (const auto r : links.outflow) outs += (outs.empty() ? "" : ", ") + plan.reach_id[r];
      refuse(o.key + ".shares." + id,
             fmt::format("\"{}\" is not an outflowing reach of lake {} (they are: {})", id, o.at, outs));
    }
    if (!(value >= 0) || !std::isfinite(value))
      refuse(o.key + ".shares." + id, fmt::format("a share must be zero or positive, got {}", value));
    given[k] = true;
    sum += value;
  }
  for (std::size_t k = 0; k < given.size(); ++k)
    if (!given[k])
      refuse(o.key + ".shares", fmt::format("no share for reach {}, an outflowing reach of lake {} (every one needs one)",
                                            plan.reach_id[links.outflow[k]], o.at));
  if (std::abs(sum - 1.0) > network::kSplitSumTolerance)
    refuse(o.key + ".shares", fmt::format("the shares of lake {} sum to {}, not 1", o.at, sum));
}

/// Re-wires the table so that every lake sits on a node: the reaches lying
/// inside it are dropped (their `lake_piece` problems list them), and every
/// inflowing reach, and any reach that flowed into a dropped one, flows
/// into the lake's outflowing reaches (`a;b` for several: a bifurcation),
/// or becomes an outlet when the lake is terminal. A `[[network.split]]`
/// table naming a lake becomes one table per reach flowing into it, in
/// `rules`. Returns whether anything changed.
bool joinThroughLakes(LoadedNetwork& net, network::SplitRules& rules) {
  const auto& plan = *net.lake_plan;
  const auto& lakes = *net.lakes;
  std::set<std::uint32_t> drop;                     // table records
  std::map<std::string, std::string> into;           // dropped reach id -> its lake's outflowing reaches
  std::map<std::uint32_t, std::string> redirect;     // table record -> new to_reach ("" = an outlet)
  std::vector<std::string> target(lakes.lakes.size());
  for (std::size_t l = 0; l < net.lake_links.size(); ++l) {
    const auto& links = net.lake_links[l];
    for (const auto r : links.outflow) target[l] += (target[l].empty() ? "" : ";") + plan.reach_id[r];
    for (const auto r : links.inside) {
      drop.insert(plan.record[r]);
      into[plan.reach_id[r]] = target[l];
      net.dropped_in_lake[plan.reach_id[r]] = lakes.lakes[l].lake_id;
    }
    for (const auto r : links.inflow) {
      const auto& rec = net.table.reaches[plan.record[r]];
      if (rec.to_reach.value_or("") != target[l]) redirect[plan.record[r]] = target[l];
    }
  }
  const auto setTo = [](network::ReachRecord& rec, const std::string& to) {
    if (to.empty()) rec.to_reach.reset();
    else rec.to_reach = to;
  };
  bool changed = !drop.empty() || !redirect.empty();
  for (auto& [record, to] : redirect) setTo(net.table.reaches[record], to);
  if (!into.empty())
    for (std::size_t k = 0; k < net.table.reaches.size(); ++k) {
      auto& rec = net.table.reaches[k];
      if (drop.count(static_cast<std::uint32_t>(k)) || !rec.to_reach) continue;
      std::vector<std::string> ids;
      bool hit = false;
      for (const auto id : network::parseDownstreamIds(*rec.to_reach)) {
        const auto it = into.find(std::string(id));
        if (it == into.end()) {
          ids.emplace_back(id);
          continue;
        }
        hit = true;
        for (const auto out : network::parseDownstreamIds(it->second)) ids.emplace_back(out);
      }
      if (!hit) continue;
      std::string to;
      std::set<std::string> seen;
      for (const auto& id : ids)
        if (seen.insert(id).second) to += (to.empty() ? "" : ";") + id;
      setTo(rec, to);
    }
  if (!drop.empty()) {
    std::vector<network::ReachRecord> kept;
    kept.reserve(net.table.reaches.size() - drop.size());
    for (std::size_t k = 0; k < net.table.reaches.size(); ++k)
      if (!drop.count(static_cast<std::uint32_t>(k))) kept.push_back(std::move(net.table.reaches[k]));
    net.table.reaches = std::move(kept);
  }
  // The shares of a lake with several outflowing reaches: the same table
  // for every bifurcation the joining made of its inflowing reaches.
  std::set<std::string> split_lakes;
  for (const auto& o : net.lake_splits) {
    std::size_t l = 0;
    while (lakes.lakes[l].lake_id != o.at) ++l;
    if (!split_lakes.insert(o.at).second) {
      InputLocation at;
      at.file = rules.origin;
      at.field = o.key + ".at";
      throw InputError(at, fmt::format("lake {} has a split table already", o.at));
    }
    checkLakeSplit(o, rules.origin, plan, net.lake_links[l]);
    for (const auto& rec : net.table.reaches)
      if (rec.to_reach && *rec.to_reach == target[l]) {
        network::SplitOverride per = o;
        per.at = rec.id;
        rules.overrides.push_back(std::move(per));
      }
  }
  return changed;
}

/// Links reaches to the lakes: by geometry, then by `lake_id`.
std::vector<network::LakeLinks> linkAll(const LoadedNetwork& net, network::ProblemList& found) {
  const double tolerance = net.config.snap_tolerance_m / net.lakes->metres_per_unit;
  auto links = network::linkLakes(*net.lake_plan, *net.lakes, tolerance, found);
  network::LakeIdFields fields;
  fields.lake_id = net.config.field("lake_id").name;
  fields.to_reach = net.config.field("to_reach").name;
  network::linkNamedLakes(*net.lake_plan, net.table, *net.lakes, fields, links, found);
  return links;
}

}  // namespace

NetworkHasErrors::NetworkHasErrors(network::ProblemList problems, bool geographic)
    : Error(fmt::format("the network has {} error(s), so it cannot be routed", countErrors(problems))),
      problems_(std::move(problems)), geographic_(geographic) {}

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
  // Lakes are read first: a `[[network.split]]` table may name one.
  network::SplitRules rules = net->config.splits;
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
    net->lake_splits = takeLakeSplits(rules, net->table, *net->lakes);
  }
  // A split table naming a lake resolves the shares of the bifurcations
  // the joining makes of the lake's inflowing reaches, which may already
  // bifurcate into its outflowing reaches: until then, `none` is taken as
  // `equal` (the graph is built again with the rules as given).
  network::SplitRules first = rules;
  if (!net->lake_splits.empty() && first.fallback == network::DefaultSplit::None)
    first.fallback = network::DefaultSplit::Equal;
  net->graph.emplace(net->table, first);
  if (!dem.empty() && net->graph->topologicalOrder()) {
    const io::PrepareConfig prepare =
        source.config.empty() ? io::PrepareConfig{} : io::PrepareConfig::fromFile(source.config);
    net->derived = deriveAttributes(*net, dem, prepare);
  }
  const network::ProblemList read_problems = net->problems;
  network::mergeProblems(net->problems, network::validate(*net->graph));
  if (net->lakes && !net->hasErrors()) {
    net->lake_plan = net->graph->freeze();
    network::ProblemList found;
    net->lake_links = linkAll(*net, found);
    network::mergeProblems(net->problems, found);
    const std::size_t overrides = rules.overrides.size();
    if (!net->hasErrors() && (joinThroughLakes(*net, rules) || rules.overrides.size() != overrides ||
                              first.fallback != rules.fallback)) {
      // The graph again, on the re-wired table: lakes now sit on nodes. Its
      // validation replaces the first one's (which saw the reaches now
      // dropped, and the network before the join).
      net->graph.emplace(net->table, rules);
      net->problems = read_problems;
      network::mergeProblems(net->problems, found);
      network::mergeProblems(net->problems, network::validate(*net->graph));
      if (!net->hasErrors()) {
        net->lake_plan = net->graph->freeze();
        network::ProblemList again;
        net->lake_links = linkAll(*net, again);
      } else {
        net->lake_plan.reset();
        net->lake_links.clear();
      }
    }
  }
  return net;
}

std::string problemLine(const network::Problem& p, bool geographic) {
  return fmt::format("{} {} {} {} ({}, {}): {}", io::severityName(p.severity), p.codeName(),
                     p.reach_id.empty() ? "-" : p.reach_id,
                     p.fid < 0 ? std::string("-") : std::to_string(p.fid), coordinate(p.x, geographic),
                     coordinate(p.y, geographic), p.message);
}

void writeProblems(const std::string& out, const LoadedNetwork& net) {
  // Near-misses go to the layer only: as stderr lines they would bury the
  // problems (most headwaters of a regional layer lie near another line).
  network::ProblemList all = net.problems;
  for (const auto& n : net.read.topology.near_misses) all.push_back(network::geos::nearMissProblem(n));
  io::writeProblemsGeoPackage(out, *net.graph, all);
}

network::NetworkPlan routablePlan(const LoadedNetwork& net) {
  if (net.hasErrors()) throw NetworkHasErrors(net.problems, net.table.geographic);
  return net.graph->freeze();
}

namespace {

/// The shares of lake `l`'s outflowing reaches `outs` when no reach flows
/// into it (so the joining made no bifurcation to take them from): by a
/// bifurcation's rule, its `[[network.split]]` table, else the reaches'
/// `split` (every one), else `default_split`.
std::vector<double> sharesWithoutInflow(const LoadedNetwork& net, std::size_t l, const std::vector<std::uint32_t>& outs,
                                        const std::function<void(const std::string&)>& refuse) {
  const auto& lp = *net.lake_plan;
  const auto record = [&](std::uint32_t o) -> const network::ReachRecord& { return net.table.reaches[lp.record[o]]; };
  std::vector<double> share;
  for (const auto& o : net.lake_splits)
    if (o.at == net.lakes->lakes[l].lake_id) {  // checked against the lake's reaches when joined
      for (const auto r : outs)
        for (const auto& [id, value] : o.shares)
          if (id == lp.reach_id[r]) share.push_back(value);
      return share;
    }
  std::size_t given = 0;
  for (const auto r : outs) given += !std::isnan(record(r).split);
  if (given == outs.size()) {
    double sum = 0;
    for (const auto r : outs) sum += record(r).split;
    if (std::abs(sum - 1.0) > network::kSplitSumTolerance)
      refuse(fmt::format("the split values of its outflowing reaches sum to {}, not 1", sum));
    for (const auto r : outs) share.push_back(record(r).split);
    return share;
  }
  if (given > 0 || net.config.splits.fallback == network::DefaultSplit::None)
    refuse("its outflowing reaches need a split value each (or a [[network.split]] table naming the lake, or "
           "default_split = \"width\" or \"equal\")");
  double total = 0;
  bool widths = net.config.splits.fallback == network::DefaultSplit::Width;
  for (const auto r : outs) {
    const auto& rec = record(r);
    const double w = rec.section.shape == hydraulics::Shape::Circle ? rec.section.diameter_m : rec.section.bottom_width_m;
    if (!(w > 0) || !std::isfinite(w)) widths = false;
    share.push_back(w);
    total += w;
  }
  for (double& s : share) s = widths ? s / total : 1.0 / static_cast<double>(outs.size());
  return share;
}

}  // namespace

std::vector<routing::NetworkLake> networkLakes(const LoadedNetwork& net, const network::NetworkPlan& plan) {
  std::vector<routing::NetworkLake> out;
  if (!net.lakes) return out;
  REACHWISE_ASSERT(net.lake_plan && net.lake_plan->size() == plan.size());
  const auto& lp = *net.lake_plan;
  const auto& lakes = net.lakes->lakes;
  std::map<std::uint32_t, std::size_t> leaving;  // outflowing reach -> its lake
  for (std::size_t l = 0; l < lakes.size(); ++l) {
    const auto& links = net.lake_links[l];
    const auto refuse = [&](const std::string& why) { throw InputError(lakeLocation(*net.lakes, l), why); };
    const auto ids = [&](const std::vector<std::uint32_t>& v) {
      std::string s;
      for (const auto r : v) s += (s.empty() ? "" : ", ") + lp.reach_id[r];
      return s;
    };
    if (!links.inside.empty())  // joinThroughLakes dropped them; a second lake may have cut a reach in two
      refuse(fmt::format("reaches {} still lie inside it after the network was joined across the lakes",
                         ids(links.inside)));
    routing::NetworkLake lake;
    lake.pool = &net.lake_pools[l];
    lake.initial_level_m = lakes[l].initial_level_m.value_or(std::numeric_limits<double>::quiet_NaN());
    lake.inflow_reaches = links.inflow;
    std::sort(lake.inflow_reaches.begin(), lake.inflow_reaches.end());
    lake.outflow_reaches = links.outflow;
    std::sort(lake.outflow_reaches.begin(), lake.outflow_reaches.end());
    for (const auto u : lake.inflow_reaches)
      if (lake.outflow_reaches.empty() && !lp.isOutlet(u))
        refuse(fmt::format("it has no outflowing reach, but reach {}, which flows into it, flows on into {}",
                           lp.reach_id[u], lp.reach_id[lp.down_reach[lp.down_offset[u]]]));
    const bool own_shares = lake.outflow_reaches.size() > 1 && lake.inflow_reaches.empty();
    const std::vector<double> shares =
        own_shares ? sharesWithoutInflow(net, l, lake.outflow_reaches, refuse) : std::vector<double>{};
    for (const auto o : lake.outflow_reaches) {
      std::vector<std::uint32_t> ups(lp.up_reach.begin() + lp.up_offset[o], lp.up_reach.begin() + lp.up_offset[o + 1]);
      std::sort(ups.begin(), ups.end());
      for (const auto u : ups)
        if (!std::binary_search(lake.inflow_reaches.begin(), lake.inflow_reaches.end(), u))
          refuse(fmt::format("reach {} flows into {}, which leaves the lake, without flowing into the lake; on a "
                             "to_reach network give it lake_id = {} (or let it flow elsewhere)",
                             lp.reach_id[u], lp.reach_id[o], lakes[l].lake_id));
      for (const auto u : lake.inflow_reaches)
        if (!std::binary_search(ups.begin(), ups.end(), u))
          refuse(fmt::format("reach {} flows into the lake but not into {}, which leaves it", lp.reach_id[u],
                             lp.reach_id[o]));
      // The same reach in `plan` (frozen from the same graph: same order).
      REACHWISE_ASSERT(plan.reach_id[o] == lp.reach_id[o]);
      if (const auto [it, fresh] = leaving.emplace(o, l); !fresh)
        refuse(fmt::format("reach {} leaves it and lake {} both", lp.reach_id[o], lakes[it->second].lake_id));
      const double share = lake.outflow_reaches.size() == 1 ? 1.0
                           : own_shares                     ? shares[lake.outflow_shares.size()]
                                                            : plan.split[o];
      if (!(share >= 0)) refuse(fmt::format("no share of its outflow for reach {}", lp.reach_id[o]));
      lake.outflow_shares.push_back(share);
    }
    out.push_back(std::move(lake));
  }
  return out;
}

}  // namespace reachwise::run
