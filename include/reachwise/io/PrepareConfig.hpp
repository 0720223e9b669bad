#pragma once
/// \file
/// The `[prepare]` table of a TOML run file: settings of `reachwise
/// prepare` (docs/formats.md, "Preparing a network").

#include <string>
#include <vector>

namespace reachwise::io {

struct PrepareConfig {
  std::string origin;             ///< file the table came from ("" = built-in defaults)
  double min_slope = 1e-4;        ///< `min_slope`: DEM slopes below are raised to it
  double rise_threshold_m = 2.0;  ///< `rise_threshold_m`: larger profile rises are reported
  double sample_spacing_m = 0;    ///< `sample_spacing_m`: 0 = one DEM cell
  /// `replace`: attributes the DEM replaces even where the layer has them
  /// ("slope", "elevations").
  std::vector<std::string> replace;

  bool replaces(const std::string& attribute) const;

  /// Parses the `[prepare]` table of `path` (absent table = defaults).
  /// Throws InputError naming the file and key for an unknown key, a value
  /// of the wrong type or out of range.
  static PrepareConfig fromFile(const std::string& path);
  static PrepareConfig fromString(const std::string& text, const std::string& origin);
};

}  // namespace reachwise::io
