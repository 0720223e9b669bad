#pragma once
// Test helper: rasters written by GDAL from an elevation function, and
// reach tables built in memory.

#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogr_spatialref.h>

#include <cmath>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/io/Gdal.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace demfixtures {

/// A north-up grid: top-left corner (x0, y0), square cells of `cell` CRS
/// units, nx × ny cells.
struct Grid {
  int epsg = 32633;
  double x0 = 0, y0 = 0, cell = 10;
  int nx = 100, ny = 100;
};

/// Writes a tiled Float64 GeoTIFF whose cell (i, j) holds z(x, y) at the
/// cell centre in the grid's CRS, or `z_of_metric(X, Y)` with (X, Y) the
/// centre transformed into EPSG `metric_epsg` when that is set (a DEM in
/// another CRS than the function). A NaN from the function is written as
/// the nodata value -9999.
inline void writeDem(const std::string& path, const Grid& g, const std::function<double(double, double)>& z,
                     int metric_epsg = 0) {
  reachwise::io::ensureGdal();
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GTiff");
  ASSERT_NE(drv, nullptr);
  CPLStringList opts;
  opts.SetNameValue("TILED", "YES");
  opts.SetNameValue("BLOCKXSIZE", "64");
  opts.SetNameValue("BLOCKYSIZE", "64");
  GDALDatasetUniquePtr ds(drv->Create(path.c_str(), g.nx, g.ny, 1, GDT_Float64, opts.List()));
  ASSERT_TRUE(ds) << CPLGetLastErrorMsg();
  double gt[6] = {g.x0, g.cell, 0, g.y0, 0, -g.cell};
  ds->SetGeoTransform(gt);
  OGRSpatialReference srs;
  srs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  srs.importFromEPSG(g.epsg);
  ds->SetSpatialRef(&srs);
  std::unique_ptr<OGRCoordinateTransformation> to_metric;
  OGRSpatialReference metric;
  if (metric_epsg) {
    metric.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
    metric.importFromEPSG(metric_epsg);
    to_metric.reset(OGRCreateCoordinateTransformation(&srs, &metric));
    ASSERT_TRUE(to_metric);
  }
  const double nodata = -9999;
  ds->GetRasterBand(1)->SetNoDataValue(nodata);
  std::vector<double> row(static_cast<std::size_t>(g.nx));
  std::vector<double> xs(row.size()), ys(row.size());
  for (int j = 0; j < g.ny; ++j) {
    for (int i = 0; i < g.nx; ++i) {
      xs[i] = g.x0 + (i + 0.5) * g.cell;
      ys[i] = g.y0 - (j + 0.5) * g.cell;
    }
    if (to_metric) {
      ASSERT_TRUE(to_metric->Transform(g.nx, xs.data(), ys.data()));
    }
    for (int i = 0; i < g.nx; ++i) {
      const double v = z(xs[i], ys[i]);
      row[i] = std::isnan(v) ? nodata : v;
    }
    ASSERT_EQ(ds->GetRasterBand(1)->RasterIO(GF_Write, 0, j, g.nx, 1, row.data(), g.nx, 1, GDT_Float64, 0, 0,
                                             nullptr),
              CE_None);
  }
}

/// WKT of an EPSG code, traditional axis order.
inline std::string wkt(int epsg) {
  OGRSpatialReference srs;
  srs.importFromEPSG(epsg);
  char* w = nullptr;
  srs.exportToWkt(&w);
  std::string out = w;
  CPLFree(w);
  return out;
}

/// A reach record with a straight or bent line through `points` (flow
/// order), draining to `to` (empty: outlet); length from the geometry.
inline reachwise::network::ReachRecord reach(const std::string& id, std::vector<std::pair<double, double>> points,
                                             const std::string& to = "") {
  reachwise::network::ReachRecord r;
  r.id = id;
  r.fid = 0;
  if (!to.empty()) r.to_reach = to;
  double len = 0;
  for (std::size_t i = 0; i < points.size(); ++i) {
    r.line.push_back({points[i].first, points[i].second});
    if (i) len += std::hypot(points[i].first - points[i - 1].first, points[i].second - points[i - 1].second);
  }
  r.geometry_length_m = len;
  r.length_m = len;
  return r;
}

}  // namespace demfixtures
