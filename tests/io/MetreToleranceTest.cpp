// Tolerances in metres on any CRS, and pieces of cut lines measured on
// themselves: one small network written in UTM zone 33N, in EPSG:4326 and
// in a US-survey-foot version of the same projection (coordinates
// transformed by OGR/PROJ) must give the same reaches, links and lengths.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogr_spatialref.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <map>
#include <memory>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "support/Scratch.hpp"

using namespace reachwise;

namespace {

struct XY {
  double x, y;
};

struct Line {
  std::string id;
  std::vector<XY> pts;  ///< UTM 33N metres
};

// A main stem M (two straight parts of different bearing, about 49.6 N,
// where a degree of longitude is 0.65 of a degree of latitude) and:
//  T  ends 3 m due east of a point of M's first part, 2.4 m from the line
//     (a tributary that falls short: M is cut there);
//  D  starts 4 m due east of M's last vertex (a near-miss end to end);
//  F  ends 20 m due west of the middle of M's second part, 40/sqrt(5) =
//     17.9 m from the line (a gap).
std::vector<Line> network() {
  const XY m0{500000, 5510000}, m1{503000, 5506000}, m2{506000, 5500000};
  // 2500 m along M's first part, whose direction is (0.6, -0.8).
  const XY foot{m0.x + 0.6 * 2500, m0.y - 0.8 * 2500};
  // Half way along M's second part, direction (1, -2)/sqrt(5).
  const XY mid2{(m1.x + m2.x) / 2, (m1.y + m2.y) / 2};
  return {
      {"M", {m0, m1, m2}},
      {"T", {{507000, 5511000}, {504000, 5509500}, {foot.x + 3.0, foot.y}}},
      {"D", {{m2.x + 4.0, m2.y}, {509000, 5496000}}},
      {"F", {{498000, 5501000}, {mid2.x - 20.0, mid2.y}}},
  };
}

OGRSpatialReference utm33() {
  OGRSpatialReference s;
  s.importFromEPSG(32633);
  s.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  return s;
}

OGRSpatialReference wgs84() {
  OGRSpatialReference s;
  s.importFromEPSG(4326);
  s.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);  // lon, lat
  return s;
}

/// UTM zone 33N's projection on WGS 84 with the US survey foot (1200/3937
/// m) as its unit. (Built from a PROJ string: GDAL 3.6's GeoPackage writer
/// files a CRS made with SetUTM as EPSG:32633 whatever its unit.)
OGRSpatialReference utm33UsFeet() {
  OGRSpatialReference s;
  s.importFromProj4("+proj=tmerc +lat_0=0 +lon_0=15 +k=0.9996 +x_0=500000 +y_0=0 +datum=WGS84 "
                    "+units=us-ft +no_defs");
  s.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  return s;
}

/// Writes the lines (given in UTM 33N) to a GeoPackage in `target`, each
/// vertex transformed by OGR (PROJ).
void writeIn(const std::string& path, const OGRSpatialReference& target) {
  io::ensureGdal();
  const OGRSpatialReference src = utm33();
  std::unique_ptr<OGRCoordinateTransformation> ct(
      OGRCreateCoordinateTransformation(&src, &target));
  ASSERT_TRUE(ct) << CPLGetLastErrorMsg();
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(drv->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds) << CPLGetLastErrorMsg();
  OGRSpatialReference layer_srs = target;  // GDAL 3.6 takes a non-const pointer
  OGRLayer* layer = ds->CreateLayer("reaches", &layer_srs, wkbLineString, nullptr);
  ASSERT_NE(layer, nullptr) << CPLGetLastErrorMsg();
  for (auto [name, type] : {std::pair{"reach_id", OFTString}, {"slope", OFTReal},
                            {"manning_n", OFTReal}, {"bottom_width", OFTReal}}) {
    OGRFieldDefn def(name, type);
    ASSERT_EQ(layer->CreateField(&def), OGRERR_NONE);
  }
  for (const auto& l : network()) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", l.id.c_str());
    f.SetField("slope", 0.001);
    f.SetField("manning_n", 0.035);
    f.SetField("bottom_width", 5.0);
    auto g = std::make_unique<OGRLineString>();
    for (const auto& p : l.pts) {
      double x = p.x, y = p.y;
      ASSERT_TRUE(ct->Transform(1, &x, &y));
      g->addPoint(x, y);
    }
    f.SetGeometryDirectly(g.release());
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE) << CPLGetLastErrorMsg();
  }
}

struct Result {
  std::map<std::string, std::string> down;   ///< reach -> to_reach ("" at an outlet)
  std::map<std::string, double> length_m;    ///< geometry length of each reach
  std::set<std::string> gaps;                ///< reaches with a probable_gap
  io::ReadSummary summary;
};

