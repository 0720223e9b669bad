#pragma once
/// \file
/// Channel attributes derived from terrain: bed slopes and end elevations
/// from a DEM, drainage areas and sections from hydraulic geometry. One
/// step used by `reachwise prepare` (which writes the result) and by
/// `check` and `route` with `[network] dem` (which route it directly).

#include <cstddef>
#include <cstdint>
#include <limits>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "reachwise/io/PrepareConfig.hpp"
#include "reachwise/io/PreparedWriter.hpp"

namespace reachwise::run {

struct LoadedNetwork;

/// What the derivation did, counted over the reaches.
struct DerivationSummary {
  std::size_t slope_from_dem = 0;
  std::size_t slope_from_field = 0;
  std::size_t slope_from_default = 0;
  std::size_t slope_missing = 0;     ///< no field, no DEM value, no default (an error each)
  std::size_t floored = 0;           ///< DEM slopes raised to the minimum (among slope_from_dem)
  std::size_t interpolated = 0;      ///< reaches without DEM profile, elevations from neighbours
  std::size_t with_nodata = 0;       ///< reaches with at least one invalid DEM sample
  double min_slope = std::numeric_limits<double>::quiet_NaN();  ///< of the slopes derived or kept
  double max_slope = std::numeric_limits<double>::quiet_NaN();
  std::size_t width_from_geometry = 0;  ///< bottom widths from the hydraulic-geometry power laws
  std::size_t width_from_field = 0;     ///< bottom widths kept from the layer
  double min_width_m = std::numeric_limits<double>::quiet_NaN();  ///< of the bottom widths
  double max_width_m = std::numeric_limits<double>::quiet_NaN();
  /// Bottom width range (min, max, metres) per Strahler order.
  std::map<std::uint16_t, std::pair<double, double>> width_by_order;
};

struct Derivation {
  std::vector<io::PreparedReach> reaches;  ///< per graph vertex, with provenance
  DerivationSummary summary;
};

/// Samples the DEM at `dem_path` along every reach of `net`, conditions the
/// elevations, derives drainage areas and channel sections (`config`, the
/// `[prepare]` table), and writes the values into `net.table` (slope, end
/// elevations, section; layer values win unless `config.replace` names
/// them), then rebuilds `net.graph` (bifurcation shares by width see the
/// derived widths). Problems go into `net.problems`. Precondition: the
/// graph has a topological order (no cycle). Throws InputError naming the
/// file for a DEM or raster that cannot be read.
Derivation deriveAttributes(LoadedNetwork& net, const std::string& dem_path, const io::PrepareConfig& config);

}  // namespace reachwise::run
