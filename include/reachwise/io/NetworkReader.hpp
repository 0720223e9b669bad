#pragma once
/// \file
/// Reading a GIS line layer (any GDAL vector source) into a ReachTable.

#include <string>
#include <vector>

#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/network/geos/GeometryTopology.hpp"

namespace reachwise::io {

struct ReadOptions {
  std::string layer;      ///< overrides config.layer when set (the --layer flag)
  NetworkConfig config;   ///< field mapping, units, topology settings
  /// The caller derives the channel attributes itself (`reachwise
  /// prepare`: bed slope from a DEM, bottom width, side slope and Manning's
  /// n from hydraulic geometry): the layer needs none of these fields, a
  /// reach without them is no problem (they stay NaN), and the config's
  /// defaults for them are not applied. Values in the layer (and slopes
  /// from the elevation fields) are still read.
  bool derive_attributes = false;
  /// A DEM: with topology from geometry and orientation "elevation", line
  /// ends without Z take the DEM's elevation there (bilinear), so lines
  /// without Z can be oriented downhill. Empty: none.
  std::string dem;
};

/// What the reader did, for the CLI's report.
struct ReadSummary {
  std::size_t features = 0;        ///< features in the layer
  std::size_t skipped = 0;         ///< features left out (no usable id or geometry; see problems)
  bool topology_from_geometry = false;
  double snap_tolerance_m = 0;     ///< metres, when topology came from geometry
  double gap_search_m = 0;         ///< metres, when topology came from geometry
  network::geos::TopologySummary topology;
  std::size_t ends_from_dem = 0;   ///< lines whose end elevations came from ReadOptions::dem
};

/// Reads the network layer of `source` (a path or connection string GDAL
/// can open as vector data).
///
/// Layer: `options.layer`, else `config.layer`, else the only line layer.
/// Attributes are mapped by `config.fields` and converted to SI. Lengths
/// come from the `length` field when present, else from the geometry
/// (planar × the CRS linear unit; geodesic on the CRS ellipsoid for a
/// geographic CRS). Topology comes from the `to_reach` field or from the
/// geometry (network::geos::buildTopologyFromGeometry), per config.topology;
/// either way `to_reach` of every record is filled on return.
///
/// Throws InputError (naming file, layer, field) when the source cannot be
/// opened, the layer is ambiguous or absent, a required field is missing,
/// or lengths cannot be measured (no CRS and no `length_unit`).
/// Per-feature faults go into `problems` (codes in docs/formats.md);
/// features without a usable id or line geometry are left out of the table.
network::ReachTable readNetwork(const std::string& source, const ReadOptions& options,
                                network::ProblemList& problems, ReadSummary* summary = nullptr);

/// Names of the layers of `source` whose geometry type is a line type.
std::vector<std::string> lineLayers(const std::string& source);

}  // namespace reachwise::io