Result read(const std::string& path, double snap_m, std::optional<double> gap_m = {}) {
  io::ReadOptions opt;
  opt.config.snap_tolerance_m = snap_m;
  opt.config.gap_search_m = gap_m;
  network::ProblemList ps;
  Result r;
  const auto t = io::readNetwork(path, opt, ps, &r.summary);
  for (const auto& rec : t.reaches) {
    r.down[rec.id] = rec.to_reach.value_or("");
    r.length_m[rec.id] = rec.geometry_length_m;
  }
  for (const auto& p : ps)
    if (p.codeName() == "probable_gap") r.gaps.insert(p.reach_id);
  return r;
}

class MetreTolerance : public ::testing::Test {
protected:
  void SetUp() override {
    writeIn(utm_, utm33());
    writeIn(geo_, wgs84());
    writeIn(feet_, utm33UsFeet());
  }
  testsupport::TempDir dir_;
  const std::string utm_ = (dir_.path() / "utm.gpkg").string();
  const std::string geo_ = (dir_.path() / "geo.gpkg").string();
  const std::string feet_ = (dir_.path() / "feet.gpkg").string();
};

}  // namespace

TEST_F(MetreTolerance, SameReachesLinksAndPieceLengthsInEveryCrs) {
  // The default tolerance, 5 m, joins T (2.4 m from M) and D (4 m from M's end).
  const Result utm = read(utm_, 5.0), geo = read(geo_, 5.0), feet = read(feet_, 5.0);
  const std::map<std::string, std::string> expected{
      {"M.1", "M.2"}, {"M.2", "D"}, {"T", "M.2"}, {"D", ""}, {"F", ""}};
  EXPECT_EQ(utm.down, expected);
  EXPECT_EQ(geo.down, expected);
  EXPECT_EQ(feet.down, expected);
  EXPECT_EQ(utm.summary.topology.splits, 1u);
  EXPECT_EQ(geo.summary.topology.splits, 1u);
  // M.1 is 2500 m of M's first part plus 1.8 m to the foot of T's end.
  EXPECT_NEAR(utm.length_m.at("M.1"), 2501.8, 0.01);
  // Reference: the same lines in UTM (PROJ's transformation). Planar UTM
  // lengths within 10 km of the central meridian are 0.9996 (the scale
  // factor) of those on the ellipsoid, so the two agree within 0.05 %;
  // 0.3 % is the acceptance bound. Sharing M's length by pieces' lengths in
  // degrees would put M.1 4.6 % off here.
  for (const auto& [id, len] : utm.length_m) {
    ASSERT_TRUE(geo.length_m.count(id)) << id;
    EXPECT_NEAR(geo.length_m.at(id) / len, 1.0, 0.003) << id;
    EXPECT_GT(geo.length_m.at(id), len) << id;  // the scale factor is below 1 here
    // A foot CRS: lengths in metres, the same as UTM's up to rounding.
    EXPECT_NEAR(feet.length_m.at(id) / len, 1.0, 1e-9) << id;
  }
  // F's end is 17.9 m from M: a probable gap within the default 50 m search.
  EXPECT_EQ(utm.gaps, std::set<std::string>{"F"});
  EXPECT_EQ(geo.gaps, std::set<std::string>{"F"});
  EXPECT_EQ(feet.gaps, std::set<std::string>{"F"});
  EXPECT_DOUBLE_EQ(geo.summary.snap_tolerance_m, 5.0);
  EXPECT_DOUBLE_EQ(geo.summary.gap_search_m, 50.0);
}

TEST_F(MetreTolerance, ATolerancePicksTheSameEndsInEveryCrs) {
  // 3 m joins T (2.4 m) but not D (4 m due east; east-west is where a
  // tolerance in degrees is stretched most).
  for (const auto* path : {&utm_, &geo_, &feet_}) {
    const Result r = read(*path, 3.0);
    EXPECT_EQ(r.down.at("T"), "M.2") << *path;
    EXPECT_EQ(r.down.at("M.2"), "") << *path;
    EXPECT_EQ(r.gaps, (std::set<std::string>{"D", "F", "M.2"})) << *path;
  }
  // 2 m joins neither: M stays whole.
  for (const auto* path : {&utm_, &geo_, &feet_}) {
    const Result r = read(*path, 2.0);
    EXPECT_EQ(r.summary.topology.splits, 0u) << *path;
    EXPECT_EQ(r.down.at("T"), "") << *path;
    EXPECT_EQ(r.down.at("M"), "") << *path;
  }
  // 4.5 m joins both; a 15 m search no longer reaches F (17.9 m away).
  for (const auto* path : {&utm_, &geo_, &feet_}) {
    const Result r = read(*path, 4.5, 15.0);
    EXPECT_EQ(r.down.at("M.2"), "D") << *path;
    EXPECT_TRUE(r.gaps.empty()) << *path;
  }
}

TEST(MetreToleranceConfig, TheOldKeyNamesTheNewOne) {
  try {
    io::NetworkConfig::fromString("[network]\nsnap_tolerance = 0.5\n", "run.toml");
    ADD_FAILURE() << "snap_tolerance was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "run.toml");
    EXPECT_EQ(e.where().field, "network.snap_tolerance");
    EXPECT_NE(std::string(e.what()).find("snap_tolerance_m"), std::string::npos) << e.what();
  }
}
