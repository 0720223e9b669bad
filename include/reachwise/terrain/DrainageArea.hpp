#pragma once
/// \file
/// Drainage area of every reach, in km², at its downstream end, each value
/// with where it came from (docs/formats.md, "Preparing attributes").
///
/// A reach's own estimate comes, first that applies, from
///  1. a per-reach value already given (a field of the layer: the total
///     area at the reach's downstream end);
///  2. a flow-accumulation or drainage-area raster, sampled at the reach's
///     downstream end (sampleAreaRaster);
///  3. the upstream channel length, by Hack's law (LengthRelation).
/// The estimates are then accumulated down the network in topological
/// order: a reach's area is at least the sum of the areas flowing into it
/// (each upstream reach's area times the share of its outflow that enters
/// the reach: its resolved split at a bifurcation, else equal shares).
/// Where the own estimate is smaller, that sum is used instead (source
/// `upstream_sum`); a field or raster value smaller than the sum by more
/// than 0.1 % is reported as an `area_below_upstream` warning.

#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::terrain {

/// Where a reach's drainage area came from.
enum class AreaSource : std::uint8_t {
  Field,           ///< a value given per reach (the layer's area field)
  Raster,          ///< the accumulation / area raster near the downstream end
  LengthRelation,  ///< Hack's law from the longest upstream flow path
  UpstreamSum,     ///< the sum of the areas flowing in (the own estimate was smaller or missing)
  None,            ///< no value (a headwater without any estimate)
};

/// Its name in outputs: "field", "raster", "length_relation", "upstream_sum", "none".
std::string_view areaSourceName(AreaSource source) noexcept;

struct AreaValue {
  double km2 = std::numeric_limits<double>::quiet_NaN();  ///< total drainage area at the downstream end
  AreaSource source = AreaSource::None;
  /// The reach's own estimate before accumulation (NaN when it had none)
  /// and where it came from; differs from `km2` when source is UpstreamSum.
  double own_km2 = std::numeric_limits<double>::quiet_NaN();
  AreaSource own_source = AreaSource::None;
};

/// Unit of the raster's cell values.
enum class RasterUnit : std::uint8_t {
  Cells,             ///< a count of cells draining through the cell (flow accumulation)
  SquareMetres,      ///< drainage area in m²
  SquareKilometres,  ///< drainage area in km²
};

/// Its name in run files: "cells", "m2", "km2".
std::string_view rasterUnitName(RasterUnit unit) noexcept;

/// A flow-accumulation or drainage-area raster (any GDAL raster, band 1).
struct AreaRaster {
  std::string path;
  RasterUnit unit = RasterUnit::Cells;
  /// Search radius around a reach's downstream end in metres; unset = 2
  /// cells (twice the larger side of a cell, in metres at the point).
  std::optional<double> search_m;
  std::string key = "prepare.area_raster";  ///< where it was configured (messages)
};

/// Hack's law, L = c · A^h with L in miles and A in square miles.
/// Hack, J. T. (1957). Studies of longitudinal stream profiles in Virginia
/// and Maryland. U.S. Geological Survey Professional Paper 294-B.
/// c = 1.4, h = 0.6 (from memory): placeholders to be replaced by a
/// relation fitted to local data.
struct LengthRelation {
  double coefficient = 1.4;  ///< c, miles per (square mile)^h
  double exponent = 0.6;     ///< h
  /// Drainage area in km² of a basin whose longest flow path is `length_m` metres.
  double areaKm2(double length_m) const;
};

struct AreaOptions {
  /// Per vertex, the area in km² given by a field; NaN = not given. Empty
  /// = no field (the caller reads it from the layer and converts its unit).
  std::vector<double> field_km2;
  std::string field_name;                ///< for messages
  std::optional<AreaRaster> raster;
  LengthRelation length_relation;
};

/// Longest flow path in metres from each reach's downstream end up to a
/// headwater (its own length plus the longest such path above it), by vertex.
/// Throws InputError naming the source when the graph has a cycle.
std::vector<double> longestFlowPathM(const network::ReachGraph& graph);

/// The raster's value near each reach's downstream end, converted to km²:
/// the largest valid cell value among the cells whose centres lie within the
/// search radius (and the cell holding the point), as is common practice
/// (the end of a digitised line seldom falls in the raster's channel cell).
/// NaN where no valid cell is found (outside the raster, only nodata).
/// The line end is transformed into the raster's CRS when both have one
/// and they differ. Throws InputError naming the raster's path for a file
/// GDAL cannot open as a raster, a rotated grid, or a CRS transformation
/// that cannot be set up.
std::vector<double> sampleAreaRaster(const network::ReachGraph& graph, const AreaRaster& raster);

/// Area of one cell in km² of a north-up raster with geotransform `gt`
/// whose cell (col, row) is meant: planar |dx·dy| × (metres per unit)²
/// for projected rasters; on the ellipsoid (semi-major axis `a_m`, inverse
/// flattening `inv_f`) for geographic ones, with `gt` in degrees.
double cellAreaKm2(const double gt[6], double col, double row, bool geographic,
                   double metres_per_unit, double a_m, double inv_f);

/// Drainage area per vertex (see the file comment). Appends
/// `area_below_upstream` warnings to `problems`. Throws InputError for a
/// cycle, a negative field value (naming the field and the reach) or a
/// raster that cannot be read; InvalidParameter for a field vector of the
/// wrong size.
std::vector<AreaValue> drainageArea(const network::ReachGraph& graph, const AreaOptions& options,
                                    network::ProblemList& problems);

/// The same, with the raster already sampled (`raster_km2` per vertex or
/// empty): pure network arithmetic.
std::vector<AreaValue> accumulateArea(const network::ReachGraph& graph, const AreaOptions& options,
                                      const std::vector<double>& raster_km2,
                                      network::ProblemList& problems);

}  // namespace reachwise::terrain
