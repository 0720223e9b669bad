#pragma once
/// \file
/// Channel attributes from drainage area and stream order: bankfull width
/// (and depth) by power laws of drainage area, side slope and Manning's n
/// from a table keyed on Strahler order or on a class field, within the
/// existing section kinds (docs/formats.md, "Preparing attributes").
///
/// Bankfull hydraulic geometry: w = a · A^b, d = c · A^f, A in km², w and
/// d in metres. Default coefficients are the United States-wide relation of
/// Bieger, K., Rathjens, H., Allen, P. M., Arnold, J. G. (2015).
/// Development and evaluation of bankfull hydraulic geometry relationships
/// for the physiographic regions of the United States. Journal of the
/// American Water Resources Association 51(3), 842-858:
/// w = 2.70 A^0.352, d = 0.30 A^0.213 (from memory). They are placeholders
/// to be replaced by a regional relation fitted to local data.
///
/// Bottom width of a trapezoid (and of a two-stage main channel) from the
/// bankfull (top) width w, side slope z and bankfull depth d:
///     b = max(w − 2 z d, w / 2)
/// (a trapezoid of top width w at depth d has bottom w − 2 z d; the floor
/// w / 2 keeps a channel bottom where steep power-law depths and flat banks
/// would leave none). Without a depth, w is taken as the bottom width.
/// Pipes (circle sections) keep their geometry; only a missing n is filled.

#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/terrain/DrainageArea.hpp"

namespace reachwise::terrain {

/// y = a · A^b with A in km².
struct PowerLaw {
  double a = 0;
  double b = 0;
  double at(double area_km2) const;
};

/// Defaults: Bieger et al. (2015), United States (from memory; placeholders).
inline constexpr PowerLaw kDefaultWidth{2.70, 0.352};
inline constexpr PowerLaw kDefaultDepth{0.30, 0.213};
/// Default side slope (H:V), a placeholder for a local value.
inline constexpr double kDefaultSideSlope = 2.0;
/// Default Manning's n of a natural main channel; Chow (1959),
/// Open-Channel Hydraulics, Table 5-6 gives about 0.025-0.05 for clean
/// natural streams (from memory). A placeholder for a local value.
inline constexpr double kDefaultManningN = 0.035;

/// One row of the class table: reaches it applies to, and their values.
struct ChannelClass {
  /// Keyed on Strahler order: the orders listed, or min_order..max_order
  /// when the list is empty. Ignored when `value` is set.
  std::vector<std::uint16_t> orders;
  std::uint16_t min_order = 0;
  std::uint16_t max_order = 0;
  /// Keyed on the class field: the reach's value of that field.
  std::optional<std::string> value;
  std::optional<double> side_slope;
  std::optional<double> manning_n;
  std::string key;  ///< where it was configured ("prepare.class[2]")

  bool matches(std::uint16_t order, const std::string* class_value) const;
};

/// A section attribute that can be derived.
enum class Attribute : std::uint8_t { BottomWidth, BankDepth, SideSlope, ManningN };
/// Its name in run files and outputs: "bottom_width", "bank_depth", "side_slope", "manning_n".
std::string_view attributeName(Attribute attribute) noexcept;
/// The attribute named `name`, or nullopt.
std::optional<Attribute> attributeNamed(std::string_view name) noexcept;

/// Where a derived attribute came from.
enum class AttributeSource : std::uint8_t {
  Field,              ///< the layer's value, kept
  HydraulicGeometry,  ///< a power law of drainage area
  ClassTable,         ///< the class table (by Strahler order or class field)
  Default,            ///< the built-in or configured default
  None,               ///< not derived and not given (e.g. a width without a drainage area)
};
/// Its name in outputs: "field", "hydraulic_geometry", "class_table", "default", "none".
std::string_view attributeSourceName(AttributeSource source) noexcept;

struct HydraulicGeometryOptions {
  PowerLaw width = kDefaultWidth;
  /// Bankfull depth; nullopt = no depth relation (bottom width = bankfull width).
  std::optional<PowerLaw> depth = kDefaultDepth;
  double default_side_slope = kDefaultSideSlope;
  double default_manning_n = kDefaultManningN;
  /// Checked in order; for each attribute the first matching class that sets it wins.
  std::vector<ChannelClass> classes;
  /// Per vertex, the reach's value of the class field (empty vector = no
  /// class field; the caller reads it from the layer). A class keyed on a
  /// value never matches a reach without one.
  std::vector<std::optional<std::string>> class_values;
  /// Attributes whose layer values are replaced by derived ones; the others
  /// keep a value the layer gives.
  std::vector<Attribute> replace;
};

struct DerivedSection {
  hydraulics::SectionSpec section;  ///< the record's section with derived values filled in
  std::uint16_t strahler_order = 0;
  double area_km2 = std::numeric_limits<double>::quiet_NaN();
  double bankfull_width_m = std::numeric_limits<double>::quiet_NaN();  ///< NaN without an area
  double bankfull_depth_m = std::numeric_limits<double>::quiet_NaN();  ///< NaN without depth relation or area
  AttributeSource bottom_width = AttributeSource::None;
  AttributeSource bank_depth = AttributeSource::None;  ///< two-stage sections only
  AttributeSource side_slope = AttributeSource::None;
  AttributeSource manning_n = AttributeSource::None;
};

/// Bottom width from bankfull width, side slope and bankfull depth (NaN =
/// unknown): max(w − 2 z d, w / 2), or w without a depth.
double bottomWidthFromBankfull(double width_m, double side_slope, double depth_m);

/// Derived section of every reach, by vertex. `areas` comes from
/// drainageArea (one per vertex). A layer value is kept unless its
/// attribute is in `options.replace`; a side slope of 0 counts as not
/// given (the reader stores 0 when the layer has none). Throws InputError
/// for a cycle, and InvalidParameter for vectors of the wrong size.
std::vector<DerivedSection> hydraulicGeometry(const network::ReachGraph& graph,
                                              const std::vector<AreaValue>& areas,
                                              const HydraulicGeometryOptions& options);

}  // namespace reachwise::terrain
