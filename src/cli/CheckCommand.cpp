#include "CheckCommand.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <cmath>
#include <iostream>
#include <memory>

#include "Common.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/NetworkSummary.hpp"
#include "reachwise/run/Network.hpp"

namespace reachwise::cli {

namespace {

using network::ProblemList;
using network::Severity;

/// One line: unconnected ends within 1, 10, 100, 1000 m of a line they are
/// not joined to, and the snap tolerance that would join each group.
void printNearMisses(std::ostream& out, const io::ReadSummary& read) {
  std::string line;
  for (const auto& b : network::geos::nearMissBands(read.topology.near_misses)) {
    line += fmt::format("{}{} within {:g} m", line.empty() ? "" : ", ", b.ends, b.within_m);
    if (b.ends > 0) line += fmt::format(" (a tolerance of {:.3g} m joins them)", b.join_tolerance_m);
  }
  fmt::print(out, "near-misses    unconnected ends: {}\n", line);
}

void printSummary(std::ostream& out, const network::ReachTable& table,
                  const network::NetworkSummary& s, const io::ReadSummary& read,
                  const ProblemList& problems) {
  std::size_t errors = 0, warnings = 0;
  for (const auto& p : problems) {
    errors += p.severity == Severity::Error;
    warnings += p.severity == Severity::Warning;
  }
  fmt::print(out, "network        {} (layer {})\n", table.source, table.layer);
  fmt::print(out, "features       {} read, {} left out\n", read.features, read.skipped);
  fmt::print(out, "topology       {}\n",
             read.topology_from_geometry ? fmt::format("from line ends (snap {:g} m, gap search {:g} m)",
                                                     read.snap_tolerance_m, read.gap_search_m)
                                         : std::string("from to_reach"));
  if (read.topology_from_geometry) {
    const auto& t = read.topology;
    fmt::print(out, "built          {} line{} cut, {} end{} snapped (largest move {:.3g} m), {} line{} "
                    "reversed, {} connection{} added\n",
               t.splits, t.splits == 1 ? "" : "s", t.snapped_ends, t.snapped_ends == 1 ? "" : "s",
               t.largest_snap_m, t.flipped, t.flipped == 1 ? "" : "s", t.connections,
               t.connections == 1 ? "" : "s");
  }
  fmt::print(out, "reaches        {}\n", s.reaches);
  fmt::print(out, "headwaters     {}\n", s.headwaters);
  fmt::print(out, "confluences    {}{}\n", s.confluences,
             s.side_arm_returns == 0
                 ? std::string()
                 : fmt::format(" (and {} side-arm return{})", s.side_arm_returns,
                               s.side_arm_returns == 1 ? "" : "s"));
  fmt::print(out, "bifurcations   {}\n", s.bifurcations);
  fmt::print(out, "outlets        {}\n", s.outlets);
  fmt::print(out, "basins         {}\n", s.basins);
  fmt::print(out, "total length   {:.3f} km\n", s.total_length_km);
  if (s.cycles > 0)
    fmt::print(out, "strahler max   - (the network has {} cycle{})\n", s.cycles, s.cycles == 1 ? "" : "s");
  else
    fmt::print(out, "strahler max   {}\n", s.max_strahler);
  if (read.topology_from_geometry) printNearMisses(out, read);
  fmt::print(out, "problems       {} error{}, {} warning{}, {} note{}\n", errors,
             errors == 1 ? "" : "s", warnings, warnings == 1 ? "" : "s",
             problems.size() - errors - warnings, problems.size() - errors - warnings == 1 ? "" : "s");
}

std::string reachList(const network::NetworkPlan& plan, const std::vector<std::uint32_t>& reaches) {
  std::string out;
  for (const auto r : reaches) out += (out.empty() ? "" : ", ") + plan.reach_id[r];
  return out.empty() ? "-" : out;
}

/// `lakes` and one line per lake: the reaches flowing in and out, and those
/// lying inside (dropped when lakes are routed).
void printLakes(std::ostream& out, const run::LoadedNetwork& net) {
  const auto& lakes = *net.lakes;
  fmt::print(out, "lakes          {} (layer {} of {})\n", lakes.lakes.size(), lakes.layer, lakes.source);
  if (!net.lake_plan) {
    fmt::print(out, "               not linked: the network has errors\n");
    return;
  }
  for (std::size_t l = 0; l < lakes.lakes.size(); ++l) {
    const auto& links = net.lake_links[l];
    std::string shares;  // of several outflowing reaches, as resolved
    if (links.outflow.size() > 1 && !links.inflow.empty()) {
      for (const auto o : links.outflow)
        shares += fmt::format("{}{:.3g}", shares.empty() ? " (shares " : ", ", net.lake_plan->split[o]);
      shares += ")";
    }
    fmt::print(out, "lake {}  area {:.4g} km2, in: {}; out: {}{}{}{}\n", lakes.lakes[l].lake_id,
               lakes.lakes[l].area_m2 / 1e6, reachList(*net.lake_plan, links.inflow),
               reachList(*net.lake_plan, links.outflow), shares, links.terminal() ? " (terminal sink)" : "",
               links.inside.empty() ? std::string() : "; inside: " + reachList(*net.lake_plan, links.inside));
  }
}

int check(const CheckOptions& options, std::ostream& out, std::ostream& err) {
  run::NetworkSource source{options.network, options.layer, options.config, ""};
  source.lakes = options.lakes;
  source.lakes_layer = options.lakes_layer;
  // The problems file never replaces what check reads.
  const std::vector<io::NamedPath> written = {{"--problems", options.problems}};
  io::refuseOutputOverInput(written, {{"NETWORK", options.network}, {"--config", options.config},
                                      {"--lakes", options.lakes}});
  const auto net = run::loadNetwork(source);
  if (net->lakes) io::refuseOutputOverInput(written, {{"[network] lakes", net->lakes->source}});
  if (!options.problems.empty()) io::requireParentFolder(options.problems);
  printSummary(out, net->table, network::summarize(*net->graph), net->read, net->problems);
  if (net->lakes) printLakes(out, *net);
  for (const auto& p : net->problems) fmt::print(err, "{}\n", run::problemLine(p, net->table.geographic));
  if (!options.problems.empty()) {
    run::writeProblems(options.problems, *net);
    fmt::print(out, "wrote          {}\n", options.problems);
  }
  return network::hasErrors(net->problems) ? kExitInput : kExitOk;
}

}  // namespace

int runCheck(const CheckOptions& options, std::ostream& out, std::ostream& err) {
  return guarded(err, options.network, [&] { return check(options, out, err); });
}

void addCheckCommand(CLI::App& app, Runner& chosen) {
  auto options = std::make_shared<CheckOptions>();
  CLI::App* sub = app.add_subcommand("check", "Read and validate a network; report its shape and problems");
  sub->add_option("NETWORK", options->network, "Network: any path or connection string GDAL opens as vector data")
      ->required();
  sub->add_option("--layer", options->layer, "Layer name (default: the only line layer)");
  sub->add_option("--config", options->config, "TOML run file with field mappings and defaults");
  sub->add_option("--lakes", options->lakes,
                  "Lakes and reservoirs: a polygon source (fields in docs/formats.md, \"Lakes\")");
  sub->add_option("--lakes-layer", options->lakes_layer, "Layer of the lakes (default: the only polygon layer)");
  sub->add_option("--problems", options->problems,
                  "Write a GeoPackage with the problems (points) and the network as built (lines)");
  sub->callback([&chosen, options] {
    chosen = [options] { return runCheck(*options, std::cout, std::cerr); };
  });
}

}  // namespace reachwise::cli
