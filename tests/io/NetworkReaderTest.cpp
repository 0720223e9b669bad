// Reading line layers into a ReachTable: formats, layer choice, fields, units, lengths.
#include "reachwise/io/NetworkReader.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <map>

#include "io/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/Validation.hpp"

using namespace reachwise;
using fixtures::Feature;
using fixtures::Field;
using fixtures::Layer;

namespace {

const std::string kSample = std::string(REACHWISE_SOURCE_DIR) + "/sample-network/";

/// A Y-shaped network: R2 and R3 join at the top of the outlet reach R1.
Layer yNetwork() {
  Layer l;
  l.fields = fixtures::reachFields();
  l.features = {
      fixtures::reach("LINESTRING (500000 5001000,500000 5000000)", "R1", std::nullopt, "0.001"),
      fixtures::reach("LINESTRING (499000 5002000,500000 5001000)", "R2", "R1", "0.002"),
      fixtures::reach("LINESTRING (501000 5001800,500500 5001400,500000 5001000)", "R3", "R1",
                      "0.003", "0.04", "3")};
  return l;
}

std::map<std::string, network::ReachRecord> byId(const network::ReachTable& t) {
  std::map<std::string, network::ReachRecord> out;
  for (const auto& r : t.reaches) out[r.id] = r;
  return out;
}

network::ReachTable read(const std::string& source, io::ReadOptions options,
                         network::ProblemList& problems) {
  return io::readNetwork(source, options, problems);
}

const network::Problem* findProblem(const network::ProblemList& ps, const std::string& code,
                                    const std::string& reach = "") {
  for (const auto& p : ps)
    if (p.codeName() == code && (reach.empty() || p.reach_id == reach)) return &p;
  return nullptr;
}

std::string codes(const network::ProblemList& ps) {
  std::string s;
  for (const auto& p : ps) s += std::string(p.codeName()) + "(" + p.reach_id + ": " + p.message + ") ";
  return s;
}

}  // namespace

TEST(NetworkReader, SameTableFromGeoPackageShapefileAndGeoJson) {
  fixtures::TempDir dir;
  fixtures::write(dir.file("y.gpkg"), "GPKG", {yNetwork()});
  fixtures::write(dir.file("y.geojson"), "GeoJSON", {yNetwork()});
  fixtures::write(dir.file("shp"), "ESRI Shapefile", {yNetwork()});  // folder of shapefiles
  network::ProblemList p1, p2, p3;
  const auto gpkg = read(dir.file("y.gpkg"), {}, p1);
  const auto json = read(dir.file("y.geojson"), {}, p2);
  // Shapefile field names are cut to 10 characters; the config maps them back.
  io::ReadOptions shp_opt;
  shp_opt.config = io::NetworkConfig::fromString(
      "[network.fields]\nbottom_width = \"bottom_wid\"\n", "test.toml");
  const auto shp = read(dir.file("shp/reaches.shp"), shp_opt, p3);
  EXPECT_TRUE(p1.empty()) << codes(p1);
  EXPECT_TRUE(p2.empty()) << codes(p2);
  EXPECT_TRUE(p3.empty()) << codes(p3);
  ASSERT_EQ(gpkg.reaches.size(), 3u);
  for (const auto* other : {&json, &shp}) {
    auto a = byId(gpkg), b = byId(*other);
    ASSERT_EQ(a.size(), b.size());
    for (const auto& [id, r] : a) {
      const auto& s = b.at(id);
      EXPECT_EQ(r.to_reach, s.to_reach) << id;
      EXPECT_DOUBLE_EQ(r.geometry_length_m, s.geometry_length_m) << id;
      EXPECT_DOUBLE_EQ(r.section.bed_slope, s.section.bed_slope) << id;
      EXPECT_DOUBLE_EQ(r.section.manning_n, s.section.manning_n) << id;
      EXPECT_DOUBLE_EQ(r.section.bottom_width_m, s.section.bottom_width_m) << id;
      EXPECT_EQ(r.line.size(), s.line.size()) << id;
    }
  }
  // Planar lengths of the fixture lines (Pythagoras): 1000, 1000·√2, 2·√(500²+400²).
  auto g = byId(gpkg);
  EXPECT_NEAR(g["R1"].geometry_length_m, 1000.0, 1e-9);
  EXPECT_NEAR(g["R2"].geometry_length_m, 1000.0 * std::sqrt(2.0), 1e-6);
  EXPECT_NEAR(g["R3"].geometry_length_m, 2 * std::hypot(500.0, 400.0), 1e-6);
  EXPECT_FALSE(g["R1"].to_reach.has_value());
  EXPECT_EQ(g["R3"].to_reach, "R1");
  EXPECT_TRUE(gpkg.has_to_reach);
  EXPECT_FALSE(gpkg.geographic);
}

