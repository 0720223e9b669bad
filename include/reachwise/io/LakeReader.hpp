#pragma once
/// \file
/// Reading lakes and reservoirs from a GIS polygon layer (any GDAL vector
/// source) into a network::LakeTable (fields in docs/formats.md, "Lakes").

#include <map>
#include <optional>
#include <vector>
#include <string>

#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/network/Lakes.hpp"

namespace reachwise::io {

struct LakeReadOptions {
  std::string layer;                    ///< empty: the only polygon layer
  /// The network layer's CRS (WKT; empty when it has none): the lakes must
  /// be in the same CRS.
  std::string network_crs_wkt;
  /// Metres per coordinate unit for a layer without CRS (network.length_unit).
  std::optional<double> length_unit_m;
  /// `[network.lake_fields]`: source field and default of each lake
  /// attribute (kLakeFieldNames); a name not in the map is read from the
  /// field of that name, without default.
  std::map<std::string, FieldSpec, std::less<>> fields;
};

/// Reads every polygon of the layer as one lake: `lake_id` (required, unique),
/// one outflow rule (a weir: `crest_level_m`, `weir_length_m`, optional
/// `weir_coefficient`; a table: `outflow_table`, a CSV file; a linear
/// reservoir: `k_h`), optional `initial_level_m`, `bottom_level_m` and
/// `storage_table` (a level–storage or level–area CSV); the area from the
/// polygon (planar × unit², geodesic on a geographic CRS). Field names and
/// defaults come from `options.fields`; the lake's own rule fields choose
/// its rule, and defaults fill in that rule (or give the rule when the
/// lake's own fields name none). Every fault throws InputError naming the
/// file, layer, feature, lake and (source) field.
network::LakeTable readLakes(const std::string& source, const LakeReadOptions& options);

/// A lake's outflow table and the level–storage relation it may carry.
struct OutflowTableFile {
  routing::OutflowRule rule;
  /// From a third column (`area_m2` or `storage_m3`) of a `level_m` table;
  /// empty without one.
  std::vector<double> level_m, storage_m3;
};

/// Reads a lake's outflow table: a CSV with a header, first column
/// `level_m` (level–outflow) or `storage_m3` (storage–outflow), second
/// `outflow_m3s`; after `level_m,outflow_m3s` a third column `area_m2`
/// (surface area, integrated over level by the trapezoidal rule) or
/// `storage_m3` may give the level–storage relation. Throws InputError
/// naming the file and line.
OutflowTableFile readOutflowTableFile(const std::string& path);
/// The outflow rule alone of readOutflowTableFile.
routing::OutflowRule readOutflowTable(const std::string& path);

/// Reads a level–storage table: header `level_m,storage_m3` or
/// `level_m,area_m2`, then rows; levels increasing, values not negative,
/// storage 0 at the first level and increasing (areas integrated by the
/// trapezoidal rule). Throws InputError naming the file and line.
void readStorageTable(const std::string& path, std::vector<double>& level_m, std::vector<double>& storage_m3);

}  // namespace reachwise::io
