#pragma once
/// \file
/// Reading lakes and reservoirs from a GIS polygon layer (any GDAL vector
/// source) into a network::LakeTable (fields in docs/formats.md, "Lakes").

#include <optional>
#include <string>

#include "reachwise/network/Lakes.hpp"

namespace reachwise::io {

struct LakeReadOptions {
  std::string layer;                    ///< empty: the only polygon layer
  /// The network layer's CRS (WKT; empty when it has none): the lakes must
  /// be in the same CRS.
  std::string network_crs_wkt;
  /// Metres per coordinate unit for a layer without CRS (network.length_unit).
  std::optional<double> length_unit_m;
};

/// Reads every polygon of the layer as one lake: `lake_id` (required, unique),
/// one outflow rule (a weir: `crest_level_m`, `weir_length_m`, optional
/// `weir_coefficient`; a table: `outflow_table`, a CSV file; a linear
/// reservoir: `k_h`), optional `initial_level_m` and `bottom_level_m`; the
/// area from the polygon (planar × unit², geodesic on a geographic CRS).
/// Every fault throws InputError naming the file, layer, feature, lake and
/// field.
network::LakeTable readLakes(const std::string& source, const LakeReadOptions& options);

/// Reads a lake's outflow table: a CSV with a header, first column
/// `level_m` (level–outflow) or `storage_m3` (storage–outflow), second
/// `outflow_m3s`. Throws InputError naming the file and line.
routing::OutflowRule readOutflowTable(const std::string& path);

}  // namespace reachwise::io
