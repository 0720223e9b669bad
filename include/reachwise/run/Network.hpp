#pragma once
/// \file
/// The first step of every run: read a network layer, build the reach
/// graph and validate it.

#include <map>
#include <memory>
#include <optional>
#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/network/Lakes.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/run/Derive.hpp"

namespace reachwise::run {

/// Where a network comes from.
struct NetworkSource {
  std::string path;     ///< any path or connection string GDAL opens as vector data
  std::string layer;    ///< empty: the config's layer, else the only line layer
  std::string config;   ///< TOML run file with the `[network]` table; empty: defaults
  /// A DEM (any GDAL raster) to derive the channel attributes from
  /// (deriveAttributes; the layer may lack them, io::ReadOptions::derive_attributes);
  /// overrides `[network] dem`. Empty: the run file's, if any.
  std::string dem = {};
  std::string lakes = {};  ///< polygon source of lakes; empty: the config's `lakes` (if any)
  std::string lakes_layer = {};  ///< empty: the config's `lakes_layer`, else the only polygon layer
};

/// A network as read and validated. Not movable: `graph` refers to `table`.
struct LoadedNetwork {
  NetworkSource source;
  io::NetworkConfig config;       ///< as read from the run file (or the defaults)
  network::ReachTable table;
  io::ReadSummary read;
  network::ProblemList problems;  ///< the reader's and the graph's, without repeats
  std::optional<network::ReachGraph> graph;
  /// With a DEM: what was derived and where each value came from (unset
  /// when the network has a cycle, which has no flow order to derive along).
  std::optional<Derivation> derived;
  /// Lakes, when a lakes source was given, and which reaches meet each
  /// (`lake_links`, indices into `lake_plan`; both empty when the network
  /// has errors, as it cannot be put in order then).
  std::optional<network::LakeTable> lakes;
  std::optional<network::NetworkPlan> lake_plan;
  std::vector<network::LakeLinks> lake_links;
  /// One level-pool lake per lake record (checked when read).
  std::vector<routing::LevelPool> lake_pools;
  /// The reaches dropped from the network because they lie inside a lake:
  /// reach id -> lake id (each also a `lake_piece` problem).
  std::map<std::string, std::string, std::less<>> dropped_in_lake;
  /// The `[[network.split]]` tables whose `at` names a lake (no reach):
  /// the shares of its outflowing reaches.
  std::vector<network::SplitOverride> lake_splits;

  LoadedNetwork() = default;
  LoadedNetwork(const LoadedNetwork&) = delete;
  LoadedNetwork& operator=(const LoadedNetwork&) = delete;

  bool hasErrors() const { return network::hasErrors(problems); }
  bool usUnits() const { return config.units == units::System::USCustomary; }
};

/// The network has errors, so it cannot be routed. `problems()` holds
/// every problem found (the errors among them say why).
class NetworkHasErrors : public Error {
public:
  /// `geographic`: the layer's CRS is geographic (for problemLine()).
  explicit NetworkHasErrors(network::ProblemList problems, bool geographic = false);
  const network::ProblemList& problems() const noexcept { return problems_; }
  bool geographic() const noexcept { return geographic_; }

private:
  network::ProblemList problems_;
  bool geographic_ = false;
};

/// A plain path (not a connection string such as "PG:..." nor a GDAL
/// virtual path) that does not exist is an InputError naming it, with a
/// plainer message than GDAL's.
void requireExisting(const std::string& source);

/// Reads `source`, builds the reach graph, derives the channel attributes
/// when a DEM is given (`source.dem` or `[network] dem`, with the run file's
/// `[prepare]` table) and validates it. With lakes, attaches reaches to them
/// by geometry and by the reaches' `lake_id` (network::linkLakes,
/// linkNamedLakes) and joins the network across every lake: the reaches
/// inside are dropped (`dropped_in_lake`), and each inflowing reach flows
/// into the lake's outflowing reaches (a bifurcation when there are
/// several, shared by the `[[network.split]]` table naming the lake, the
/// outflowing reaches' `split` or `default_split`), or is an outlet of the
/// network when the lake is terminal (docs/formats.md, "Lakes"). Problems with
/// single features go into the result; a source that cannot be read at
/// all throws reachwise::InputError naming the file (and layer / field).
std::unique_ptr<LoadedNetwork> loadNetwork(const NetworkSource& source);

/// `severity code reach_id fid (x, y): sentence`, the one-line form of a
/// problem (docs/formats.md).
std::string problemLine(const network::Problem& p, bool geographic = false);

/// Writes `out`: a GeoPackage with the problems (points) and the network
/// as built (lines), for a GIS. Throws InputError naming `out` when it
/// cannot be written.
void writeProblems(const std::string& out, const LoadedNetwork& net);

/// The plan routing runs on. Throws NetworkHasErrors when the network has
/// errors.
network::NetworkPlan routablePlan(const LoadedNetwork& net);

/// Every lake of `net` as the router takes it (routing::NetworkLake), in
/// the lakes layer's order (index k is `net.lakes->lakes[k]`); empty when no
/// lakes were given. `plan` is routablePlan(net). A lake with outflowing
/// reaches sits at their top, each taking its resolved share (the plan's
/// `split`; 1 for a single reach; with no reach flowing in, by the same
/// rule applied to the lake's own outflowing reaches); a terminal lake
/// takes its inflowing reaches, outlets of the plan. Throws InputError
/// naming the lakes file and the lake when a lake cannot be placed on a
/// node: a reach flowing into an outflowing reach without flowing into the
/// lake (on a `to_reach` network: give it the `lake_id`), or outflowing
/// reaches with no share. No lake is ever skipped silently.
std::vector<routing::NetworkLake> networkLakes(const LoadedNetwork& net, const network::NetworkPlan& plan);

}  // namespace reachwise::run
