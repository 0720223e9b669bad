#pragma once
// Test support for saved states: a small network in UTM 33N with a
// confluence (E and F join into A), a lake (A and B flow into L) and a
// bifurcation (L's outflow shared by C and D), written with GDAL, and
// hourly inflow CSVs over any range of its 72 hours, so a record can be
// routed whole or in pieces.

#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>
#include <vector>

namespace testsupport {

struct StateLine {
  std::string id;
  double x0, y0, x1, y1;
  double width = 10;
};

/// The lines of the network (ids E, F, A, B, C, D), `drop` left out.
inline std::vector<StateLine> stateLines(const std::string& drop = "") {
  std::vector<StateLine> all = {{"E", 0, 16000, 0, 10000},      {"F", 4000, 14000, 0, 10000},
                                {"A", 0, 10000, 0, 5000},       {"B", 3000, 8000, 0, 5000},
                                {"C", 0, 5000, -2000, 0, 20},   {"D", 0, 5000, 2000, 0, 10}};
  std::vector<StateLine> out;
  for (const auto& l : all)
    if (l.id != drop) out.push_back(l);
  return out;
}

inline void writeStateNetwork(const std::string& path, const std::vector<StateLine>& lines) {
  GDALAllRegister();
  GDALDatasetUniquePtr ds(
      GetGDALDriverManager()->GetDriverByName("GPKG")->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("reaches", &srs, wkbLineString, nullptr);
  ASSERT_NE(layer, nullptr);
  OGRFieldDefn id("reach_id", OFTString);
  layer->CreateField(&id);
  for (const char* name : {"slope", "manning_n", "bottom_width", "side_slope", "muskingum_k_h", "muskingum_x"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  for (const auto& l : lines) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", l.id.c_str());
    f.SetField("slope", 0.001);
    f.SetField("manning_n", 0.035);
    f.SetField("bottom_width", l.width);
    f.SetField("side_slope", 1.5);
    f.SetField("muskingum_k_h", 1.5);
    f.SetField("muskingum_x", 0.2);
    OGRLineString g;
    g.addPoint(l.x0, l.y0);
    g.addPoint(l.x1, l.y1);
    f.SetGeometry(&g);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
}

/// Lake L: a 400 m square around the node where A and B end, a weir.
inline void writeStateLakes(const std::string& path) {
  GDALAllRegister();
  GDALDatasetUniquePtr ds(
      GetGDALDriverManager()->GetDriverByName("GPKG")->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("lakes", &srs, wkbPolygon, nullptr);
  OGRFieldDefn id("lake_id", OFTString);
  layer->CreateField(&id);
  for (const char* name : {"crest_level_m", "weir_length_m"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  OGRFeature f(layer->GetLayerDefn());
  f.SetField("lake_id", "L");
  f.SetField("crest_level_m", 100.0);
  f.SetField("weir_length_m", 15.0);
  OGRLinearRing ring;
  ring.addPoint(-200, 4800);
  ring.addPoint(200, 4800);
  ring.addPoint(200, 5200);
  ring.addPoint(-200, 5200);
  ring.closeRings();
  OGRPolygon poly;
  poly.addRing(&ring);
  f.SetGeometry(&poly);
  ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
}

/// Hourly inflow of head reach k (0: E, 1: F, 2: B) at hour n: a base
/// flow plus a sin² storm over hours [start, start + 16], start 2 + 3k;
/// with `late`, the storms start at hour 44 + 3k instead (their peaks in
/// the second half of 72 hours).
inline double stateInflow(std::size_t k, std::size_t n, bool late = false) {
  const double start = (late ? 44.0 : 2.0) + 3.0 * static_cast<double>(k);
  const double t = static_cast<double>(n) - start;
  const double base = 3.0 + static_cast<double>(k), peak = 60.0 + 20.0 * static_cast<double>(k);
  return base + (t > 0 && t < 16 ? peak * std::pow(std::sin(std::numbers::pi * t / 16), 2) : 0.0);
}

/// A wide CSV of hours first..last (inclusive) of 2026-05-01/03 for E, F and B.
inline void writeStateInflow(const std::string& path, std::size_t first, std::size_t last, bool late = false) {
  std::ofstream csv(path);
  csv << "time,E,F,B\n";
  for (std::size_t n = first; n <= last; ++n) {
    char t[40];
    std::snprintf(t, sizeof t, "2026-05-%02zuT%02zu:00:00Z", 1 + n / 24, n % 24);
    csv << t;
    for (std::size_t k = 0; k < 3; ++k) {
      char v[40];
      std::snprintf(v, sizeof v, ",%.17g", stateInflow(k, n, late));
      csv << v;
    }
    csv << "\n";
  }
}

}  // namespace testsupport
