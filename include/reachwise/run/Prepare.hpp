#pragma once
/// \file
/// `reachwise prepare`: a network's bed slopes and end elevations from a
/// DEM, drainage areas and channel sections from hydraulic geometry, written with the network as built to a new GeoPackage that can be
/// edited in a GIS and routed as it is (docs/formats.md, "Preparing a
/// network").

#include <cstddef>
#include <limits>
#include <string>

#include "reachwise/network/Problem.hpp"
#include "reachwise/run/Derive.hpp"
#include "reachwise/run/Network.hpp"

namespace reachwise::run {

struct PrepareRequest {
  NetworkSource network;  ///< `config` also supplies the `[prepare]` table
  std::string dem;        ///< any raster GDAL opens
  std::string out;        ///< the GeoPackage to write
  bool overwrite = false; ///< replace an existing `out`
};

struct PrepareSummary : DerivationSummary {
  std::size_t reaches = 0;
  network::ProblemList problems;     ///< the reader's, the graph's and the derivation's
  bool geographic = false;           ///< the layer's CRS is geographic (for run::problemLine)
  bool hasErrors() const { return network::hasErrors(problems); }
};

/// Reads the network (the layer may lack slopes, widths, side slopes and
/// Manning's n), samples the DEM along every reach, conditions the
/// elevations, derives drainage areas and sections ([prepare] keys) and
/// writes `out` (layers
/// `reaches` and `problems`). Slopes and elevations in the layer win unless
/// `[prepare] replace` names them. The output is written even when the
/// network has errors (they are in its `problems` layer), except that a
/// network with a cycle throws NetworkHasErrors and writes nothing.
/// Throws InputError naming the file for an unreadable network, DEM or
/// run file, or an output that exists without `overwrite`.
PrepareSummary prepare(const PrepareRequest& request);

}  // namespace reachwise::run
