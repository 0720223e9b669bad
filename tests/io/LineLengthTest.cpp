// Planar and geodesic line lengths.
#include "reachwise/io/LineLength.hpp"

#include <gtest/gtest.h>

#include <cmath>

using reachwise::io::LineLength;
using reachwise::network::Point3;

TEST(LineLength, PlanarTimesTheUnit) {
  const auto ft = LineLength::planar(0.3048);
  // 3-4-5 right triangles (Pythagoras), two segments of 5 ft each.
  EXPECT_NEAR(ft({{0, 0}, {3, 4}, {6, 8}}), 10 * 0.3048, 1e-12);
  EXPECT_TRUE(std::isnan(ft({{0, 0}, {NAN, 4}})));
  EXPECT_DOUBLE_EQ(ft.metresPerUnit(), 0.3048);
}

TEST(LineLength, GeodesicOnASphereIsTheGreatCircle) {
  // On a sphere (f = 0) of radius R the meridian from the equator to the
  // pole is a quarter circle, pi R / 2 (analytical).
  const double R = 6371000.0;
  const auto lonlat = LineLength::geodesic(R, 0.0, 1.0, false);
  EXPECT_NEAR(lonlat({{10, 0}, {10, 45}, {10, 90}}), M_PI * R / 2, 1e-6);
  // The same line with latitude first gives the same length.
  const auto latlon = LineLength::geodesic(R, 0.0, 1.0, true);
  EXPECT_NEAR(latlon({{0, 10}, {45, 10}, {90, 10}}), M_PI * R / 2, 1e-6);
  // Along the equator, 90 degrees of longitude is also a quarter circle.
  EXPECT_NEAR(lonlat({{0, 0}, {90, 0}}), M_PI * R / 2, 1e-6);
}

TEST(LineLength, GeodesicRefusesImpossibleLatitudes) {
  const auto g = LineLength::geodesic(6378137.0, 1 / 298.257223563, 1.0, false);
  EXPECT_TRUE(std::isnan(g({{0, 0}, {0, 95}})));
  EXPECT_TRUE(std::isnan(g({{0, 0}, {INFINITY, 1}})));
  EXPECT_TRUE(g.isGeodesic());
}
