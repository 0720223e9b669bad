#include "CheckCommand.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <cmath>
#include <filesystem>
#include <iostream>
#include <memory>

#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/io/ProblemsWriter.hpp"
#include "reachwise/network/NetworkSummary.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Validation.hpp"

namespace reachwise::cli {

namespace {

using network::Problem;
using network::ProblemList;
using network::Severity;

std::string coordinate(double v) { return std::isfinite(v) ? fmt::format("{}", v) : "-"; }

/// `severity code reach_id fid (x, y): sentence` (docs/formats.md).
std::string problemLine(const Problem& p) {
  return fmt::format("{} {} {} {} ({}, {}): {}", io::severityName(p.severity),
                     p.code, p.reach_id.empty() ? "-" : p.reach_id,
                     p.fid < 0 ? std::string("-") : std::to_string(p.fid), coordinate(p.x),
                     coordinate(p.y), p.message);
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
             read.topology_from_geometry ? fmt::format("from line ends (snap {})", read.snap_tolerance)
                                         : std::string("from to_reach"));
  fmt::print(out, "reaches        {}\n", s.reaches);
  fmt::print(out, "headwaters     {}\n", s.headwaters);
  fmt::print(out, "confluences    {}\n", s.confluences);
  fmt::print(out, "bifurcations   {}\n", s.bifurcations);
  fmt::print(out, "outlets        {}\n", s.outlets);
  fmt::print(out, "basins         {}\n", s.basins);
  fmt::print(out, "total length   {:.3f} km\n", s.total_length_km);
  if (s.cycles > 0)
    fmt::print(out, "strahler max   - (the network has {} cycle{})\n", s.cycles, s.cycles == 1 ? "" : "s");
  else
    fmt::print(out, "strahler max   {}\n", s.max_strahler);
  fmt::print(out, "problems       {} error{}, {} warning{}, {} note{}\n", errors,
             errors == 1 ? "" : "s", warnings, warnings == 1 ? "" : "s",
             problems.size() - errors - warnings, problems.size() - errors - warnings == 1 ? "" : "s");
}

/// A plain path (not a connection string such as "PG:..." nor a GDAL
/// virtual path) that does not exist gets a plainer message than GDAL's.
void requireExisting(const std::string& source) {
  const bool plain_path = source.find(':') == std::string::npos && source.rfind("/vsi", 0) != 0;
  if (!plain_path || std::filesystem::exists(source)) return;
  InputLocation at;
  at.file = source;
  throw InputError(at, "no such file or directory");
}

int check(const CheckOptions& options, std::ostream& out, std::ostream& err) {
  requireExisting(options.network);
  if (!options.config.empty()) requireExisting(options.config);
  io::ReadOptions read_options;
  if (!options.config.empty()) read_options.config = io::NetworkConfig::fromFile(options.config);
  read_options.layer = options.layer;

  ProblemList problems;
  io::ReadSummary read;
  const auto table = io::readNetwork(options.network, read_options, problems, &read);
  const network::ReachGraph graph(table);
  network::mergeProblems(problems, network::validate(graph));

  printSummary(out, table, network::summarize(graph), read, problems);
  for (const auto& p : problems) fmt::print(err, "{}\n", problemLine(p));
  if (!options.problems.empty()) {
    io::writeProblemsGeoPackage(options.problems, graph, problems);
    fmt::print(out, "wrote          {}\n", options.problems);
  }
  return network::hasErrors(problems) ? kExitInput : kExitOk;
}

}  // namespace

int runCheck(const CheckOptions& options, std::ostream& out, std::ostream& err) {
  try {
    return check(options, out, err);
  } catch (const InternalError& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  } catch (const Error& e) {
    fmt::print(err, "error: {}\n", e.what());
    return kExitInput;
  } catch (const std::bad_alloc&) {
    fmt::print(err, "error: out of memory while checking {}\n", options.network);
    return kExitInput;
  } catch (const std::exception& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  }
}

void addCheckCommand(CLI::App& app, Runner& chosen) {
  auto options = std::make_shared<CheckOptions>();
  CLI::App* sub = app.add_subcommand("check", "Read and validate a network; report its shape and problems");
  sub->add_option("NETWORK", options->network, "Network: any path or connection string GDAL opens as vector data")
      ->required();
  sub->add_option("--layer", options->layer, "Layer name (default: the only line layer)");
  sub->add_option("--config", options->config, "TOML run file with field mappings and defaults");
  sub->add_option("--problems", options->problems,
                  "Write a GeoPackage with the problems (points) and the network as built (lines)");
  sub->callback([&chosen, options] {
    chosen = [options] { return runCheck(*options, std::cout, std::cerr); };
  });
}

}  // namespace reachwise::cli
