#pragma once
/// \file
/// Gauges: a point layer (any GDAL vector source) naming where observed
/// hydrographs were recorded, and the reach each one stands on
/// (docs/formats.md, "Gauges").

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::io {

struct GaugeRecord {
  std::string gauge_id;
  std::int64_t fid = -1;        ///< source feature id
  network::Point2 at;           ///< in the network's CRS units
  std::string reach_id;         ///< from the layer's `reach_id` field; empty: snapped to the nearest reach
};

struct GaugeTable {
  std::string source, layer;
  std::vector<GaugeRecord> gauges;
  /// How CRS units become metres: planar (`metres_per_unit`), or on the
  /// ellipsoid (a, f, degrees per unit, latitude first) for a geographic CRS.
  bool geographic = false;
  double metres_per_unit = 1.0;
  double semi_major_m = 0, flattening = 0, degrees_per_unit = 1;
  bool lat_first = false;
};

struct GaugeReadOptions {
  std::string layer;             ///< empty: the only point layer
  std::string network_crs_wkt;   ///< the gauges must be in the network's CRS
  std::optional<double> length_unit_m;  ///< metres per unit for a layer without CRS
};

/// Reads every point of the layer as one gauge: `gauge_id` (required,
/// unique), optional `reach_id`. Throws InputError naming the file, layer,
/// feature, gauge and field.
GaugeTable readGauges(const std::string& source, const GaugeReadOptions& options);

/// Where a gauge stands: on `reach_id`, compared with that reach's outflow
/// (its downstream end).
struct GaugePlace {
  std::string reach_id;
  /// Metres from the gauge to the nearest point of the reach's line; NaN
  /// when the layer's `reach_id` named the reach.
  double snap_distance_m = 0;
  /// Other reaches as near (the gauge lies on a node): the chosen one is
  /// the reach whose downstream end is nearest the gauge, then the first
  /// by id; these are listed so the user can name the reach.
  std::vector<std::string> tied;
};

/// Places every gauge (GaugeTable order) on a reach of `plan` (lines from
/// `table`, the table the plan was built from): a `reach_id` given must be
/// a reach of the plan; otherwise the nearest reach line within
/// `tolerance_m` metres (distance to the line, planar in the CRS, or
/// measured on the ellipsoid for a geographic CRS). Throws InputError
/// naming the gauge for an unknown reach or a gauge farther than the
/// tolerance from every reach (naming the nearest and its distance).
std::vector<GaugePlace> placeGauges(const GaugeTable& gauges, const network::ReachTable& table,
                                    const network::NetworkPlan& plan, double tolerance_m);

}  // namespace reachwise::io
