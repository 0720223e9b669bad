// Drainage area per reach: Hack's law, accumulation down a network with a
// confluence and a bifurcation, and where each value came from. Expected
// values are worked by hand in the comments.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "network/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/terrain/DrainageArea.hpp"

namespace reachwise::terrain {
namespace {

using network::ProblemCode;
using network::ProblemList;
using network::ReachGraph;
using network::ReachTable;
using network::testing::TableBuilder;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Relative tolerance for values computed with a few pow() calls against
// hand arithmetic carried to 7+ significant digits.
constexpr double kRel = 1e-6;

TEST(HackLaw, AreaFromLengthWorkedByHand) {
  // L = 10 km = 10000 / 1609.344 = 6.213712 mi; L / 1.4 = 4.438366;
  // A = 4.438366^(1/0.6): ln 4.438366 = 1.490290, × 1.666667 = 2.483817,
  // e^2.483817 = 11.98700 mi²; × 2.589988 km²/mi² = 31.0458 km².
  const LengthRelation hack;
  EXPECT_NEAR(hack.areaKm2(10000.0), 31.0458, 31.0458 * 1e-5);  // hand value has 6 digits
  // And back: 1.4 × (31.0458 / 2.589988)^0.6 mi = 6.2137 mi = 10 000 m.
  const double a_mi2 = hack.areaKm2(10000.0) / 2.589988110336;
  EXPECT_NEAR(1.4 * std::pow(a_mi2, 0.6) * 1609.344, 10000.0, 1e-6);
  EXPECT_EQ(hack.areaKm2(0.0), 0.0);
  EXPECT_TRUE(std::isnan(hack.areaKm2(kNaN)));
  // Other coefficients: L = 2 A (mi, mi²), L = 2 mi → A = 1 mi² = 2.589988 km².
  const LengthRelation linear{2.0, 1.0};
  EXPECT_NEAR(linear.areaKm2(2.0 * 1609.344), 2.589988110336, 1e-9);
}

/// H1 (1000 m) and H2 (2000 m) meet at C (3000 m).
ReachTable confluence() {
  return TableBuilder()
      .reach("H1", "C", {0, 1000}, {1000, 1000})
      .reach("H2", "C", {0, -2000}, {0, 0})
      .reach("C", std::nullopt, {1000, 1000}, {1000, 4000})
      .build();
}

TEST(LongestFlowPath, TakesTheLongerBranch) {
  const ReachTable t = confluence();
  const ReachGraph g(t);
  const auto path = longestFlowPathM(g);
  EXPECT_DOUBLE_EQ(path[0], 1000.0);
  EXPECT_DOUBLE_EQ(path[1], 2000.0);
  EXPECT_DOUBLE_EQ(path[2], 5000.0);  // 3000 + max(1000, 2000)
}

TEST(DrainageArea, LengthRelationAlongAChain) {
  // A (1000 m) → B (2000 m) → C (3000 m): longest paths 1000, 3000, 6000 m.
  const ReachTable t = TableBuilder()
                           .reach("A", "B", {0, 0}, {1000, 0})
                           .reach("B", "C", {1000, 0}, {3000, 0})
                           .reach("C", std::nullopt, {3000, 0}, {6000, 0})
                           .build();
  const ReachGraph g(t);
  ProblemList problems;
  const auto area = drainageArea(g, AreaOptions{}, problems);
  // Hack by hand: L = 1000 m = 0.621371 mi, /1.4 = 0.443837, ^(5/3) =
  // 0.258249 mi² = 0.668862 km²; 3000 m: 1.864114/1.4 = 1.331510,
  // ^(5/3) = 1.611551 mi² = 4.173864 km²; 6000 m: 3.728227/1.4 = 2.663019,
  // ^(5/3) = 5.116301 mi² = 13.251193 km².
  EXPECT_NEAR(area[0].km2, 0.668862, 0.668862 * kRel);
  EXPECT_NEAR(area[1].km2, 4.173864, 4.173864 * kRel);
  EXPECT_NEAR(area[2].km2, 13.251193, 13.251193 * kRel);
  for (const auto& a : area) EXPECT_EQ(a.source, AreaSource::LengthRelation);
  EXPECT_TRUE(problems.empty());
}

/// H1, H2 → C → B, which splits into D1 (share 0.7) and D2 (0.3); both
/// rejoin at E. Every reach 1000 m.
ReachTable braid() {
  return TableBuilder()
      .link("H1", "C")
      .link("H2", "C")
      .link("C", "B")
      .link("B", "D1;D2")
      .link("D1", "E", 0.7)
      .link("D2", "E", 0.3)
      .link("E", std::nullopt)
      .build();
}
enum { H1, H2, C, B, D1, D2, E };

TEST(DrainageArea, AccumulatesThroughAConfluenceAndABifurcation) {
  const ReachTable t = braid();
  const ReachGraph g(t);
  AreaOptions o;
  o.field_km2 = {10, 5, kNaN, kNaN, kNaN, kNaN, kNaN};
  o.field_name = "AREA";
  ProblemList problems;
  const auto a = drainageArea(g, o, problems);
  // Longest paths: C 2000 m, B 3000 m, D 4000 m, E 5000 m; Hack gives
  // C 2.12 km², B 4.17 km², at most 13.3 km² below: all below the sums.
  EXPECT_EQ(a[H1].source, AreaSource::Field);
  EXPECT_DOUBLE_EQ(a[H1].km2, 10.0);
  EXPECT_DOUBLE_EQ(a[C].km2, 15.0);   // 10 + 5
  EXPECT_EQ(a[C].source, AreaSource::UpstreamSum);
  EXPECT_EQ(a[C].own_source, AreaSource::LengthRelation);
  EXPECT_NEAR(a[C].own_km2, 2.1235031, 2.1235031 * kRel);  // Hack at 2000 m (1.242742 mi)
  EXPECT_DOUBLE_EQ(a[B].km2, 15.0);
  EXPECT_DOUBLE_EQ(a[D1].km2, 10.5);  // 0.7 × 15
  EXPECT_DOUBLE_EQ(a[D2].km2, 4.5);   // 0.3 × 15
  // The branches' own Hack values take their share of the basin's:
  // 0.3 × Hack(4000 m) = 0.3 × 6.7423 = 2.0227 km².
  EXPECT_NEAR(a[D2].own_km2, 0.3 * LengthRelation{}.areaKm2(4000.0), 1e-12);
  EXPECT_NEAR(a[E].km2, 15.0, 1e-12);  // 10.5 + 4.5: the braid rejoins
  EXPECT_TRUE(problems.empty());
}

TEST(DrainageArea, FieldAboveTheSumWinsAndBelowItIsReported) {
  const ReachTable t = braid();
  const ReachGraph g(t);
  AreaOptions o;
  o.field_name = "AREA";
  // D1's 12 km² is above its 10.5 from upstream: kept. E's 14 km² is
  // below 12 + 4.5 = 16.5 by 2.5 km² (15 %): reported, the sum is used.
  o.field_km2 = {10, 5, kNaN, kNaN, 12, kNaN, 14};
  ProblemList problems;
  const auto a = drainageArea(g, o, problems);
  EXPECT_DOUBLE_EQ(a[D1].km2, 12.0);
  EXPECT_EQ(a[D1].source, AreaSource::Field);
  EXPECT_DOUBLE_EQ(a[E].km2, 16.5);
  EXPECT_EQ(a[E].source, AreaSource::UpstreamSum);
  EXPECT_DOUBLE_EQ(a[E].own_km2, 14.0);
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_EQ(problems[0].code, ProblemCode::AreaBelowUpstream);
  EXPECT_EQ(problems[0].severity, network::Severity::Warning);
  EXPECT_EQ(problems[0].reach_id, "E");
  EXPECT_NE(problems[0].message.find("AREA"), std::string::npos) << problems[0].message;
  EXPECT_NE(problems[0].message.find("16.5"), std::string::npos) << problems[0].message;

  // 16.49 is below 16.5 by 0.01 km², less than 0.1 % of it (0.0165): the
  // sum is still used, without a warning (areas in fields are rounded).
  o.field_km2[E] = 16.49;
  problems.clear();
  const auto b = drainageArea(g, o, problems);
  EXPECT_DOUBLE_EQ(b[E].km2, 16.5);
  EXPECT_TRUE(problems.empty());
}

TEST(DrainageArea, UnresolvedSharesSplitEqually) {
  // Without split values and with default_split = "none" the graph has no
  // shares: the area is shared equally between the two branches.
  const ReachTable t = TableBuilder().link("A", "B;C").link("B", std::nullopt).link("C", std::nullopt).build();
  network::SplitRules rules;
  rules.fallback = network::DefaultSplit::None;
  const ReachGraph g(t, rules);
  AreaOptions o;
  o.field_km2 = {8, kNaN, kNaN};
  ProblemList problems;
  const auto a = drainageArea(g, o, problems);
  EXPECT_DOUBLE_EQ(a[1].km2, 4.0);
  EXPECT_DOUBLE_EQ(a[2].km2, 4.0);
}

TEST(DrainageArea, RasterValuesComeBeforeTheLengthRelation) {
  const ReachTable t = confluence();
  const ReachGraph g(t);
  AreaOptions o;
  o.field_km2 = {kNaN, 3, kNaN};
  ProblemList problems;
  // H1 from the raster (7), H2 from its field (3, the raster's 9 is not
  // used), C's raster value 9.5 is below 7 + 3: the sum, reported.
  const auto a = accumulateArea(g, o, {7, 9, 9.5}, problems);
  EXPECT_EQ(a[0].source, AreaSource::Raster);
  EXPECT_DOUBLE_EQ(a[0].km2, 7.0);
  EXPECT_EQ(a[1].source, AreaSource::Field);
  EXPECT_DOUBLE_EQ(a[1].km2, 3.0);
  EXPECT_DOUBLE_EQ(a[2].km2, 10.0);
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_NE(problems[0].message.find("raster"), std::string::npos);
  // A raster with no value at C (NaN): Hack at 5000 m (9.77 km²) is below
  // 10: the upstream sum, without a warning.
  problems.clear();
  const auto b = accumulateArea(g, o, {7, 9, kNaN}, problems);
  EXPECT_EQ(b[2].own_source, AreaSource::LengthRelation);
  EXPECT_EQ(b[2].source, AreaSource::UpstreamSum);
  EXPECT_DOUBLE_EQ(b[2].km2, 10.0);
  EXPECT_TRUE(problems.empty());
}

TEST(DrainageArea, BadInputIsAnErrorNotACrash) {
  const ReachTable t = confluence();
  const ReachGraph g(t);
  AreaOptions o;
  o.field_km2 = {1.0};  // one value for three reaches
  ProblemList problems;
  EXPECT_THROW(drainageArea(g, o, problems), InvalidParameter);

  o.field_km2 = {1.0, -2.0, kNaN};
  o.field_name = "AREA";
  try {
    drainageArea(g, o, problems);
    FAIL() << "a negative area must be refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().field, "AREA");
    EXPECT_EQ(e.where().reach_id, "H2");
  }

  const ReachTable loop = TableBuilder().link("A", "B").link("B", "A").build();
  const ReachGraph cyclic(loop);
  try {
    drainageArea(cyclic, AreaOptions{}, problems);
    FAIL() << "a cycle must be refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "memory.gpkg");
    EXPECT_NE(std::string(e.what()).find("cycle"), std::string::npos);
  }
}

TEST(AreaSourceNames, AreThoseDocumented) {
  EXPECT_EQ(areaSourceName(AreaSource::Field), "field");
  EXPECT_EQ(areaSourceName(AreaSource::Raster), "raster");
  EXPECT_EQ(areaSourceName(AreaSource::LengthRelation), "length_relation");
  EXPECT_EQ(areaSourceName(AreaSource::UpstreamSum), "upstream_sum");
}

}  // namespace
}  // namespace reachwise::terrain
