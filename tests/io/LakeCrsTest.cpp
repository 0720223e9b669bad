// Lakes on a geographic CRS: a lakes layer in the network's CRS is accepted
// whatever the axis order or WKT dialect GDAL stores it with, and one in
// another CRS is refused, naming the file.
#include <gtest/gtest.h>

#include "NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/LakeReader.hpp"
#include "reachwise/io/NetworkReader.hpp"

using namespace reachwise;
using fixtures::Layer;

namespace {

Layer lakeLayer(int epsg, const std::string& wkt) {
  Layer l;
  l.name = "lakes";
  l.epsg = epsg;
  l.type = wkbPolygon;
  l.fields = {{"lake_id", OFTString}, {"k_h", OFTReal}};
  l.features = {{wkt, {"L1", "5"}}};
  return l;
}

}  // namespace

TEST(LakeCrs, GeographicLakesInTheNetworksCrsAreRead) {
  fixtures::TempDir dir;
  Layer net;
  net.epsg = 4326;
  net.fields = fixtures::reachFields();
  net.features = {fixtures::reach("LINESTRING (15.0 47.02, 15.0 47.0)", "M", std::nullopt)};
  fixtures::write(dir.file("net.gpkg"), "GPKG", {net});
  network::ProblemList problems;
  const auto table = io::readNetwork(dir.file("net.gpkg"), {}, problems);
  io::LakeReadOptions options;
  options.network_crs_wkt = table.crs_wkt;

  fixtures::write(dir.file("lakes.gpkg"), "GPKG",
                  {lakeLayer(4326, "POLYGON ((14.99 47.0, 15.01 47.0, 15.01 47.01, 14.99 47.01, 14.99 47.0))")});
  const auto lakes = io::readLakes(dir.file("lakes.gpkg"), options);
  ASSERT_EQ(lakes.lakes.size(), 1u);
  // 0.02° × 0.01° at 47° N: about 1 520 m × 1 112 m (from memory, spherical
  // estimate); the geodesic area must be near 1.69 km².
  EXPECT_NEAR(lakes.lakes[0].area_m2, 1.69e6, 0.03e6);

  fixtures::write(dir.file("utm.gpkg"), "GPKG",
                  {lakeLayer(32633, "POLYGON ((500000 5200000, 501000 5200000, 501000 5201000, 500000 5200000))")});
  try {
    (void)io::readLakes(dir.file("utm.gpkg"), options);
    ADD_FAILURE() << "lakes in another CRS were read";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("utm.gpkg"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("reproject the lakes"), std::string::npos) << e.what();
  }
}
