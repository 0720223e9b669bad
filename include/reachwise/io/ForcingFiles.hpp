#pragma once
/// \file
/// Opening the forcing of a run from the files a user names: the inflow
/// and lateral files may each be CSV (read whole, resampled when a step is
/// asked for) or
/// CF-NetCDF (read reach by reach as routing asks). The file kind is known
/// from its first bytes, not its name.

#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/io/Forcing.hpp"
#include "reachwise/io/ForcingCsv.hpp"

namespace reachwise::io {

/// True when the file starts with a netCDF classic or HDF5 signature.
bool isNetcdfFile(const std::filesystem::path& path);

struct OpenedForcing {
  std::unique_ptr<ForcingSource> source;
  std::vector<std::string> warnings;   ///< from the CSV readers, one line each
};

/// Opens the forcing. At least one path must be given. A NetCDF file named
/// for a kind must hold that kind's variable. When NetCDF is involved its
/// time axis is the run's: CSV files are resampled onto it (as with
/// `on_axis`), and a `dt_s`, start, end or `on_axis` that disagrees with it
/// is an InputError naming the file (NetCDF forcing is not resampled). Two
/// NetCDF files must share one axis.
OpenedForcing openForcing(const std::optional<std::filesystem::path>& inflow,
                          const std::optional<std::filesystem::path>& lateral,
                          const CsvForcingOptions& options = {});

}  // namespace reachwise::io
