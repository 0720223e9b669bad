#pragma once
/// \file
/// The GeoPackage `reachwise prepare` writes: the network as built, with
/// the derived attributes and where each came from, ready to edit in a GIS
/// and to route (docs/formats.md, "Preparing a network").

#include <cstddef>
#include <functional>
#include <string>
#include <vector>

#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

class GDALDataset;
class OGRSpatialReference;

namespace reachwise::io {

class OutputCommit;

/// The derived values of one reach (a vertex of the graph).
struct PreparedReach {
  /// Muskingum K (h) and X to write instead of the record's; NaN: the record's.
  double muskingum_k_h = network::ReachRecord::kUnset;
  double muskingum_x = network::ReachRecord::kUnset;
  double slope = network::ReachRecord::kUnset;
  std::string slope_source;        ///< "field", "dem", "default", "" = none
  double up_elevation_m = network::ReachRecord::kUnset;
  double down_elevation_m = network::ReachRecord::kUnset;
  std::string elevation_source;    ///< "field", "dem", "" = none
  double dem_raw_slope = network::ReachRecord::kUnset;  ///< NaN: no profile fit
  std::size_t dem_samples = 0;
  std::size_t dem_valid_samples = 0;
  std::string dem_flags;           ///< terrain::flagNames
  /// The section written: the layer's, with the derived widths, side
  /// slope, bank depth and Manning's n filled in.
  hydraulics::SectionSpec section;
  double drainage_area_km2 = network::ReachRecord::kUnset;
  std::string area_source;         ///< terrain::areaSourceName, "" = none
  std::string bottom_width_source; ///< terrain::attributeSourceName ("field", "hydraulic_geometry", ...)
  std::string side_slope_source;
  std::string manning_n_source;
  std::string bank_depth_source;   ///< two-stage sections only
};

/// Writes `path`, a GeoPackage with
///  - `reaches`: one line per record of the graph's table, in flow order
///    (cut pieces and reversed lines as built), with the fields of the
///    source layer that hold no reach attribute, then every attribute the
///    reader read under its canonical name in SI units (reach_id, to_reach,
///    slope, manning_n, ...), then the provenance fields;
///  - `problems`: points, as in writeProblemsGeoPackage.
/// `source` and `layer` name the layer read (its fields are copied per
/// source feature id); `config` its field mapping. Built under a temporary
/// name and renamed onto `path`: on failure nothing is left behind and
/// InputError names `path`. An existing `path` is replaced only when
/// `overwrite`.
/// `extra`, when given, adds further layers to the same file inside the
/// same transaction (before the rename). With `into`, the finished file is
/// handed to it instead of renamed (put in place with other outputs).
void writePreparedGeoPackage(const std::string& path, bool overwrite, const network::ReachGraph& graph,
                             const NetworkConfig& config, const std::vector<PreparedReach>& prepared,
                             const network::ProblemList& problems,
                             const std::function<void(GDALDataset&, OGRSpatialReference*)>& extra = {},
                             OutputCommit* into = nullptr);

}  // namespace reachwise::io
