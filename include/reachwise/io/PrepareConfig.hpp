#pragma once
/// \file
/// How `reachwise prepare` derives channel attributes: bed slopes from a
/// DEM, widths from drainage area and stream order. The `[prepare]` table
/// of a TOML run file (docs/formats.md, "Preparing attributes (`[prepare]`)").

#include <optional>
#include <string>
#include <vector>

#include "reachwise/terrain/DrainageArea.hpp"
#include "reachwise/terrain/HydraulicGeometry.hpp"

namespace reachwise::io {

struct PrepareConfig {
  std::string origin;                 ///< file the config came from ("" = built-in)
  /// `area_field`: the layer's field holding the drainage area at each
  /// reach's downstream end; empty = none.
  std::string area_field;
  /// `area_field_unit` ("km2", "m2", "ha", "mi2"; default "km2") as km² per unit.
  double area_field_km2_per_unit = 1.0;
  /// `area_raster`, `area_raster_unit`, `area_search_m` (path relative to the run file).
  std::optional<terrain::AreaRaster> area_raster;
  /// `[prepare.length_relation]` coefficient, exponent.
  terrain::LengthRelation length_relation;
  /// `class_field`: the layer's field the `value` of a `[[prepare.class]]` is compared with.
  std::string class_field;
  /// `[prepare.width]`, `[prepare.depth]` (or `depth = false`), `side_slope`,
  /// `manning_n`, `[[prepare.class]]`, `replace`. The per-reach vectors
  /// (class_values) stay empty: they come from the layer.
  terrain::HydraulicGeometryOptions geometry;
  double min_slope = 1e-4;        ///< `min_slope`: DEM slopes below are raised to it
  double rise_threshold_m = 2.0;  ///< `rise_threshold_m`: larger profile rises are reported
  double sample_spacing_m = 0;    ///< `sample_spacing_m`: 0 = one DEM cell
  /// From `replace`: the DEM attributes ("slope", "elevations") the DEM
  /// replaces even where the layer has them (the channel attributes of the
  /// same list are in geometry.replace).
  std::vector<std::string> replace;

  /// `attribute` ("slope" or "elevations") is in `replace`.
  bool replaces(const std::string& attribute) const;

  /// The `[prepare]` table of a TOML file; the defaults when it has none.
  /// Throws InputError naming the file and key on a syntax error, an
  /// unknown key, or a value of the wrong type or out of range.
  static PrepareConfig fromFile(const std::string& path);
  /// Same, from text; `origin` names it in messages and is the base of relative paths.
  static PrepareConfig fromString(const std::string& text, const std::string& origin);

  /// Area options for terrain::drainageArea, with the per-reach field
  /// values (`field_values`, in the field's unit, NaN = null) converted to km².
  terrain::AreaOptions areaOptions(std::vector<double> field_values = {}) const;
};

}  // namespace reachwise::io
