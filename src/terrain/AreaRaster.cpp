// Sampling a flow-accumulation or drainage-area raster at reach ends.

#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogr_spatialref.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <numbers>

#include "../io/GdalSupport.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/terrain/DrainageArea.hpp"

namespace reachwise::terrain {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kRadPerDeg = std::numbers::pi / 180.0;
/// Most cells read around one line end (a radius of ~1800 cells): a
/// larger search is a mistake in the radius, refused before it exhausts memory.
constexpr double kMaxWindowCells = 1e7;

/// Area in m² between the equator and latitude `phi` (radians) per radian
/// of longitude on an ellipsoid of semi-major axis a and eccentricity e:
/// a² q(φ) / 2, with the authalic function
///   q(φ) = (1 − e²) [ sinφ / (1 − e² sin²φ) − 1/(2e) ln((1 − e sinφ) / (1 + e sinφ)) ]
/// (Snyder, J. P. (1987). Map Projections - A Working Manual. U.S.
/// Geological Survey Professional Paper 1395, eq. 3-12).
double zoneArea(double phi, double a, double e) {
  const double s = std::sin(phi);
  if (e == 0.0) return a * a * s;  // sphere
  const double e2 = e * e;
  const double q =
      (1.0 - e2) * (s / (1.0 - e2 * s * s) - std::log((1.0 - e * s) / (1.0 + e * s)) / (2.0 * e));
  return a * a * q / 2.0;
}

struct Ellipsoid {
  double a = 6378137.0;          // WGS 84
  double inv_f = 298.257223563;
  double e2() const { return inv_f > 0 ? (2.0 - 1.0 / inv_f) / inv_f : 0.0; }
};

/// Cell sides in metres at latitude `lat_deg` of a geographic grid (local
/// radii of curvature: N in the prime vertical, M in the meridian).
void geographicCellSides(const double gt[6], double lat_deg, const Ellipsoid& ell, double& dx_m,
                         double& dy_m) {
  const double phi = lat_deg * kRadPerDeg;
  const double e2 = ell.e2();
  const double w = std::sqrt(1.0 - e2 * std::sin(phi) * std::sin(phi));
  const double n = ell.a / w;
  const double m = ell.a * (1.0 - e2) / (w * w * w);
  dx_m = std::abs(gt[1]) * kRadPerDeg * n * std::cos(phi);
  dy_m = std::abs(gt[5]) * kRadPerDeg * m;
}

[[noreturn]] void rasterError(const AreaRaster& raster, const std::string& what) {
  InputLocation where;
  where.file = raster.path;
  where.field = raster.key;
  throw InputError(where, what);
}

}  // namespace

double cellAreaKm2(const double gt[6], double col, double row, bool geographic,
                   double metres_per_unit, double a_m, double inv_f) {
  (void)col;  // north-up grids: every cell of a row has the same area
  if (!geographic) return std::abs(gt[1] * gt[5]) * metres_per_unit * metres_per_unit / 1e6;
  const double lat1 = (gt[3] + row * gt[5]) * kRadPerDeg;
  const double lat2 = (gt[3] + (row + 1.0) * gt[5]) * kRadPerDeg;
  const double e = inv_f > 0 ? std::sqrt((2.0 - 1.0 / inv_f) / inv_f) : 0.0;
  const double dlon = std::abs(gt[1]) * kRadPerDeg;
  return dlon * std::abs(zoneArea(lat2, a_m, e) - zoneArea(lat1, a_m, e)) / 1e6;
}

