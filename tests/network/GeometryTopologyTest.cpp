// Topology from line geometry: snapping, T-junction splits, orientation, gaps.
#include "reachwise/network/geos/GeometryTopology.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <map>

#include "reachwise/Error.hpp"

using namespace reachwise::network;
using reachwise::network::geos::Orientation;
using reachwise::network::geos::TopologyOptions;

namespace {

ReachRecord line(const std::string& id, std::vector<Point3> pts, double length_m = 0) {
  ReachRecord r;
  r.id = id;
  r.fid = static_cast<std::int64_t>(id.size());
  r.line = std::move(pts);
  r.geometry_length_m = length_m;
  r.length_m = length_m;
  return r;
}

std::map<std::string, ReachRecord> byId(const ReachTable& t) {
  std::map<std::string, ReachRecord> out;
  for (const auto& r : t.reaches) out[r.id] = r;
  return out;
}

std::size_t count(const ProblemList& ps, ProblemCode code) {
  std::size_t n = 0;
  for (const auto& p : ps) n += p.code == code;
  return n;
}

std::string down(const std::map<std::string, ReachRecord>& m, const std::string& id) {
  const auto& r = m.at(id);
  return r.to_reach ? *r.to_reach : "(outlet)";
}

}  // namespace

TEST(GeometryTopology, TributaryJoiningMidLineSplitsTheMainLine) {
  ReachTable t;
  t.reaches = {line("A", {{0, 0}, {2000, 0}}, 2000),
               // Ends 0.2 m short of A's interior, within the 5 m default tolerance.
               line("B", {{1000, 800}, {1000, 0.2}}, 799.8)};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, {}, ps);
  EXPECT_EQ(s.splits, 1u);
  auto m = byId(t);
  ASSERT_EQ(m.size(), 3u);
  ASSERT_TRUE(m.count("A.1") && m.count("A.2"));
  EXPECT_EQ(down(m, "A.1"), "A.2");
  EXPECT_EQ(down(m, "B"), "A.2");
  EXPECT_EQ(down(m, "A.2"), "(outlet)");
  // Lengths are shared in proportion to the planar pieces (1000 m each).
  EXPECT_NEAR(m["A.1"].length_m, 1000.0, 1e-9);
  EXPECT_NEAR(m["A.2"].geometry_length_m, 1000.0, 1e-9);
  EXPECT_DOUBLE_EQ(m["A.1"].line.back().x, 1000.0);
  EXPECT_EQ(count(ps, ProblemCode::SplitLine), 1u);
  EXPECT_EQ(ps.front().reach_id, "A");
  EXPECT_EQ(ps.front().severity, Severity::Warning);
  EXPECT_TRUE(t.has_to_reach);
}

TEST(GeometryTopology, EndsWithinTheToleranceSnapAndGapsBeyondAreReported) {
  ReachTable t;
  t.reaches = {line("down", {{0, 0}, {0, -1000}}),
               line("near", {{-500, 500}, {-3.0, 1.0}}),   // 3.2 m off: snapped (5 m default)
               line("far", {{500, 500}, {20.0, 0.0}})};    // 20 m off: a probable gap (search 50 m)
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, {}, ps);
  auto m = byId(t);
  EXPECT_EQ(down(m, "near"), "down");
  EXPECT_EQ(down(m, "far"), "(outlet)");
  EXPECT_DOUBLE_EQ(m["near"].line.back().x, 0.0);  // moved onto the node
  EXPECT_EQ(s.probable_gaps, 1u);
  ASSERT_EQ(count(ps, ProblemCode::ProbableGap), 1u);
  for (const auto& p : ps) {
    if (p.code != ProblemCode::ProbableGap) continue;
    EXPECT_EQ(p.reach_id, "far");
    EXPECT_DOUBLE_EQ(p.x, 20.0);
    EXPECT_DOUBLE_EQ(p.y, 0.0);
  }
}

