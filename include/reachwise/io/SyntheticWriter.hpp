#pragma once
/// \file
/// Writes a synthetic network (network/SyntheticNetwork.hpp) as a GeoPackage
/// line layer with the default field names, and its storm forcing as
/// CF-NetCDF lateral inflow and a CSV of inflow (docs/formats.md,
/// "Synthetic networks"). Each output is written under a temporary name
/// beside the target and renamed when complete; an existing target is
/// refused (InputError naming it) unless `overwrite`.

#include <filesystem>
#include <string>
#include <vector>

#include "reachwise/io/ForcingNetcdf.hpp"
#include "reachwise/network/SyntheticNetwork.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

class OutputCommit;  // reachwise/io/OutputFiles.hpp: with one, the file is handed to it

struct SyntheticGpkgOptions {
  std::string layer = "reaches";
  int epsg = 32633;              ///< projected CRS of the coordinates (metres)
  bool overwrite = false;
};

/// Layer `options.layer`: LineString in EPSG `options.epsg`, fields
/// reach_id, to_reach (text; null at outlets), slope, manning_n,
/// bottom_width, side_slope, length (the line's planar length, m). One
/// transaction, one reused feature.
/// With `lakes`, also a Polygon layer `lakes` in the same CRS: lake_id,
/// crest_level_m, weir_length_m (the fields io::readLakes reads).
void writeSyntheticGpkg(const std::filesystem::path& path, const network::SyntheticNetwork& net,
                        const SyntheticGpkgOptions& options = {},
                        const std::vector<network::SyntheticLake>& lakes = {}, OutputCommit* into = nullptr);

/// `lateral(time, reach)` for every reach, streamed reach by reach through
/// NetcdfForcingWriter (memory: one series).
void writeSyntheticLateralNetcdf(const std::filesystem::path& path, const network::SyntheticNetwork& net,
                                 const network::SyntheticStorm& storm, const routing::TimeAxis& axis,
                                 bool overwrite, const ForcingNetcdfOptions& options = {},
                                 OutputCommit* into = nullptr);

/// Long-form CSV `reach_id,time,discharge` of network::syntheticInflow.
void writeSyntheticInflowCsv(const std::filesystem::path& path, const network::SyntheticNetwork& net,
                             const network::SyntheticStorm& storm, const routing::TimeAxis& axis,
                             bool overwrite, OutputCommit* into = nullptr);

}  // namespace reachwise::io
