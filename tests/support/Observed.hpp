#pragma once
// Test support: invented gauge records made from a run's own hydrographs
// (a CSV written by `route --csv DIR --hydrographs ...`), so that skill
// scores follow from their definitions.

#include <filesystem>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>

#include "support/Cli.hpp"

namespace testsupport {

inline const std::string kSampleDir = REACHWISE_SOURCE_DIR "/sample-network/";
inline const std::string kSampleForcing =
    " --inflow " + kSampleDir + "inflow.csv --lateral " + kSampleDir + "lateral.csv";

/// Routes the sample network, writing the hydrographs of `reaches` (e.g.
/// "R13,R1") to `dir`/csv/hydrographs.csv.
inline CliRun routeSampleHydrographs(const std::filesystem::path& dir, const std::string& reaches) {
  return runReachwise("route " + kSampleDir + "network.gpkg" + kSampleForcing + " --out " + (dir / "a.gpkg").string() +
                      " --csv " + (dir / "csv").string() + " --hydrographs " + reaches + " --quiet");
}

/// Writes `out`, long-form observations: each row of `hydrographs`
/// (reach_id,time,q,...) with q times `factor(reach_id)`, keyed by `key`
/// (the reach id when empty); with `gap_every` > 0, every gap_every-th value
/// (the 4th of each run of them) is NA. Returns how many values are not NA.
inline std::size_t writeObserved(const std::filesystem::path& hydrographs, const std::filesystem::path& out,
                                 const std::function<double(const std::string&)>& factor,
                                 std::size_t gap_every = 0, const std::string& key = {}) {
  std::ifstream in(hydrographs);
  std::ofstream obs(out);
  obs << "reach_id,time,discharge\n";
  std::string line;
  std::getline(in, line);
  std::size_t n = 0, present = 0;
  while (std::getline(in, line)) {
    std::stringstream row(line);
    std::string id, time, q;
    std::getline(row, id, ',');
    std::getline(row, time, ',');
    std::getline(row, q, ',');
    const bool missing = gap_every > 0 && n++ % gap_every == 3;
    present += !missing;
    obs << (key.empty() ? id : key) << "," << time << ","
        << (missing ? std::string("NA") : std::to_string(std::stod(q) * factor(id))) << "\n";
  }
  return present;
}

}  // namespace testsupport