std::vector<double> sampleAreaRaster(const network::ReachGraph& graph, const AreaRaster& raster) {
  io::ensureGdal();
  if (raster.search_m && !(*raster.search_m >= 0 && std::isfinite(*raster.search_m)))
    rasterError(raster, "the search radius must be zero or positive (metres)");
  GDALDatasetUniquePtr ds(GDALDataset::Open(raster.path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY));
  if (!ds) {
    InputLocation where;
    where.file = raster.path;
    where.field = raster.key;
    io::throwWithGdalMessage(where, "cannot be opened as a raster");
  }
  if (ds->GetRasterCount() < 1) rasterError(raster, "has no raster band");
  double gt[6];
  if (ds->GetGeoTransform(gt) != CE_None)
    rasterError(raster, "has no georeferencing (geotransform): cells cannot be placed");
  if (gt[2] != 0.0 || gt[4] != 0.0)
    rasterError(raster, "is a rotated grid, which is not supported (warp it north-up first)");
  if (!(gt[1] != 0.0) || !(gt[5] != 0.0) || !std::isfinite(gt[1]) || !std::isfinite(gt[5]))
    rasterError(raster, "has a zero or non-finite cell size");
  GDALRasterBand* band = ds->GetRasterBand(1);
  int has_nodata = 0;
  const double nodata = band->GetNoDataValue(&has_nodata);
  const int width = ds->GetRasterXSize(), height = ds->GetRasterYSize();

  // CRS of the grid and of the lines. When only one has a CRS, both are
  // taken to be in it.
  const auto lines_srs = io::spatialReferenceFromWkt(graph.table().crs_wkt);
  std::unique_ptr<OGRSpatialReference> grid_srs;
  if (const OGRSpatialReference* srs = ds->GetSpatialRef()) {
    grid_srs.reset(srs->Clone());
    grid_srs->SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  }
  std::unique_ptr<OGRCoordinateTransformation> to_grid;
  if (grid_srs && lines_srs && !grid_srs->IsSame(lines_srs.get())) {
    to_grid.reset(OGRCreateCoordinateTransformation(lines_srs.get(), grid_srs.get()));
    if (!to_grid) {
      InputLocation where;
      where.file = raster.path;
      where.field = raster.key;
      io::throwWithGdalMessage(where, "no transformation from the network's CRS to the raster's");
    }
  }
  const OGRSpatialReference* srs = grid_srs ? grid_srs.get() : lines_srs.get();
  const bool geographic = srs ? srs->IsGeographic() != 0 : graph.table().geographic;
  const double metres_per_unit = srs && !geographic ? srs->GetLinearUnits() : 1.0;
  Ellipsoid ell;
  if (srs && geographic) {
    OGRErr err = OGRERR_NONE;
    const double a = srs->GetSemiMajor(&err);
    if (err == OGRERR_NONE && a > 0) ell.a = a;
    const double inv_f = srs->GetInvFlattening(&err);
    if (err == OGRERR_NONE && inv_f >= 0) ell.inv_f = inv_f;
  }

  std::vector<double> out(graph.size(), kNaN);
  std::vector<double> window;
  for (network::ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    const network::Point2 end = graph.bottom(v);
    double x = end.x, y = end.y;
    if (!std::isfinite(x) || !std::isfinite(y)) continue;
    if (to_grid && !to_grid->Transform(1, &x, &y)) continue;
    const double col = (x - gt[0]) / gt[1];
    const double row = (y - gt[3]) / gt[5];
    double dx_m = std::abs(gt[1]) * metres_per_unit, dy_m = std::abs(gt[5]) * metres_per_unit;
    if (geographic) geographicCellSides(gt, y, ell, dx_m, dy_m);
    const double radius = raster.search_m ? *raster.search_m : 2.0 * std::max(dx_m, dy_m);
    const double own_col = std::floor(col), own_row = std::floor(row);
    // Window of whole cells that can hold a centre within the radius.
    const double c_lo = std::max(0.0, std::floor(col - radius / dx_m - 0.5));
    const double c_hi = std::min(double(width - 1), std::floor(col + radius / dx_m + 0.5));
    const double r_lo = std::max(0.0, std::floor(row - radius / dy_m - 0.5));
    const double r_hi = std::min(double(height - 1), std::floor(row + radius / dy_m + 0.5));
    if (!(c_lo <= c_hi) || !(r_lo <= r_hi)) continue;  // outside the raster
    if ((c_hi - c_lo + 1) * (r_hi - r_lo + 1) > kMaxWindowCells)
      rasterError(raster, fmt::format("the search radius of {} m covers more than {} cells "
                                      "around reach {}; give a smaller area_search_m",
                                      radius, kMaxWindowCells, graph.id(v)));
    const int c0 = int(c_lo), r0 = int(r_lo), nc = int(c_hi) - c0 + 1, nr = int(r_hi) - r0 + 1;
    window.assign(std::size_t(nc) * std::size_t(nr), kNaN);
    if (band->RasterIO(GF_Read, c0, r0, nc, nr, window.data(), nc, nr, GDT_Float64, 0, 0) !=
        CE_None) {
      InputLocation where;
      where.file = raster.path;
      where.field = raster.key;
      io::throwWithGdalMessage(where, "cannot read the cells near reach " + graph.id(v));
    }
    double best = kNaN;
    int best_row = 0;
    for (int j = 0; j < nr; ++j) {
      for (int i = 0; i < nc; ++i) {
        const double value = window[std::size_t(j) * std::size_t(nc) + std::size_t(i)];
        if (!std::isfinite(value) || value < 0) continue;  // areas and counts are never negative
        if (has_nodata && value == nodata) continue;
        const double ci = c0 + i, rj = r0 + j;
        const double ddx = (ci + 0.5 - col) * dx_m, ddy = (rj + 0.5 - row) * dy_m;
        const bool inside = ddx * ddx + ddy * ddy <= radius * radius ||
                            (ci == own_col && rj == own_row);
        if (!inside) continue;
        if (!(value <= best)) {  // first valid value, or a larger one
          best = value;
          best_row = r0 + j;
        }
      }
    }
    if (std::isnan(best)) continue;
    switch (raster.unit) {
      case RasterUnit::Cells:
        out[v] = best * cellAreaKm2(gt, 0.0, best_row, geographic, metres_per_unit, ell.a, ell.inv_f);
        break;
      case RasterUnit::SquareMetres: out[v] = best / 1e6; break;
      case RasterUnit::SquareKilometres: out[v] = best; break;
    }
  }
  return out;
}

}  // namespace reachwise::terrain
