#pragma once
// Small GeoTIFF rasters written with GDAL for the terrain tests.

#include <gtest/gtest.h>

#include <gdal_priv.h>
#include <ogr_spatialref.h>

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/io/Gdal.hpp"

namespace reachwise::terrain::testing {

/// WKT of an EPSG CRS (empty for epsg = 0).
inline std::string wktOf(int epsg) {
  if (epsg == 0) return {};
  OGRSpatialReference srs;
  srs.importFromEPSG(epsg);
  char* wkt = nullptr;
  srs.exportToWkt(&wkt);
  std::string out(wkt);
  CPLFree(wkt);
  return out;
}

/// A one-band Float64 GeoTIFF of `width` × `height` cells filled with
/// `fill`; `cells` sets single cells as {col, row, value}.
struct RasterSpec {
  int width = 20, height = 20;
  std::array<double, 6> gt{0, 1, 0, 0, 0, -1};
  int epsg = 0;  ///< 0 = no CRS
  double fill = 1.0;
  std::vector<std::array<double, 3>> cells;
  std::optional<double> nodata;
};

inline std::string writeRaster(const std::string& path, const RasterSpec& spec) {
  io::ensureGdal();
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GTiff");
  GDALDataset* ds = driver->Create(path.c_str(), spec.width, spec.height, 1, GDT_Float64, nullptr);
  std::array<double, 6> gt = spec.gt;
  ds->SetGeoTransform(gt.data());
  if (spec.epsg) ds->SetProjection(wktOf(spec.epsg).c_str());
  std::vector<double> values(std::size_t(spec.width) * std::size_t(spec.height), spec.fill);
  for (const auto& c : spec.cells)
    values[std::size_t(c[1]) * std::size_t(spec.width) + std::size_t(c[0])] = c[2];
  GDALRasterBand* band = ds->GetRasterBand(1);
  if (spec.nodata) band->SetNoDataValue(*spec.nodata);
  const CPLErr written = band->RasterIO(GF_Write, 0, 0, spec.width, spec.height, values.data(),
                                       spec.width, spec.height, GDT_Float64, 0, 0);
  EXPECT_EQ(written, CE_None) << path;
  GDALClose(ds);
  return path;
}

}  // namespace reachwise::terrain::testing
