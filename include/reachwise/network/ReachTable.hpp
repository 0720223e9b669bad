#pragma once
/// \file
/// One row per line feature of the user's layer, as read by the io layer.
/// Plain data: the core never sees GDAL types. Units are SI (the reader
/// converts US customary input).

#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"

namespace reachwise::network {

struct Point3 {
  double x = 0, y = 0;
  double z = std::numeric_limits<double>::quiet_NaN();  ///< NaN when the layer has no Z
};

struct ReachRecord {
  static constexpr double kUnset = std::numeric_limits<double>::quiet_NaN();

  std::string id;                        ///< external reach id, text form
  /// For a piece of a line cut by topology from geometry: the line's own
  /// id (the piece's id is `<line_id>.<piece>`); empty when not cut.
  std::string line_id;
  std::uint32_t piece = 0;               ///< 1 = where the flow enters the line, 2, ...; 0 when not cut
  std::int64_t fid = -1;                 ///< source feature id (for messages)
  std::optional<std::string> to_reach;   ///< downstream id; nullopt/empty = outlet (or unknown)
  std::vector<Point3> line;              ///< vertices in CRS units, digitising order unless `reoriented`
  bool reoriented = false;               ///< `line` was reversed to run with the flow (topology from geometry)
  double length_m = kUnset;              ///< from the `length` field or the geometry
  double geometry_length_m = kUnset;     ///< always from the geometry (planar or geodesic)
  hydraulics::SectionSpec section;       ///< shape, widths, n, slope (NaN = missing)
  double muskingum_k_h = kUnset;
  double muskingum_x = kUnset;
  double split = kUnset;                 ///< share at a bifurcation, NaN = not given
  double up_elevation_m = kUnset;        ///< optional elevation fields
  double down_elevation_m = kUnset;
  double base_flow_m3s = kUnset;         ///< constant flow entering along the reach, NaN = none
  /// The lake the reach flows into, from the optional `lake_id` field:
  /// it flows into that lake whatever its geometry (network::linkNamedLakes).
  /// Empty = none. Read only when lakes are given.
  std::string lake_id;
};

struct ReachTable {
  std::string source;                    ///< path or connection string
  std::string layer;
  std::string crs_wkt;                   ///< empty when the layer has no CRS
  bool geographic = false;               ///< CRS is geographic (lengths are geodesic)
  bool has_to_reach = false;             ///< the downstream-id field exists
  std::vector<ReachRecord> reaches;
};

}  // namespace reachwise::network
