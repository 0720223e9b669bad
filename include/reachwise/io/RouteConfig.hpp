#pragma once
/// \file
/// The `[route]` table of a TOML run file: everything the `route` flags
/// hold, so that a run can be kept in one file (docs/formats.md). Flags
/// given on the command line override it. Relative paths are taken from
/// the run file's folder.

#include <cstddef>
#include <optional>
#include <string>

namespace reachwise::io {

struct RouteConfig {
  std::optional<std::string> inflow, lateral, members, method, out, schema, csv, series, hydrographs, report, report_reaches;
  std::optional<std::string> units;   ///< output units, "si" or "us" (unset: the network's)
  std::optional<std::string> save_state, initial_state;  ///< saved state written / started from
  std::optional<double> dt_s;
  std::optional<double> diffusion_below;   ///< Ponce number below which vpmc hands a reach to the diffusion wave
  std::optional<double> spread_budget;     ///< vpmc's grid on quick reaches (RouteOptions::grid_spread_budget)
  std::optional<unsigned> threads;
  std::optional<std::size_t> max_steps, max_hydrograph_rows;
  std::optional<bool> write_back, overwrite, quiet, timings;

  /// Parses the `[route]` table of `path` (absent table = all unset).
  /// Throws InputError naming the file and key for an unknown key, a value
  /// of the wrong type, or a method / step / thread count out of range.
  static RouteConfig fromFile(const std::string& path);
  static RouteConfig fromString(const std::string& text, const std::string& origin);
};

}  // namespace reachwise::io
