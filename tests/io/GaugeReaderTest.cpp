#include "reachwise/io/GaugeReader.hpp"

#include <GeographicLib/Geodesic.hpp>
#include <fmt/format.h>
#include <gtest/gtest.h>

#include <cmath>

#include "NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/network/ReachGraph.hpp"

using namespace reachwise;
using fixtures::Feature;
using fixtures::Layer;

namespace {

/// A Y: reaches A and B meet at (501000, 5001000) and flow into C, which
/// runs 1 km south (UTM 33N, metres).
Layer yNetwork(int epsg = 32633) {
  Layer l;
  l.epsg = epsg;
  l.fields = fixtures::reachFields();
  l.features = {fixtures::reach("LINESTRING (500000 5002000, 501000 5001000)", "A", "C"),
                fixtures::reach("LINESTRING (502000 5002000, 501000 5001000)", "B", "C"),
                fixtures::reach("LINESTRING (501000 5001000, 501000 5000000)", "C", std::nullopt)};
  return l;
}

Layer gaugeLayer(std::vector<Feature> features, int epsg = 32633) {
  Layer g;
  g.name = "gauges";
  g.epsg = epsg;
  g.type = wkbPoint;
  g.fields = {{"gauge_id", OFTString}, {"reach_id", OFTString}};
  g.features = std::move(features);
  return g;
}

struct Placed {
  io::GaugeTable gauges;
  std::vector<io::GaugePlace> places;
};

Placed place(const std::string& dir, const Layer& network, const Layer& gauges, double tolerance_m) {
  const std::string net_path = dir + "/net.gpkg", gauge_path = dir + "/gauges.gpkg";
  fixtures::write(net_path, "GPKG", {network});
  fixtures::write(gauge_path, "GPKG", {gauges});
  network::ProblemList problems;
  const network::ReachTable table = io::readNetwork(net_path, {}, problems);
  const network::NetworkPlan plan = network::ReachGraph(table).freeze();
  io::GaugeReadOptions options;
  options.network_crs_wkt = table.crs_wkt;
  Placed p;
  p.gauges = io::readGauges(gauge_path, options);
  p.places = io::placeGauges(p.gauges, table, plan, tolerance_m);
  return p;
}

}  // namespace

// Distances are plane geometry on a projected CRS (common practice): 30 m
// east of a north–south line; 10 m off the middle of a diagonal line.
TEST(GaugeReader, SnapsToTheNearestReachAndReportsTheDistance) {
  fixtures::TempDir dir;
  const double off = 10 / std::sqrt(2.0);
  const auto p = place(dir.path().string(), yNetwork(),
                       gaugeLayer({{"POINT (501030 5000500)", {"G1", std::nullopt}},
                                   {fmt::format("POINT ({} {})", 500500 + off, 5001500 + off), {"G2", std::nullopt}},
                                   {"POINT (501000 5001000)", {"G3", std::nullopt}},
                                   {"POINT (509000 5009000)", {"G4", "B"}}}),
                       50.0);
  ASSERT_EQ(p.places.size(), 4u);
  EXPECT_EQ(p.places[0].reach_id, "C");
  EXPECT_NEAR(p.places[0].snap_distance_m, 30.0, 1e-6);
  EXPECT_EQ(p.places[1].reach_id, "A");
  EXPECT_NEAR(p.places[1].snap_distance_m, 10.0, 1e-6);
  // On the confluence node: A and B end there, C starts there. A gauge
  // there is taken on a reach that ends there (the first by id), and the
  // others are listed.
  EXPECT_EQ(p.places[2].reach_id, "A");
  EXPECT_NEAR(p.places[2].snap_distance_m, 0.0, 1e-9);
  EXPECT_EQ(p.places[2].tied, (std::vector<std::string>{"B", "C"}));
  // A reach named in the layer wins over the geometry.
  EXPECT_EQ(p.places[3].reach_id, "B");
  EXPECT_TRUE(std::isnan(p.places[3].snap_distance_m));
}

// On a geographic CRS the reported distance is geodesic. The reference
// point is built with GeographicLib's direct problem (Karney 2013): 40 m due
// east of a point on a meridian line, so its foot on the line is that point
// (a geodesic leaving a meridian at right angles). The tolerance of 0.05 m
// covers finding the foot on a local plane (error of order d²/R).
TEST(GaugeReader, GeodesicDistanceOnAGeographicCrs) {
  fixtures::TempDir dir;
  Layer net;
  net.epsg = 4326;
  net.fields = fixtures::reachFields();
  net.features = {fixtures::reach("LINESTRING (15.0 47.02, 15.0 47.0)", "M", std::nullopt)};
  const GeographicLib::Geodesic& wgs84 = GeographicLib::Geodesic::WGS84();
  double lat = 0, lon = 0;
  wgs84.Direct(47.01, 15.0, 90.0, 40.0, lat, lon);
  const auto p = place(dir.path().string(), net,
                       gaugeLayer({{fmt::format("POINT ({:.12f} {:.12f})", lon, lat), {"G", std::nullopt}}}, 4326),
                       100.0);
  EXPECT_EQ(p.places[0].reach_id, "M");
  EXPECT_NEAR(p.places[0].snap_distance_m, 40.0, 0.05);
}

TEST(GaugeReader, BadGaugesNameTheGaugeAndField) {
  fixtures::TempDir dir;
  try {
    (void)place(dir.path().string(), yNetwork(), gaugeLayer({{"POINT (501300 5000500)", {"far", std::nullopt}}}),
                100.0);
    ADD_FAILURE() << "a gauge 300 m from every reach was placed";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().gauge_id, "far");
    const std::string what = e.what();
    EXPECT_NE(what.find("300.0 m from the nearest reach (C)"), std::string::npos) << what;
  }
  try {
    (void)place(dir.path().string(), yNetwork(), gaugeLayer({{"POINT (501000 5000500)", {"G1", "Z"}}}), 100.0);
    ADD_FAILURE() << "an unknown reach_id was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().gauge_id, "G1");
    EXPECT_EQ(e.where().field, "reach_id");
  }
  try {
    (void)place(dir.path().string(), yNetwork(),
                gaugeLayer({{"POINT (501000 5000500)", {"G1", std::nullopt}},
                            {"POINT (501000 5000600)", {"G1", std::nullopt}}}),
                100.0);
    ADD_FAILURE() << "a repeated gauge id was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().field, "gauge_id");
    EXPECT_EQ(e.where().fid, 2);
  }
  try {
    (void)place(dir.path().string(), yNetwork(), gaugeLayer({{"POINT (501000 5000500)", {"G1", std::nullopt}}}, 4326),
                100.0);
    ADD_FAILURE() << "gauges in another CRS were accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("reproject"), std::string::npos) << e.what();
  }
}
