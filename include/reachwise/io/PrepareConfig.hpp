#pragma once
/// \file
/// How channel attributes are prepared from drainage area and stream
/// order: the `[prepare]` table of a TOML run file (docs/formats.md,
/// "Preparing attributes (`[prepare]`)").

#include <optional>
#include <string>

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