TEST(NetworkReader, IntegerIdsAreReadAsText) {
  fixtures::TempDir dir;
  Layer l = yNetwork();
  l.fields[0].type = OFTInteger64;
  l.fields[1].type = OFTInteger;
  l.features[0].values[0] = "101";
  l.features[1].values[0] = "102";
  l.features[1].values[1] = "101";
  l.features[2].values[0] = "103";
  l.features[2].values[1] = "101";
  fixtures::write(dir.file("ids.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  auto t = byId(read(dir.file("ids.gpkg"), {}, problems));
  EXPECT_TRUE(problems.empty()) << codes(problems);
  ASSERT_EQ(t.count("102"), 1u);
  EXPECT_EQ(t["102"].to_reach, "101");
  EXPECT_FALSE(t["101"].to_reach.has_value());
}

TEST(NetworkReader, UsesTheOnlyLineLayer) {
  fixtures::TempDir dir;
  Layer points;
  points.name = "gauges";
  points.type = wkbPoint;
  points.fields = {{"name", OFTString}};
  points.features = {{"POINT (500000 5000000)", {"gauge A"}}};
  fixtures::write(dir.file("two.gpkg"), "GPKG", {points, yNetwork()});
  network::ProblemList problems;
  const auto t = read(dir.file("two.gpkg"), {}, problems);
  EXPECT_EQ(t.layer, "reaches");
  EXPECT_EQ(t.reaches.size(), 3u);
}

TEST(NetworkReader, SeveralLineLayersAreRefusedAndListed) {
  fixtures::TempDir dir;
  Layer second = yNetwork();
  second.name = "old_reaches";
  fixtures::write(dir.file("two.gpkg"), "GPKG", {yNetwork(), second});
  network::ProblemList problems;
  try {
    read(dir.file("two.gpkg"), {}, problems);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    const std::string msg = e.what();
    EXPECT_NE(msg.find("reaches"), std::string::npos) << msg;
    EXPECT_NE(msg.find("old_reaches"), std::string::npos) << msg;
    EXPECT_EQ(e.where().file, dir.file("two.gpkg"));
  }
  EXPECT_EQ(io::lineLayers(dir.file("two.gpkg")).size(), 2u);
  io::ReadOptions opt;
  opt.layer = "old_reaches";
  EXPECT_EQ(read(dir.file("two.gpkg"), opt, problems).layer, "old_reaches");
  opt.layer = "nonesuch";
  EXPECT_THROW(read(dir.file("two.gpkg"), opt, problems), InputError);
}

TEST(NetworkReader, UnreadableSourceIsAnInputError) {
  network::ProblemList problems;
  EXPECT_THROW(read("/nonexistent/folder/net.gpkg", {}, problems), InputError);
}

TEST(NetworkReader, MissingRequiredFieldNamesFileLayerAndField) {
  network::ProblemList problems;
  try {
    read(kSample + "missing_field.gpkg", {}, problems);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().field, "slope");
    EXPECT_EQ(e.where().layer, "reaches");
    EXPECT_NE(e.where().file.find("missing_field.gpkg"), std::string::npos);
  }
  // A config default stands in for the missing field.
  io::ReadOptions opt;
  opt.config = io::NetworkConfig::fromString("[network.fields]\nslope = { default = 0.002 }\n",
                                             "test.toml");
  const auto t = read(kSample + "missing_field.gpkg", opt, problems);
  ASSERT_FALSE(t.reaches.empty());
  EXPECT_DOUBLE_EQ(t.reaches.front().section.bed_slope, 0.002);
}

TEST(NetworkReader, LayerWithoutCrsNeedsALengthUnit) {
  fixtures::TempDir dir;
  Layer l = yNetwork();
  l.epsg = 0;
  fixtures::write(dir.file("nocrs.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  EXPECT_THROW(read(dir.file("nocrs.gpkg"), {}, problems), InputError);
  io::ReadOptions opt;
  opt.config = io::NetworkConfig::fromString("[network]\nlength_unit = \"ft\"\n", "t.toml");
  auto t = byId(read(dir.file("nocrs.gpkg"), opt, problems));
  // 1 international foot = 0.3048 m exactly (1959 international yard and pound agreement).
  EXPECT_NEAR(t["R1"].geometry_length_m, 1000 * 0.3048, 1e-9);
}

TEST(NetworkReader, GeodesicLengthsOnWgs84) {
  fixtures::TempDir dir;
  Layer l;
  l.epsg = 4326;
  l.fields = fixtures::reachFields();
  l.features = {fixtures::reach("LINESTRING (0 0,0 1)", "EQ", std::nullopt),
                fixtures::reach("LINESTRING (-73.8 40.6,-0.5 51.6)", "JL", std::nullopt)};
  fixtures::write(dir.file("geo.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  const auto table = read(dir.file("geo.gpkg"), {}, problems);
  auto t = byId(table);
  EXPECT_TRUE(table.geographic);
  // Meridian arc from the equator to 1° N on WGS84: 110574.389 m (from memory;
  // standard geodesy tables give 110.574 km for the first degree of latitude).
  EXPECT_NEAR(t["EQ"].geometry_length_m, 110574.389, 0.1);
  // GeographicLib's documented Geodesic example, JFK (40.6 N, 73.8 W) to LHR
  // (51.6 N, 0.5 W): 5551.76 km (from memory of its example output).
  EXPECT_NEAR(t["JL"].geometry_length_m / 1000.0, 5551.76, 0.01);
}

TEST(NetworkReader, ProjectedLengthInUsSurveyFeet) {
  fixtures::TempDir dir;
  Layer l;
  l.epsg = 2263;  // NAD83 / New York Long Island (ftUS)
  l.fields = fixtures::reachFields();
  l.features = {fixtures::reach("LINESTRING (1000000 200000,1000600 200800)", "F1", std::nullopt)};
  fixtures::write(dir.file("ft.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  auto t = byId(read(dir.file("ft.gpkg"), {}, problems));
  // 1000 ftUS (a 600-800-1000 right triangle); the US survey foot is 1200/3937 m by definition.
  EXPECT_NEAR(t["F1"].geometry_length_m, 1000.0 * 1200.0 / 3937.0, 1e-6);
}

TEST(NetworkReader, UsCustomaryUnitsAreConvertedToMetres) {
  fixtures::TempDir dir;
  Layer l = yNetwork();
  l.fields.push_back({"length", OFTReal});
  for (auto& f : l.features) f.values.push_back("3280.84");
  fixtures::write(dir.file("us.gpkg"), "GPKG", {l});
  io::ReadOptions opt;
  opt.config = io::NetworkConfig::fromString("[network]\nunits = \"us\"\n", "t.toml");
  network::ProblemList problems;
  auto t = byId(read(dir.file("us.gpkg"), opt, problems));
  // 0.3048 m per foot, exact (international foot).
  EXPECT_NEAR(t["R1"].section.bottom_width_m, 5 * 0.3048, 1e-12);
  EXPECT_NEAR(t["R1"].length_m, 3280.84 * 0.3048, 1e-9);
  EXPECT_DOUBLE_EQ(t["R1"].section.side_slope, 2.0);   // ratios are not converted
  EXPECT_DOUBLE_EQ(t["R1"].section.manning_n, 0.035);  // nor is n (SI form of Manning's equation)
}

TEST(NetworkReader, LengthFieldWinsAndADisagreementWarns) {
  fixtures::TempDir dir;
  Layer l = yNetwork();
  l.fields.push_back({"length", OFTReal});
  l.features[0].values.push_back("1050");  // within 10 % of 1000 m
  l.features[1].values.push_back("2000");  // 41 % more than 1414 m
  l.features[2].values.push_back(std::nullopt);
  fixtures::write(dir.file("len.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  auto t = byId(read(dir.file("len.gpkg"), {}, problems));
  EXPECT_DOUBLE_EQ(t["R1"].length_m, 1050);
  EXPECT_DOUBLE_EQ(t["R2"].length_m, 2000);
  EXPECT_DOUBLE_EQ(t["R3"].length_m, t["R3"].geometry_length_m);
  EXPECT_EQ(findProblem(problems, "length_mismatch", "R1"), nullptr);
  const auto* p = findProblem(problems, "length_mismatch", "R2");
  ASSERT_NE(p, nullptr) << codes(problems);
  EXPECT_EQ(p->severity, network::Severity::Warning);
}

TEST(NetworkReader, MultiLineStringPartsAreMergedAndZIsKept) {
  fixtures::TempDir dir;
  Layer l;
  l.type = wkbMultiLineString25D;
  l.fields = fixtures::reachFields();
  l.features = {
      // Second part digitised backwards; the parts meet at (0 100).
      fixtures::reach("MULTILINESTRING Z ((0 0 10,0 100 9),(0 200 8,0 100 9))", "M1", std::nullopt),
      fixtures::reach("MULTILINESTRING Z ((10 0 10,10 100 9),(10 150 8,10 250 7))", "M2",
                      std::nullopt)};
  fixtures::write(dir.file("multi.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  io::ReadOptions opt;
  opt.config.topology = io::TopologySource::Ids;
  auto t = byId(read(dir.file("multi.gpkg"), opt, problems));
  ASSERT_EQ(t["M1"].line.size(), 3u);
  EXPECT_DOUBLE_EQ(t["M1"].line.front().y, 0.0);  // keeps the first part's direction
  EXPECT_DOUBLE_EQ(t["M1"].line.back().y, 200.0);
  EXPECT_DOUBLE_EQ(t["M1"].line.back().z, 8.0);
  EXPECT_NEAR(t["M1"].geometry_length_m, 200.0, 1e-9);
  EXPECT_EQ(findProblem(problems, "multipart_gap", "M1"), nullptr);
  EXPECT_NE(findProblem(problems, "multipart_gap", "M2"), nullptr) << codes(problems);
}

TEST(NetworkReader, SampleNetworkReadsCleanly) {
  network::ProblemList problems;
  io::ReadSummary summary;
  const auto table = io::readNetwork(kSample + "network.gpkg", {}, problems, &summary);
  EXPECT_TRUE(problems.empty()) << codes(problems);
  EXPECT_FALSE(summary.topology_from_geometry);
  ASSERT_GE(table.reaches.size(), 30u);
  ASSERT_LE(table.reaches.size(), 80u);
  std::size_t outlets = 0, circles = 0, two_stage = 0;
  for (const auto& r : table.reaches) {
    outlets += !r.to_reach.has_value();
    circles += r.section.shape == hydraulics::Shape::Circle;
    two_stage += r.section.shape == hydraulics::Shape::TwoStage;
    EXPECT_GE(r.section.bed_slope, 0.0005) << r.id;
    EXPECT_LE(r.section.bed_slope, 0.02) << r.id;
    EXPECT_GT(r.length_m, 0) << r.id;
  }
  EXPECT_EQ(outlets, 1u);
  EXPECT_GE(circles, 2u);
  EXPECT_GE(two_stage, 2u);
}

TEST(NetworkReader, EndElevationsGiveTheSlopeWhenNoSlopeFieldExists) {
  fixtures::TempDir dir;
  Layer l;
  l.fields = {{"reach_id", OFTString},     {"manning_n", OFTReal},     {"bottom_width", OFTReal},
              {"up_elevation", OFTReal},   {"down_elevation", OFTReal}};
  l.features = {{"LINESTRING (500000 5001000,500000 5000000)", {"E1", "0.03", "6", "102.5", "100"}},
                {"LINESTRING (500000 5002000,500000 5001000)", {"E2", "0.03", "6", "90", "102.5"}}};
  fixtures::write(dir.file("elev.gpkg"), "GPKG", {l});
  network::ProblemList problems;
  io::ReadOptions opt;
  opt.config.topology = io::TopologySource::Geometry;
  const auto table = read(dir.file("elev.gpkg"), opt, problems);
  auto t = byId(table);
  EXPECT_NEAR(t["E1"].section.bed_slope, 2.5 / 1000.0, 1e-15);  // drop over length
  EXPECT_NEAR(t["E2"].section.bed_slope, -12.5 / 1000.0, 1e-15);  // uphill: kept for validation
  const auto checked = network::validate(network::ReachGraph(table));
  EXPECT_NE(findProblem(checked, "invalid_attribute", "E2"), nullptr) << codes(checked);
}
