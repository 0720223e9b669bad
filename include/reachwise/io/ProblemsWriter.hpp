#pragma once
/// \file
/// The `--problems` GeoPackage of `reachwise check`: where each problem is,
/// and the network as reachwise built it, for a GIS user to inspect.

#include <string>

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

class GDALDataset;
class OGRSpatialReference;

namespace reachwise::io {

/// Writes a GeoPackage at `path` with
///  - `problems`: points (code, severity, reach_id, fid, message); a problem
///    without a location gets an empty geometry; the key column is `problem_id`
///    (`row_id` in `network`) so that `fid` holds the source feature id;
///  - `network`: lines in flow direction (reach_id, fid, to_reach, flipped, split,
///    strahler, basin), one per record of the graph's table. `split` is the
///    share the graph uses for a branch of a bifurcation (ReachGraph::share),
///    null for other reaches. `flipped` is 1
///    when the line as stored in the source runs against the flow: reversed
///    by the reader (ReachRecord::reoriented, a `flipped_line` problem) or
///    judged so from the links (ReachGraph::flipped).
///    `strahler` is null when the network has a cycle.
/// Both layers are in the table's CRS. The file is written under a temporary
/// name beside `path` and renamed onto it on success (replacing an existing
/// file); on failure nothing is left behind and InputError names `path`.
/// "info", "warning" or "error": the spelling used in every output.
const char* severityName(network::Severity severity);

void writeProblemsGeoPackage(const std::string& path, const network::ReachGraph& graph,
                             const network::ProblemList& problems);

/// Adds the `problems` point layer described above to `ds` (a GeoPackage
/// being written to `path`, named in errors), in `srs` (may be null).
void addProblemsLayer(const std::string& path, GDALDataset& ds, OGRSpatialReference* srs,
                      const network::ProblemList& problems);

}  // namespace reachwise::io
