// Bad features give problems with stable codes; bad layers give typed errors.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "io/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/network/Validation.hpp"

using namespace reachwise;
using fixtures::Feature;
using fixtures::Layer;
using network::Severity;

namespace {

Layer mixedLayer() {
  Layer l;
  l.type = wkbUnknown;  // any geometry, so points and polygons can be stored
  l.fields = {{"reach_id", OFTString},    {"to_reach", OFTString}, {"slope", OFTString},
              {"manning_n", OFTReal},     {"bottom_width", OFTReal}, {"side_slope", OFTReal},
              {"shape", OFTString},       {"diameter", OFTReal}};
  auto f = [](std::string wkt, std::optional<std::string> id, std::optional<std::string> slope,
              std::string n = "0.035", std::string w = "4", std::string shape = "trapezoid",
              std::optional<std::string> d = std::nullopt) {
    return Feature{std::move(wkt), {std::move(id), std::nullopt, std::move(slope), n, w, "1",
                                    shape, std::move(d)}};
  };
  const std::string line = "LINESTRING (0 0,0 100)";
  l.features = {
      f(line, "ok", "0.001"),
      f(line, "neg_slope", "-0.01"),
      f(line, "zero_n", "0.001", "0"),
      f(line, "neg_width", "0.001", "0.035", "-3"),
      f(line, "text_slope", "steep"),
      f(line, "nan_slope", "nan"),
      f(line, "null_slope", std::nullopt),
      f(line, "rough", "0.001", "0.5"),
      f(line, "steep", "0.5"),
      f("POINT (3 3)", "point", "0.001"),
      f("POLYGON ((0 0,1 0,1 1,0 0))", "polygon", "0.001"),
      f("", "no_geometry", "0.001"),
      f("LINESTRING EMPTY", "empty", "0.001"),
      f("LINESTRING (5 5,5 5)", "zero", "0.001"),
      f(line, "dup", "0.001"),
      f(line, "dup", "0.001"),
      f(line, std::nullopt, "0.001"),
      f(line, "pipe", "0.001", "0.013", "4", "circle"),
      f(line, "blob", "0.001", "0.035", "4", "blob"),
      f("MULTILINESTRING ((0 0,0 1),(5 5,5 6))", "gappy", "0.001"),
  };
  return l;
}

bool has(const network::ProblemList& ps, const std::string& code, const std::string& id,
         Severity sev) {
  for (const auto& p : ps)
    if (p.codeName() == code && p.reach_id == id && p.severity == sev && p.fid >= 0) return true;
  return false;
}

std::string dump(const network::ProblemList& ps) {
  std::string s;
  for (const auto& p : ps) s += std::string(p.codeName()) + "[" + p.reach_id + "] ";
  return s;
}

}  // namespace

TEST(NetworkReaderProblems, EachBadFeatureGetsItsCode) {
  fixtures::TempDir dir;
  fixtures::write(dir.file("bad.gpkg"), "GPKG", {mixedLayer()});
  network::ProblemList ps;
  io::ReadSummary summary;
  const auto t = io::readNetwork(dir.file("bad.gpkg"), {}, ps, &summary);
  const auto E = Severity::Error, W = Severity::Warning;
  // The reader reports what it cannot read; ranges are the validation's.
  EXPECT_TRUE(has(ps, "invalid_attribute", "text_slope", E)) << dump(ps);
  EXPECT_FALSE(has(ps, "invalid_attribute", "neg_slope", E)) << dump(ps);
  network::mergeProblems(ps, network::validate(network::ReachGraph(t)));
  EXPECT_TRUE(has(ps, "invalid_attribute", "neg_slope", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "invalid_attribute", "zero_n", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "invalid_attribute", "neg_width", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "invalid_attribute", "text_slope", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "invalid_attribute", "nan_slope", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "missing_attribute", "null_slope", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "implausible_attribute", "rough", W)) << dump(ps);
  EXPECT_TRUE(has(ps, "implausible_attribute", "steep", W)) << dump(ps);
  EXPECT_TRUE(has(ps, "non_line_geometry", "point", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "non_line_geometry", "polygon", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "empty_geometry", "no_geometry", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "empty_geometry", "empty", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "zero_length", "zero", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "duplicate_id", "dup", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "missing_attribute", "", E)) << dump(ps);  // the feature without an id
  EXPECT_TRUE(has(ps, "missing_attribute", "pipe", E)) << dump(ps);  // circle without diameter
  EXPECT_TRUE(has(ps, "invalid_attribute", "blob", E)) << dump(ps);
  EXPECT_TRUE(has(ps, "multipart_gap", "gappy", E)) << dump(ps);
  for (const auto& p : ps) {
    if (p.severity == Severity::Info) continue;  // 14 unlinked reaches: 14 basins, one is "ok"'s
    EXPECT_NE(p.reach_id, "ok") << p.codeName();
  }
  // Left out: 4 unusable geometries, the second "dup" and the feature without id.
  EXPECT_EQ(summary.features, 20u);
  EXPECT_EQ(summary.skipped, 6u);
  EXPECT_EQ(t.reaches.size(), 14u);
  for (const auto& r : t.reaches) EXPECT_GE(r.line.size(), 2u) << r.id;
}

