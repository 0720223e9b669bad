#pragma once
/// \file
/// How a network layer is read: which source field holds each attribute,
/// defaults for missing values, the unit system, and how topology is built.
/// Parsed from the `[network]` table of a TOML run file (docs/formats.md).

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/network/Splits.hpp"
#include "reachwise/network/geos/GeometryTopology.hpp"

namespace reachwise::io {

/// Where topology (each reach's downstream reach) comes from.
enum class TopologySource {
  Auto,      ///< from the `to_reach` field when the layer has it, else from geometry
  Ids,       ///< from the `to_reach` field (missing field is an error)
  Geometry,  ///< from line ends, even when a `to_reach` field exists
};

/// How flow direction is found when topology comes from geometry.
using Orientation = network::geos::Orientation;

/// One attribute: the field that holds it in the user's layer and a value
/// used when the field is absent from the layer or null in a feature.
struct FieldSpec {
  std::string name;                        ///< source field name
  std::optional<double> default_number;    ///< for numeric attributes, in the config's units
  std::optional<std::string> default_text; ///< for text attributes (reach_id, to_reach, shape)
  bool hasDefault() const { return default_number || default_text; }
};

struct NetworkConfig {
  std::string origin;                      ///< file the config came from ("" = built-in)
  std::string layer;                       ///< layer name; empty = choose automatically
  units::System units = units::System::SI; ///< unit system of widths, depths, lengths, elevations
  /// Unit system of the discharges in CSV forcing and observations (unset:
  /// `units`). Set apart when the network's attributes and the forcing
  /// differ, as for a calibrated network (SI) routed with US customary forcing.
  std::optional<units::System> forcing_units;
  units::System forcingUnits() const { return forcing_units.value_or(units); }
  /// Metres per coordinate unit for a layer without a CRS. Without a CRS
  /// and without this, reading is refused.
  std::optional<double> length_unit_m;
  TopologySource topology = TopologySource::Auto;
  /// Snapping distance for line ends in metres, on any CRS (`snap_tolerance_m`;
  /// default 5 m).
  double snap_tolerance_m = 5.0;
  /// Radius in metres within which an unconnected end near another line is a
  /// probable gap (`gap_search_m`); unset = 10 × snap_tolerance_m.
  std::optional<double> gap_search_m;
  Orientation orientation = Orientation::Auto;
  std::vector<std::string> outlets;        ///< reach ids of outlets (Orientation::Outlets)
  /// `unresolved_gaps`: "error" (true, default) reports a probable gap as a
  /// `probable_gap` error; "warn" (false) as an `unresolved_gap` warning.
  bool gaps_are_errors = true;
  /// `unconnected`: reach ids whose ends are never reported as probable gaps.
  std::vector<std::string> unconnected;
  /// `[[network.connect]]`: ends to join (`from`, and `to` a reach id or an
  /// [x, y] point in the layer's CRS units). With topology from ids, a reach
  /// target sets `to_reach` of a reach that has none.
  std::vector<network::geos::Connection> connections;
  /// `default_split` ("width", "equal", "none"; default "width") and the
  /// `[[network.split]]` tables; `origin` names this file. Checked against
  /// the network when the graph is built (network::resolveSplits).
  network::SplitRules splits;
  /// `dem`: a DEM (any GDAL raster; a relative path is taken from the run
  /// file's folder) to derive bed slopes and channel sections from
  /// (run::deriveAttributes), and, with orientation "elevation", the end
  /// elevations of lines without Z. Empty: none.
  std::string dem;
  /// `lakes`: a polygon source of lakes and reservoirs (a path relative to
  /// the run file's folder, or a connection string); empty: none.
  /// `lakes_layer`: its layer; empty: the only polygon layer.
  std::string lakes, lakes_layer;
  /// Keyed by the canonical attribute name (kFieldNames); every name is present.
  std::map<std::string, FieldSpec, std::less<>> fields;
  /// `[network.lake_fields]`: the lakes layer's field names and defaults,
  /// keyed by the canonical lake attribute name (kLakeFieldNames); every
  /// name is present. A text default of `outflow_table` or `storage_table`
  /// that is a relative path is taken from the run file's folder.
  std::map<std::string, FieldSpec, std::less<>> lake_fields;

  /// Default field names (docs/formats.md, "Fields"), SI, automatic topology.
  NetworkConfig();

  /// Parses a TOML file; throws InputError naming the file (and key) on a
  /// syntax error, an unknown key, or a value of the wrong type.
  static NetworkConfig fromFile(const std::string& path);
  /// Same, from text; `origin` names it in messages.
  static NetworkConfig fromString(const std::string& text, const std::string& origin);

  /// Throws InternalError for a name not in kFieldNames.
  const FieldSpec& field(std::string_view canonical) const;
  /// Same for a lake attribute (kLakeFieldNames).
  const FieldSpec& lakeField(std::string_view canonical) const;
};

/// The canonical attribute names, which are also the default source field names.
inline constexpr std::string_view kFieldNames[] = {
    "reach_id",     "to_reach",       "slope",         "manning_n",    "bottom_width",
    "side_slope",   "length",         "shape",         "diameter",     "bank_depth",
    "floodplain_width", "floodplain_n", "muskingum_k_h", "muskingum_x", "split",
    "up_elevation", "down_elevation", "base_flow", "lake_id"};

/// The canonical lake attribute names, which are also the default source
/// field names of a lakes layer (docs/formats.md, "Lakes and reservoirs").
inline constexpr std::string_view kLakeFieldNames[] = {
    "lake_id",       "crest_level_m", "weir_length_m",   "weir_coefficient", "outflow_table",
    "storage_table", "k_h",           "initial_level_m", "bottom_level_m"};

/// Whether a lake attribute holds text (a default must then be text).
bool isTextLakeField(std::string_view canonical);

/// Parses a length unit name ("m", "ft", "us_ft", "km") or throws InputError.
double metresPerUnit(const std::string& name, const std::string& origin);

}  // namespace reachwise::io
