#pragma once
/// \file
/// The GeoPackage `reachwise calibrate` writes: the network with the
/// calibrated attributes, ready to route, and what the calibration did
/// (docs/formats.md, "Calibration").

#include <limits>
#include <string>
#include <vector>

#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/io/PreparedWriter.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::io {

class OutputCommit;

/// One calibrated sub-basin.
struct CalibrationRow {
  std::string gauge_id, reach_id, parameter, objective;
  double multiplier = 1, lower = 0, upper = 0;
  bool at_bound = false;
  std::size_t reaches = 0, evaluations = 0;
  gauges::SkillScores before, after;
  double objective_before = 0, objective_after = 0;
  double muskingum_x = std::numeric_limits<double>::quiet_NaN();  ///< fitted X (kx); NaN otherwise
};

/// Writes `path` (temporary name, then renamed; refused when it exists
/// without `overwrite`): `reaches` as writePreparedGeoPackage writes them
/// (`prepared` per graph vertex), `problems`, a `calibration` table (one
/// row per sub-basin, upstream first) and a `gauges` point layer (every
/// gauge's scores on the calibrated network, as `route --observed`).
void writeCalibratedGeoPackage(const std::string& path, bool overwrite, const network::ReachGraph& graph,
                               const NetworkConfig& config, const std::vector<PreparedReach>& prepared,
                               const network::ProblemList& problems, const std::vector<CalibrationRow>& rows,
                               const std::vector<GaugeOutput>& gauges, int utc_offset_min,
                               OutputCommit* into = nullptr);

}  // namespace reachwise::io
