#pragma once
// Test helper: writes small line layers through GDAL into a temporary folder.

#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <filesystem>
#include <optional>
#include <string>
#include <unistd.h>
#include <vector>

#include "reachwise/io/Gdal.hpp"
#include "support/Scratch.hpp"

namespace fixtures {

struct Field {
  std::string name;
  OGRFieldType type = OFTString;
};

/// One feature: geometry as WKT ("" = no geometry) and one value per field
/// (nullopt = null), given as text and converted by OGR to the field type.
struct Feature {
  std::string wkt;
  std::vector<std::optional<std::string>> values;
};

struct Layer {
  std::string name = "reaches";
  int epsg = 32633;  ///< 0 = no CRS
  OGRwkbGeometryType type = wkbLineString;
  std::vector<Field> fields;
  std::vector<Feature> features;
};

using testsupport::TempDir;

inline void addLayer(GDALDataset& ds, const Layer& spec) {
  OGRSpatialReference srs;
  srs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  if (spec.epsg) srs.importFromEPSG(spec.epsg);
  OGRLayer* layer = ds.CreateLayer(spec.name.c_str(), spec.epsg ? &srs : nullptr, spec.type, nullptr);
  ASSERT_NE(layer, nullptr) << CPLGetLastErrorMsg();
  for (const auto& f : spec.fields) {
    OGRFieldDefn def(f.name.c_str(), f.type);
    ASSERT_EQ(layer->CreateField(&def), OGRERR_NONE);
  }
  for (const auto& feat : spec.features) {
    OGRFeature f(layer->GetLayerDefn());
    for (std::size_t i = 0; i < feat.values.size(); ++i) {
      if (feat.values[i])
        f.SetField(static_cast<int>(i), feat.values[i]->c_str());
      else
        f.SetFieldNull(static_cast<int>(i));
    }
    if (!feat.wkt.empty()) {
      OGRGeometry* g = nullptr;
      ASSERT_EQ(OGRGeometryFactory::createFromWkt(feat.wkt.c_str(), nullptr, &g), OGRERR_NONE)
          << feat.wkt;
      f.SetGeometryDirectly(g);
    }
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE) << CPLGetLastErrorMsg();
  }
}

/// Writes the layers with the named GDAL driver ("GPKG", "ESRI Shapefile", "GeoJSON").
inline void write(const std::string& path, const std::string& driver,
                  const std::vector<Layer>& layers) {
  reachwise::io::ensureGdal();
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName(driver.c_str());
  ASSERT_NE(drv, nullptr) << driver;
  GDALDatasetUniquePtr ds(drv->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds) << CPLGetLastErrorMsg();
  for (const auto& l : layers) addLayer(*ds, l);
}

/// The usual attribute fields of a reach layer.
inline std::vector<Field> reachFields() {
  return {{"reach_id", OFTString},   {"to_reach", OFTString},  {"slope", OFTReal},
          {"manning_n", OFTReal},    {"bottom_width", OFTReal}, {"side_slope", OFTReal}};
}

/// A reach feature with the fields of reachFields().
inline Feature reach(const std::string& wkt, const std::string& id,
                     std::optional<std::string> to, const std::string& slope = "0.001",
                     const std::string& n = "0.035", const std::string& width = "5") {
  return {wkt, {id, std::move(to), slope, n, width, "2"}};
}

}  // namespace fixtures
