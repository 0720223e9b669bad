// Reading the [prepare] fields (drainage area, class) per reach record.
#include "reachwise/io/ReachValues.hpp"

#include <gtest/gtest.h>

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <cmath>

#include "network/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "support/Scratch.hpp"

using namespace reachwise;
using network::ReachTable;

namespace {

/// rivers: fid 100 (DA 12.5, KIND "braided"), 101 (DA null, KIND 3 as
/// text), 102 (DA 40, KIND null), 103 (DA "abc").
std::string writeLayer(const std::string& path, bool bad_value) {
  io::ensureGdal();
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(driver->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  OGRLayer* layer = ds->CreateLayer("rivers", nullptr, wkbLineString, nullptr);
  OGRFieldDefn da("DA", bad_value ? OFTString : OFTReal);
  layer->CreateField(&da);
  OGRFieldDefn kind("KIND", OFTString);
  layer->CreateField(&kind);
  auto add = [&](std::int64_t fid, const char* a, const char* k) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetFID(fid);
    if (a) f.SetField("DA", a);
    if (k) f.SetField("KIND", k);
    OGRLineString line;
    line.addPoint(0, 0);
    line.addPoint(1, static_cast<double>(fid));
    f.SetGeometry(&line);
    EXPECT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  };
  add(100, "12.5", "braided");
  add(101, nullptr, " 3 ");
  add(102, "40", nullptr);
  if (bad_value) add(103, "abc", nullptr);
  return path;
}

/// Records of fids 100, 101 and the two pieces of the line of fid 102.
ReachTable records(const std::string& path) {
  ReachTable t = network::testing::TableBuilder()
                     .link("A", "C")
                     .link("B", "C")
                     .link("L.1", "L.2")
                     .link("L.2", std::nullopt)
                     .build();
  t.source = path;
  t.reaches[2].fid = t.reaches[3].fid = 102;
  t.reaches[2].line_id = t.reaches[3].line_id = "L";
  t.reaches[2].piece = 1;
  t.reaches[3].piece = 2;
  return t;
}

}  // namespace

TEST(ReachValues, NumbersByFidWithTheValueOnTheDownstreamPiece) {
  const auto dir = testsupport::testScratchDir();
  const ReachTable t = records(writeLayer((dir / "r.gpkg").string(), false));
  const auto area = io::readReachNumbers(t, "DA", true);
  ASSERT_EQ(area.size(), 4u);
  EXPECT_DOUBLE_EQ(area[0], 12.5);
  EXPECT_TRUE(std::isnan(area[1]));  // null
  EXPECT_TRUE(std::isnan(area[2]));  // upstream piece of the cut line
  EXPECT_DOUBLE_EQ(area[3], 40.0);
  const auto every = io::readReachNumbers(t, "DA", false);
  EXPECT_DOUBLE_EQ(every[2], 40.0);
}

TEST(ReachValues, Texts) {
  const auto dir = testsupport::testScratchDir();
  const ReachTable t = records(writeLayer((dir / "r.gpkg").string(), false));
  const auto kind = io::readReachTexts(t, "KIND");
  EXPECT_EQ(kind[0], "braided");
  EXPECT_EQ(kind[1], "3");  // trimmed
  EXPECT_FALSE(kind[2].has_value());
  EXPECT_FALSE(kind[3].has_value());
}

TEST(ReachValues, ErrorsNameFileLayerAndField) {
  const auto dir = testsupport::testScratchDir();
  const std::string path = writeLayer((dir / "r.gpkg").string(), true);
  const ReachTable t = records(path);
  try {
    io::readReachNumbers(t, "AREA_KM2", true);
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, path);
    EXPECT_EQ(e.where().layer, "rivers");
    EXPECT_EQ(e.where().field, "AREA_KM2");
  }
  try {
    io::readReachNumbers(t, "DA", true);
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().fid, 103);
    EXPECT_EQ(e.where().field, "DA");
  }
  ReachTable missing = t;
  missing.source = (dir / "none.gpkg").string();
  EXPECT_THROW(io::readReachTexts(missing, "KIND"), InputError);
}
