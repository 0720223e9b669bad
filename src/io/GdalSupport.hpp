#pragma once
// GDAL helpers shared by the readers and writers in src/io (private).

#include <ogrsf_frmts.h>

#include <memory>
#include <optional>
#include <string>

#include "reachwise/Error.hpp"

namespace reachwise::io {

/// Throws InputError at `where` with `what`, followed by GDAL's last error
/// message in parentheses when there is one.
[[noreturn]] void throwWithGdalMessage(const InputLocation& where, const std::string& what);

/// The same, at `file` (and `layer`, when given).
[[noreturn]] inline void throwWithGdalMessage(const std::string& file, const std::string& what,
                                              const std::string& layer = {}) {
  InputLocation at;
  at.file = file;
  at.layer = layer;
  throwWithGdalMessage(at, what);
}

/// The CRS of a layer from its WKT, with coordinates taken x = easting /
/// longitude as the reader stored them; null for an empty or unreadable WKT.
std::unique_ptr<OGRSpatialReference> spatialReferenceFromWkt(const std::string& crs_wkt);

/// The CRS of `layer`, or null when it has none (GDAL's "Undefined ..."
/// included). Throws InputError at `where` when it is set and is not the
/// network's (`network_crs_wkt`; empty: no check), telling the user to
/// reproject `what` ("the lakes", "the gauges"). Axis order and WKT dialect
/// do not count as a difference.
const OGRSpatialReference* layerCrsMatching(OGRLayer& layer, const std::string& network_crs_wkt,
                                            const InputLocation& where, const std::string& what);

/// The layer to read from `ds`: `wanted` when given (else an InputError at
/// `where` listing the layers), else the only layer whose geometry type
/// `fits` (several: an InputError naming them and the `config_key` to
/// choose with; a lone layer of unknown type is taken). `kind` names the
/// geometry in messages ("polygon", "point").
OGRLayer* chooseLayer(GDALDataset& ds, const std::string& wanted, const InputLocation& where,
                      bool (*fits)(OGRwkbGeometryType), const std::string& kind, const std::string& config_key);

/// A text field of `f`, blanks trimmed; unset when the field is absent or null.
std::optional<std::string> trimmedText(OGRFeature& f, const char* name);

/// How a layer's CRS units become metres: planar (`metres_per_unit`), or on
/// the ellipsoid (semi-major axis, flattening, degrees per unit, latitude
/// first) for a geographic CRS, where `metres_per_unit` is a nominal
/// 111 320 m per degree (for tolerances; LineLength::metresPerUnit).
struct LayerMetric {
  bool geographic = false;
  double metres_per_unit = 1.0;
  double semi_major_m = 0, flattening = 0, degrees_per_unit = 1;
  bool lat_first = false;
};

/// The metric of `srs` (layerCrsMatching); without a CRS, `length_unit_m`
/// (network.length_unit), else an InputError at `where` naming `what`
/// ("the lakes layer").
LayerMetric layerMetric(const OGRSpatialReference* srs, std::optional<double> length_unit_m,
                        const InputLocation& where, const std::string& what);

/// Adds a field to `layer`; throws InputError naming `path` when GDAL refuses.
void addLayerField(const std::string& path, OGRLayer& layer, const char* name, OGRFieldType type,
                   OGRFieldSubType subtype = OFSTNone);

}  // namespace reachwise::io