TEST(GeometryTopology, ReorientsEachTreeTowardsItsOutlet) {
  // A Y whose left branch was digitised upstream: its downstream end is
  // not the junction. The only free end that is a digitised downstream
  // end is the bottom of "stem", so the tree must flow there.
  ReachTable t;
  t.reaches = {line("stem", {{0, 0}, {0, -1000}}),
               line("left", {{0, 0}, {-700, 700}}),  // reversed
               line("right", {{700, 700}, {0, 0}})};
  TopologyOptions opt;
  opt.orientation = Orientation::Outlets;
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  auto m = byId(t);
  EXPECT_EQ(s.flipped, 1u);
  EXPECT_EQ(count(ps, ProblemCode::FlippedLine), 1u);
  EXPECT_EQ(down(m, "left"), "stem");
  EXPECT_EQ(down(m, "right"), "stem");
  EXPECT_EQ(down(m, "stem"), "(outlet)");
  EXPECT_DOUBLE_EQ(m["left"].line.front().x, -700.0);  // now upstream first
  EXPECT_TRUE(m["left"].reoriented);
  EXPECT_FALSE(m["right"].reoriented);
  EXPECT_FALSE(m["stem"].reoriented);
}

TEST(GeometryTopology, NamedOutletTurnsAChainAround) {
  // A chain digitised from c to a, but the config says the outlet is c.
  ReachTable t;
  t.reaches = {line("c", {{0, 0}, {0, 100}}), line("b", {{0, 100}, {0, 200}}),
               line("a", {{0, 200}, {0, 300}})};
  TopologyOptions opt;
  opt.orientation = Orientation::Outlets;
  opt.outlets = {"c", "nonesuch"};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, opt, ps);
  auto m = byId(t);
  EXPECT_EQ(down(m, "a"), "b");
  EXPECT_EQ(down(m, "b"), "c");
  EXPECT_EQ(down(m, "c"), "(outlet)");
  EXPECT_EQ(count(ps, ProblemCode::FlippedLine), 3u);
  EXPECT_EQ(count(ps, ProblemCode::UnknownOutlet), 1u);
}

TEST(GeometryTopology, ElevationGivesDirection) {
  ReachTable t;
  t.reaches = {line("low", {{0, 0, 5}, {0, 100, 4}}),   // downhill as digitised
               line("up", {{0, 200, 7}, {0, 100, 4.5}}),
               line("rev", {{0, 0, 5}, {100, 0, 9}})};  // digitised uphill
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, {}, ps);  // Auto: every line has Z
  auto m = byId(t);
  EXPECT_EQ(count(ps, ProblemCode::FlippedLine), 1u);
  EXPECT_EQ(down(m, "rev"), "low");
  EXPECT_EQ(down(m, "up"), "(outlet)");  // its lower end meets "low"'s lower end
  EXPECT_DOUBLE_EQ(m["rev"].line.front().z, 9.0);
}

TEST(GeometryTopology, BifurcationNamesAllBranches) {
  ReachTable t;
  t.reaches = {line("in", {{0, 0}, {0, -100}}), line("east", {{0, -100}, {100, -200}}),
               line("west", {{0, -100}, {-100, -200}})};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, {}, ps);
  EXPECT_EQ(byId(t).at("in").to_reach, "east;west");
}

TEST(GeometryTopology, LineShorterThanTheToleranceIsClosed) {
  ReachTable t;
  t.reaches = {line("tiny", {{0, 0}, {0.1, 0}}), line("ok", {{10, 0}, {20, 0}})};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, {}, ps);
  EXPECT_EQ(count(ps, ProblemCode::ClosedLine), 1u);
}

TEST(GeometryTopology, DegenerateRecordsAreLeftOut) {
  ReachTable t;
  t.reaches = {line("one_point", {{0, 0}}), line("nan", {{0, 0}, {NAN, 1}}),
               line("ok", {{10, 0}, {20, 0}})};
  t.reaches[0].to_reach = "ok";
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, {}, ps);
  EXPECT_EQ(s.nodes, 2u);
  EXPECT_FALSE(t.reaches[0].to_reach.has_value());
  TopologyOptions bad;
  bad.snap_tolerance_m = -1;
  EXPECT_THROW(geos::buildTopologyFromGeometry(t, bad, ps), reachwise::InvalidParameter);
  TopologyOptions bad_search;
  bad_search.gap_search_m = -1;
  EXPECT_THROW(geos::buildTopologyFromGeometry(t, bad_search, ps), reachwise::InvalidParameter);
}
