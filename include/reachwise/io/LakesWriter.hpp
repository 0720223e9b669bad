#pragma once
/// \file
/// The `lakes` layer of a results GeoPackage: each routed lake's polygon
/// with its peaks, attenuation, lag, peak level and storage, and volume
/// balance (docs/formats.md, "Lakes and reservoirs").

#include <string>
#include <vector>

#include "reachwise/network/Lakes.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

struct LakeOutput {
  const network::LakeRecord* lake = nullptr;
  /// The reach(es) its outflow enters, `;`-separated; empty (written as
  /// null) for a terminal lake.
  std::string outflow_reach;
  const routing::LakeRouting* routing = nullptr;
};

/// Adds a `lakes` polygon layer to the existing GeoPackage `gpkg` (in
/// `crs_wkt`, empty: none). Times in UTC. Throws InputError naming the file
/// when it cannot be written.
void writeLakesLayer(const std::string& gpkg, const std::string& crs_wkt, const routing::TimeAxis& axis,
                     const std::vector<LakeOutput>& lakes);

}  // namespace reachwise::io