TEST(NetworkReaderProblems, NanCoordinatesAreAProblemNotACrash) {
  fixtures::TempDir dir;
  Layer l;
  l.fields = fixtures::reachFields();
  l.features = {fixtures::reach("LINESTRING (0 0,0 100)", "good", std::nullopt)};
  fixtures::write(dir.file("nan.gpkg"), "GPKG", {l});
  {
    GDALDatasetUniquePtr ds(GDALDataset::Open(dir.file("nan.gpkg").c_str(),
                                              GDAL_OF_VECTOR | GDAL_OF_UPDATE));
    ASSERT_TRUE(ds);
    OGRLayer* layer = ds->GetLayer(0);
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", "nan_xy");
    f.SetField("slope", 0.001);
    f.SetField("manning_n", 0.03);
    f.SetField("bottom_width", 3.0);
    OGRLineString line;
    line.addPoint(0.0, 0.0);
    line.addPoint(std::numeric_limits<double>::quiet_NaN(), 50.0);
    f.SetGeometry(&line);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
  network::ProblemList ps;
  const auto t = io::readNetwork(dir.file("nan.gpkg"), {}, ps);
  EXPECT_TRUE(has(ps, "invalid_geometry", "nan_xy", Severity::Error)) << dump(ps);
  ASSERT_EQ(t.reaches.size(), 1u);
  EXPECT_EQ(t.reaches.front().id, "good");
}

TEST(NetworkReaderProblems, EmptyLayerIsReported) {
  fixtures::TempDir dir;
  Layer l;
  l.fields = fixtures::reachFields();
  fixtures::write(dir.file("empty.gpkg"), "GPKG", {l});
  network::ProblemList ps;
  const auto t = io::readNetwork(dir.file("empty.gpkg"), {}, ps);
  EXPECT_TRUE(t.reaches.empty());
  ASSERT_EQ(ps.size(), 1u);
  EXPECT_EQ(ps.front().code, network::ProblemCode::EmptyLayer);
  EXPECT_EQ(ps.front().severity, Severity::Error);
}

TEST(NetworkReaderProblems, TopologyFromIdsWithoutTheFieldIsRefused) {
  fixtures::TempDir dir;
  Layer l;
  l.fields = {{"reach_id", OFTString}, {"slope", OFTReal}, {"manning_n", OFTReal},
              {"bottom_width", OFTReal}};
  l.features = {{"LINESTRING (0 0,0 100)", {"A", "0.001", "0.03", "2"}}};
  fixtures::write(dir.file("noto.gpkg"), "GPKG", {l});
  io::ReadOptions opt;
  opt.config.topology = io::TopologySource::Ids;
  network::ProblemList ps;
  try {
    io::readNetwork(dir.file("noto.gpkg"), opt, ps);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().field, "to_reach");
  }
}

TEST(NetworkReaderProblems, TwoStageNeedsBothBankDepthAndFloodplainWidth) {
  fixtures::TempDir dir;
  Layer l;
  l.fields = {{"reach_id", OFTString},   {"slope", OFTReal},          {"manning_n", OFTReal},
              {"bottom_width", OFTReal}, {"bank_depth", OFTReal},     {"floodplain_width", OFTReal},
              {"floodplain_n", OFTReal}};
  l.features = {{"LINESTRING (0 0,0 100)", {"full", "0.001", "0.03", "8", "2", "60", "0.06"}},
                {"LINESTRING (0 100,0 200)", {"half", "0.001", "0.03", "8", "2", std::nullopt,
                                              "0.06"}}};
  fixtures::write(dir.file("two.gpkg"), "GPKG", {l});
  network::ProblemList ps;
  io::ReadOptions opt;
  opt.config.topology = io::TopologySource::Geometry;
  const auto t = io::readNetwork(dir.file("two.gpkg"), opt, ps);
  ASSERT_EQ(t.reaches.size(), 2u);
  const auto& full = t.reaches[0];
  EXPECT_EQ(full.section.shape, hydraulics::Shape::TwoStage);
  EXPECT_DOUBLE_EQ(full.section.bank_depth_m, 2.0);
  EXPECT_DOUBLE_EQ(full.section.floodplain_width_m, 60.0);
  EXPECT_DOUBLE_EQ(full.section.floodplain_n, 0.06);
  EXPECT_EQ(t.reaches[1].section.shape, hydraulics::Shape::Trapezoid);
  EXPECT_TRUE(has(ps, "missing_attribute", "half", Severity::Error)) << dump(ps);
}
