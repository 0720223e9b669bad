#pragma once
/// \file
/// The `[calibrate]` table of a TOML run file (docs/formats.md,
/// "Calibration"): the settings the `calibrate` flags hold, so that a
/// calibration can be kept in one file. Flags given on the command line
/// override it.

#include <cstddef>
#include <optional>
#include <string>

namespace reachwise::io {

struct CalibrateConfig {
  std::optional<std::string> parameter;   ///< "n" or "width"
  std::optional<std::string> objective;   ///< "kge", "nse" or "nse_peak"
  std::optional<double> lower, upper;     ///< bounds of the multiplier
  std::optional<std::size_t> max_evaluations, min_observations;
  std::optional<std::size_t> max_steps;   ///< longest time axis allowed (io/ForcingAxis.hpp)
  std::optional<double> tolerance;        ///< step in log multiplier at which to stop

  /// Parses the `[calibrate]` table of `path` (absent table = all unset).
  /// Throws InputError naming the file and key (`calibrate.<key>`) for an
  /// unknown key, a value of the wrong type or a value out of range
  /// (bounds not positive, `lower` not below `upper`, `max_evaluations`
  /// below 4, `tolerance` outside (0, 1), `min_observations` below 1).
  static CalibrateConfig fromFile(const std::string& path);
  static CalibrateConfig fromString(const std::string& text, const std::string& origin);
};

}  // namespace reachwise::io
