// The grid index of linkLakes (network::LakeIndex) against the definition
// it stands in for: a point lies on a lake when insideRings or
// distanceToRings <= tolerance, every lake tested, in table order.
#include "reachwise/network/LakeIndex.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include "reachwise/network/Lakes.hpp"

using namespace reachwise::network;

namespace {

std::vector<std::size_t> bruteForce(const LakeTable& lakes, Point2 p, double tolerance) {
  std::vector<std::size_t> out;
  for (std::size_t l = 0; l < lakes.lakes.size(); ++l)
    if (insideRings(lakes.lakes[l].rings, p) || distanceToRings(lakes.lakes[l].rings, p) <= tolerance)
      out.push_back(l);
  return out;
}

std::vector<Point2> polygon(Point2 c, double r, int sides, double turn) {
  std::vector<Point2> ring;
  for (int k = 0; k < sides; ++k) {
    const double a = turn + 2 * M_PI * k / sides;
    ring.push_back({c.x + r * std::cos(a), c.y + r * std::sin(a)});
  }
  return ring;
}

}  // namespace

// Lakes of sizes over four orders of magnitude (some overlapping, some with
// holes, one covering most of the map so it is kept out of the grid), and
// points near their boundaries, inside, in holes and far away.
TEST(LakeIndex, SameLakesAsTestingEveryLake) {
  std::mt19937_64 gen(7);
  const auto u = [&] { return static_cast<double>(gen() >> 11) * 0x1.0p-53; };
  LakeTable lakes;
  for (int l = 0; l < 400; ++l) {
    LakeRecord lake;
    const Point2 c{500000 + 100000 * u(), 5000000 + 100000 * u()};
    const double r = 20 * std::pow(10.0, 3 * u());  // 20 m to 20 km
    lake.rings.push_back(polygon(c, r, 3 + static_cast<int>(gen() % 10), u()));
    if (l % 7 == 0) lake.rings.push_back(polygon(c, 0.4 * r, 5, 0.3));  // a hole (an island)
    lakes.lakes.push_back(std::move(lake));
  }
  LakeRecord huge;
  huge.rings.push_back(polygon({550000, 5050000}, 60000, 40, 0.1));
  lakes.lakes.push_back(huge);
  for (const double tolerance : {0.0, 5.0, 300.0}) {
    const LakeIndex index(lakes, tolerance);
    std::vector<std::size_t> got;
    std::size_t on_lakes = 0, several = 0;
    for (int k = 0; k < 8000; ++k) {
      Point2 p;
      if (k % 2 == 0) {  // near a lake's boundary: a vertex moved by up to 2 tolerances (or 10 m)
        const auto& ring = lakes.lakes[gen() % lakes.lakes.size()].rings.front();
        const Point2 v = ring[gen() % ring.size()];
        const double d = (2 * u() - 1) * std::max(2 * tolerance, 10.0);
        p = {v.x + d, v.y + (2 * u() - 1) * std::max(2 * tolerance, 10.0)};
      } else {  // anywhere, also beyond the lakes' extent
        p = {480000 + 140000 * u(), 4980000 + 140000 * u()};
      }
      const auto expected = bruteForce(lakes, p, tolerance);
      index.lakesAt(p, got);
      ASSERT_EQ(got, expected) << "point " << k << " at " << p.x << ", " << p.y << " tolerance " << tolerance;
      on_lakes += !expected.empty();
      several += expected.size() > 1;
    }
    // The sample must exercise hits, misses and overlaps to mean anything.
    EXPECT_GT(on_lakes, 400u);
    EXPECT_LT(on_lakes, 8000u);
    EXPECT_GT(several, 10u);
  }
}

TEST(LakeIndex, NoLakesAndDegenerateExtents) {
  LakeTable none;
  const LakeIndex empty(none, 5.0);
  std::vector<std::size_t> got{1, 2};
  empty.lakesAt({0, 0}, got);
  EXPECT_TRUE(got.empty());
  // Lakes in one row (zero-height extent if not for the tolerance) and one
  // lake exactly on another.
  LakeTable row;
  for (int l = 0; l < 50; ++l) {
    LakeRecord lake;
    lake.rings.push_back({{l * 100.0, 0}, {l * 100.0 + 10, 0}, {l * 100.0 + 10, 1e-9}});
    row.lakes.push_back(lake);
  }
  row.lakes.push_back(row.lakes[3]);
  const LakeIndex index(row, 0.5);
  for (double x = -50; x < 5100; x += 3.7) {
    const Point2 p{x, 0.2};
    index.lakesAt(p, got);
    EXPECT_EQ(got, bruteForce(row, p, 0.5)) << x;
  }
}
