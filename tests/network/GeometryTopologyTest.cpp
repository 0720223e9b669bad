// Topology from line geometry: snapping, T-junction splits, orientation, gaps.
#include "reachwise/network/geos/GeometryTopology.hpp"

#include <gtest/gtest.h>

#include <algorithm>
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
  EXPECT_EQ(s.snapped_ends, 1u);                     // only near's end moved
  EXPECT_NEAR(s.largest_snap_m, std::hypot(3.0, 1.0), 1e-12);
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

// ---------------------------------------------------------------- gap search and near-misses
// Lines in a projected CRS (x, y in metres). That a line end touching
// another line only through the network is not a gap is common practice:
// a confluence joins the lines that meet there, whatever their length.

namespace {

/// A main stem from (0, 200) to (0, -3000), cut at (0, 0) by `trib1` whose
/// end lies on it: the top piece `main.1` is a 200 m end reach. `trib2`
/// stops 30 m short of the main stem at y = -1500.
ReachTable shortEndReachAndNearMiss() {
  ReachTable t;
  t.reaches = {line("main", {{0, 200}, {0, -3000}}, 3200),
               line("trib1", {{-800, 400}, {0, 0}}),
               line("trib2", {{1000, -1000}, {30, -1500}})};
  return t;
}

const Problem* find(const ProblemList& ps, ProblemCode code, const std::string& reach) {
  for (const auto& p : ps)
    if (p.code == code && p.reach_id == reach) return &p;
  return nullptr;
}

}  // namespace

TEST(GeometryTopology, ShortEndReachIsNoGapAndATrueNearMissStillIs) {
  ReachTable t = shortEndReachAndNearMiss();
  TopologyOptions opt;
  opt.snap_tolerance_m = 25;  // gap search 250 m: reaches past the 200 m end reach main.1
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  auto m = byId(t);
  ASSERT_TRUE(m.count("main.1") && m.count("main.2"));
  EXPECT_NEAR(m["main.1"].length_m, 200.0, 1e-9);
  EXPECT_EQ(down(m, "main.1"), "main.2");
  EXPECT_EQ(down(m, "trib1"), "main.2");
  // The top end of main.1 lies 200 m from main.2 and 179 m from trib1,
  // both joined to it at (0, 0): not a gap.
  EXPECT_EQ(find(ps, ProblemCode::ProbableGap, "main.1"), nullptr);
  // trib2 ends 30 m from main.2, which it is not joined to.
  EXPECT_EQ(s.probable_gaps, 1u);
  const Problem* gap = find(ps, ProblemCode::ProbableGap, "trib2");
  ASSERT_NE(gap, nullptr);
  EXPECT_EQ(gap->severity, Severity::Error);
  EXPECT_DOUBLE_EQ(gap->x, 30.0);
  EXPECT_DOUBLE_EQ(gap->y, -1500.0);
  EXPECT_NE(gap->message.find("main.2"), std::string::npos) << gap->message;
  EXPECT_EQ(down(m, "trib2"), "(outlet)");
}

TEST(GeometryTopology, AnEndNearOnlyItsOwnNeighboursAtANodeIsNoGap) {
  // A Y whose branches are 150 m long, with a tolerance of 20 m (gap search
  // 200 m): each branch's headwater is within 200 m of the other branch and
  // of the stem, all joined to it at the junction.
  ReachTable t;
  t.reaches = {line("left", {{-100, 110}, {0, 0}}), line("right", {{100, 110}, {0, 0}}),
               line("stem", {{0, 0}, {0, -150}})};
  TopologyOptions opt;
  opt.snap_tolerance_m = 20;
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(s.probable_gaps, 0u);
  EXPECT_EQ(count(ps, ProblemCode::ProbableGap), 0u);
  // Nor are they near-misses: the lines they lie near are joined to them.
  EXPECT_TRUE(s.near_misses.empty());
}

TEST(GeometryTopology, OvershootAcrossTheMainStemIsAGapAsBefore) {
  // The tributary crosses the main stem and ends 30 m past it: its end is
  // 30 m from the stem, which is not cut (only line ends cut lines).
  ReachTable t;
  t.reaches = {line("main", {{0, 2000}, {0, -2000}}), line("trib", {{1500, 500}, {-30, 0}})};
  TopologyOptions opt;
  opt.snap_tolerance_m = 5;
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(s.splits, 0u);
  EXPECT_EQ(s.probable_gaps, 1u);
  const Problem* gap = find(ps, ProblemCode::ProbableGap, "trib");
  ASSERT_NE(gap, nullptr);
  EXPECT_DOUBLE_EQ(gap->x, -30.0);
  EXPECT_EQ(down(byId(t), "trib"), "(outlet)");
  ASSERT_EQ(s.near_misses.size(), 1u);
  EXPECT_NEAR(s.near_misses[0].distance_m, 30.0, 1e-9);
}

namespace {

/// A straight main stem along x = 0 and tributaries from the east ending
/// `gaps[k]` CRS units short of it, `spacing` apart (the first `spacing`
/// below the stem's top, the stem's bottom `spacing` below the last), each
/// spacing / 2 long: headwaters and the stem's ends lie at least that far
/// from every other line.
ReachTable comb(const std::vector<double>& gaps, double spacing = 3000) {
  ReachTable t;
  const double n = static_cast<double>(gaps.size());
  t.reaches.push_back(line("main", {{0, 0}, {0, -spacing * (n + 1)}}));
  for (std::size_t k = 0; k < gaps.size(); ++k) {
    const double y = -spacing * static_cast<double>(k + 1);
    t.reaches.push_back(line("t" + std::to_string(k), {{gaps[k] + spacing / 2, y}, {gaps[k], y}}));
  }
  return t;
}

}  // namespace

TEST(GeometryTopology, NearMissesAreCountedByDistanceBand) {
  ReachTable t = comb({0.7, 8, 60, 600, 2000});
  ProblemList ps;
  TopologyOptions opt;
  opt.snap_tolerance_m = 0.5;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  ASSERT_EQ(s.near_misses.size(), 4u);  // 2000 m is beyond the largest band
  const std::vector<double> want{0.7, 8, 60, 600};
  for (std::size_t k = 0; k < want.size(); ++k) {
    const auto& n = s.near_misses[k];
    EXPECT_EQ(n.reach_id, "t" + std::to_string(k));
    EXPECT_EQ(n.other_reach_id, "main");
    EXPECT_NEAR(n.distance_m, want[k], 1e-9);
    EXPECT_DOUBLE_EQ(n.x, want[k]);
    EXPECT_DOUBLE_EQ(n.y, -3000.0 * static_cast<double>(k + 1));
  }
  const auto bands = geos::nearMissBands(s.near_misses);
  ASSERT_EQ(bands.size(), 4u);
  const std::vector<std::size_t> ends{1, 2, 3, 4};
  for (std::size_t b = 0; b < 4; ++b) {
    EXPECT_DOUBLE_EQ(bands[b].within_m, geos::kNearMissBandsM[b]);
    EXPECT_EQ(bands[b].ends, ends[b]);
    // The tolerance that joins a band is its farthest end's distance.
    EXPECT_NEAR(bands[b].join_tolerance_m, want[b], 1e-9);
  }
  // Only the 0.7 m end is within the gap search (10 × 0.5 m).
  EXPECT_EQ(s.probable_gaps, 1u);
  // Near-misses are not in the problem list; nearMissProblem makes one.
  EXPECT_EQ(count(ps, ProblemCode::NearMiss), 0u);
  const Problem p = geos::nearMissProblem(s.near_misses[2]);
  EXPECT_EQ(p.code, ProblemCode::NearMiss);
  EXPECT_EQ(p.severity, Severity::Info);
  EXPECT_EQ(p.reach_id, "t2");
  EXPECT_EQ(p.other_reach_id, "main");
  EXPECT_NEAR(p.distance_m, 60.0, 1e-9);
}

TEST(GeometryTopology, NearMissDistancesUseTheMetresPerUnit) {
  // The same comb in feet: 1 ft = 0.3048 m exactly (international foot,
  // NIST SP 811, appendix B.8). 3 ft is 0.9144 m, 30 ft 9.144 m, 3000 ft
  // 914.4 m, 4000 ft 1219.2 m (beyond the largest band).
  ReachTable t = comb({3, 30, 3000, 4000}, 10000);  // headwaters 5000 ft = 1524 m out
  TopologyOptions opt;
  opt.snap_tolerance_m = 0.3048;  // 1 ft
  opt.crs.metres_per_unit = 0.3048;
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  ASSERT_EQ(s.near_misses.size(), 3u);
  EXPECT_NEAR(s.near_misses[0].distance_m, 0.9144, 1e-9);
  EXPECT_NEAR(s.near_misses[1].distance_m, 9.144, 1e-9);
  EXPECT_NEAR(s.near_misses[2].distance_m, 914.4, 1e-9);
  const auto bands = geos::nearMissBands(s.near_misses);
  EXPECT_EQ(bands[0].ends, 1u);
  EXPECT_EQ(bands[1].ends, 2u);
  EXPECT_EQ(bands[2].ends, 2u);
  EXPECT_NEAR(bands[2].join_tolerance_m, 9.144, 1e-9);
  EXPECT_EQ(bands[3].ends, 3u);
  opt.crs.metres_per_unit = 0;
  ReachTable again = comb({3});
  EXPECT_THROW(geos::buildTopologyFromGeometry(again, opt, ps), reachwise::InvalidParameter);
}

namespace {

/// A main stem along x = 0 and a tributary from the east ending 30 m short
/// of it: with the default 5 m tolerance (gap search 50 m) a probable gap.
ReachTable tributaryThirtyMetresShort() {
  ReachTable t;
  t.reaches = {line("main", {{0, 2000}, {0, -2000}}), line("trib", {{1530, 0}, {30, 0}})};
  return t;
}

}  // namespace

TEST(GeometryTopology, UnresolvedGapsAreErrorsByDefaultAndWarningsOnRequest) {
  ReachTable t = tributaryThirtyMetresShort();
  ProblemList ps;
  auto s = geos::buildTopologyFromGeometry(t, {}, ps);
  EXPECT_EQ(s.probable_gaps, 1u);
  const Problem* gap = find(ps, ProblemCode::ProbableGap, "trib");
  ASSERT_NE(gap, nullptr);
  EXPECT_EQ(gap->severity, Severity::Error);
  EXPECT_TRUE(hasErrors(ps));

  t = tributaryThirtyMetresShort();
  ps.clear();
  TopologyOptions opt;
  opt.gaps_are_errors = false;
  s = geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(s.probable_gaps, 1u);
  EXPECT_EQ(count(ps, ProblemCode::ProbableGap), 0u);
  const Problem* warning = find(ps, ProblemCode::UnresolvedGap, "trib");
  ASSERT_NE(warning, nullptr);
  EXPECT_EQ(warning->severity, Severity::Warning);
  EXPECT_DOUBLE_EQ(warning->x, 30.0);
  EXPECT_FALSE(hasErrors(ps));
  // The end stays as it is: trib is its own outlet, main is not joined to it.
  auto m = byId(t);
  EXPECT_EQ(down(m, "trib"), "(outlet)");
  EXPECT_EQ(down(m, "main"), "(outlet)");
}

TEST(GeometryTopology, EndsOfUnconnectedReachesAreNoGaps) {
  ReachTable t = tributaryThirtyMetresShort();
  TopologyOptions opt;
  opt.unconnected = {"trib"};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(s.probable_gaps, 0u);
  EXPECT_EQ(count(ps, ProblemCode::ProbableGap), 0u);
  EXPECT_EQ(count(ps, ProblemCode::UnresolvedGap), 0u);
  EXPECT_FALSE(hasErrors(ps));
}

TEST(GeometryTopology, UnconnectedCoversTheCutPiecesOfALine) {
  // "in" joins main mid-line at (0, 0), cutting it into main.1 and main.2;
  // main's top end (0, 2000) lies 30 m below the line "shore".
  auto lines = [] {
    ReachTable t;
    t.reaches = {line("main", {{0, 2000}, {0, -2000}}), line("in", {{1000, 0}, {0, 0}}),
                 line("shore", {{-500, 2030}, {500, 2030}})};
    return t;
  };
  ReachTable t = lines();
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, {}, ps);
  ASSERT_NE(find(ps, ProblemCode::ProbableGap, "main.1"), nullptr);  // without it, a gap

  t = lines();
  ps.clear();
  TopologyOptions opt;
  opt.unconnected = {"main"};
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(s.splits, 1u);
  EXPECT_EQ(s.probable_gaps, 0u);
  EXPECT_EQ(count(ps, ProblemCode::ProbableGap), 0u);
}

TEST(GeometryTopology, AnUnconnectedIdNotInTheTableIsRefused) {
  ReachTable t = tributaryThirtyMetresShort();
  TopologyOptions opt;
  opt.unconnected = {"tributary"};
  ProblemList ps;
  try {
    geos::buildTopologyFromGeometry(t, opt, ps);
    ADD_FAILURE() << "no error for an unknown unconnected id";
  } catch (const reachwise::InvalidParameter& e) {
    EXPECT_EQ(e.quantity(), "unconnected");
    EXPECT_NE(std::string(e.what()).find("tributary"), std::string::npos) << e.what();
  }
}

// ---------------------------------------------------------------- several outlets

namespace {

TopologyOptions toOutlets(std::vector<std::string> outlets) {
  TopologyOptions opt;
  opt.orientation = Orientation::Outlets;
  opt.outlets = std::move(outlets);
  return opt;
}

/// A main line M flowing from (0, 0) to (3000, 0), falling from Z 100 to
/// 70; tributaries T and U end on it at x = 1000 and x = 1800, cutting it
/// into pieces of 1000, 800 and 1200 m. `reversed`: M is digitised from
/// its bottom end; elevation orientation turns it back.
ReachTable mainWithTwoTributaries(bool reversed) {
  std::vector<Point3> main{{0, 0, 100}, {3000, 0, 70}};
  if (reversed) std::reverse(main.begin(), main.end());
  ReachTable t;
  t.reaches = {line("M", main, 3000), line("T", {{1000, 800, 120}, {1000, 0, 90}}, 800),
               line("U", {{1800, -600, 110}, {1800, 0, 82}}, 600)};
  t.reaches[0].base_flow_m3s = 3.0;
  return t;
}

struct Built {
  ReachTable table;
  ProblemList problems;
  std::map<std::string, ReachRecord> by_id;
};

Built buildByElevation(bool reversed) {
  Built b{mainWithTwoTributaries(reversed), {}, {}};
  TopologyOptions opt;
  opt.orientation = Orientation::Elevation;
  geos::buildTopologyFromGeometry(b.table, opt, b.problems);
  b.by_id = byId(b.table);
  return b;
}

std::vector<std::string> messagesOf(const ProblemList& ps, ProblemCode code) {
  std::vector<std::string> out;
  for (const auto& p : ps)
    if (p.code == code) out.push_back(p.message);
  std::sort(out.begin(), out.end());
  return out;
}

}  // namespace

TEST(GeometryTopology, BothNamedMouthsOfADeltaAreOutlets) {
  // A river splits at (0, 0) into two distributaries reaching the sea at
  // two mouths. With one outlet the second mouth's channel would have to
  // flow uphill into the first; with both named, every line keeps its
  // digitised direction and the junction is a bifurcation.
  ReachTable t;
  t.reaches = {line("river", {{0, 3000}, {0, 0}}), line("west", {{0, 0}, {-800, -1500}}),
               line("east", {{0, 0}, {900, -2500}})};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, toOutlets({"west", "east"}), ps);
  auto m = byId(t);
  EXPECT_EQ(s.flipped, 0u);
  EXPECT_EQ(down(m, "river"), "east;west");
  EXPECT_EQ(down(m, "west"), "(outlet)");
  EXPECT_EQ(down(m, "east"), "(outlet)");
  // Only one named: the other mouth's channel turns into a tributary (the
  // single-outlet rule), which is what naming both prevents.
  ReachTable one;
  one.reaches = {line("river", {{0, 3000}, {0, 0}}), line("west", {{0, 0}, {-800, -1500}}),
                 line("east", {{0, 0}, {900, -2500}})};
  ProblemList ps1;
  geos::buildTopologyFromGeometry(one, toOutlets({"west"}), ps1);
  EXPECT_EQ(down(byId(one), "east"), "west");
}

TEST(GeometryTopology, ADistributaryDigitisedUpstreamIsTurnedTowardsItsMouth) {
  ReachTable t;
  t.reaches = {line("river", {{0, 3000}, {0, 0}}), line("west", {{0, 0}, {-800, -1500}}),
               line("east", {{900, -2500}, {0, 0}})};  // digitised from the mouth
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, toOutlets({"west", "east"}), ps);
  auto m = byId(t);
  EXPECT_EQ(s.flipped, 1u);
  EXPECT_TRUE(m["east"].reoriented);
  EXPECT_EQ(down(m, "river"), "east;west");
  EXPECT_EQ(down(m, "east"), "(outlet)");
  const Problem* p = find(ps, ProblemCode::FlippedLine, "east");
  ASSERT_NE(p, nullptr);
  // The reason names the outlet and the distance along the network (the
  // line's own length, hypot(900, 2500) = 2657 m).
  EXPECT_NE(p->message.find("towards outlet east (2657 m"), std::string::npos) << p->message;
}

TEST(GeometryTopology, AChannelBetweenTwoDistributariesKeepsItsDigitisedDirection) {
  // Two distributaries, each in two lines, joined by a cross channel "x"
  // from P (-250, -500) on the west arm, 304 m above its mouth, to Q
  // (250, -500) on the east arm, 2030 m above its mouth. Both of x's ends
  // drain to a mouth without it, so it keeps its digitised direction P -> Q
  // even though Q is farther from an outlet.
  ReachTable t;
  t.reaches = {line("river", {{0, 3000}, {0, 0}}),
               line("w1", {{0, 0}, {-250, -500}}), line("w2", {{-250, -500}, {-300, -800}}),
               line("e1", {{0, 0}, {250, -500}}), line("e2", {{250, -500}, {600, -2500}}),
               line("x", {{-250, -500}, {250, -500}})};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, toOutlets({"w2", "e2"}), ps);
  auto m = byId(t);
  EXPECT_EQ(s.flipped, 0u);
  EXPECT_EQ(down(m, "x"), "e2");
  EXPECT_EQ(down(m, "w1"), "w2;x");
  EXPECT_EQ(down(m, "e1"), "e2");
}

TEST(GeometryTopology, TheLongerArmOfABraidDigitisedBackwardsIsTurned) {
  // up -> A, then two arms A -> B, then down. The long arm was digitised
  // from B to A: keeping that would make a loop A -> B -> A, so it turns.
  ReachTable t;
  t.reaches = {line("up", {{0, 1000}, {0, 0}}), line("short", {{0, 0}, {0, -1000}}),
               line("long", {{0, -1000}, {400, -500}, {0, 0}}),
               line("down", {{0, -1000}, {0, -2000}})};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, toOutlets({}), ps);
  auto m = byId(t);
  EXPECT_EQ(s.flipped, 1u);
  EXPECT_TRUE(m["long"].reoriented);
  EXPECT_EQ(down(m, "up"), "long;short");
  EXPECT_EQ(down(m, "long"), "down");
  EXPECT_EQ(down(m, "short"), "down");
}

TEST(GeometryTopology, ZWinsOverTheDistanceToAnOutlet) {
  // "k" runs from the outlet's junction up to a free end, and its Z says
  // that is downhill: it keeps its direction (its top end becomes a second
  // outlet), where without Z it would be turned towards the named outlet.
  auto build = [](double z0, double z1) {
    ReachTable t;
    t.reaches = {line("o", {{0, 0}, {0, -100}}), line("h", {{100, 0}, {0, 0}}),
                 line("k", {{0, 0, z0}, {0, 100, z1}})};
    ProblemList ps;
    geos::buildTopologyFromGeometry(t, toOutlets({"o"}), ps);
    return byId(t);
  };
  auto with_z = build(5, 3);
  EXPECT_FALSE(with_z["k"].reoriented);
  EXPECT_EQ(down(with_z, "k"), "(outlet)");
  auto without_z = build(NAN, NAN);
  EXPECT_TRUE(without_z["k"].reoriented);
  EXPECT_EQ(down(without_z, "k"), "o");
}

TEST(GeometryTopology, NamedOutletsOrientEvenWithAutomaticOrientation) {
  ReachTable t;
  t.reaches = {line("c", {{0, 0}, {0, 100}}), line("b", {{0, 100}, {0, 200}})};
  TopologyOptions opt;  // orientation auto, no Z: digitised unless outlets are named
  opt.outlets = {"c"};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(down(byId(t), "b"), "c");
}

TEST(GeometryTopology, UnknownOutletsAndOutletsWithoutAFreeEndAreErrors) {
  ReachTable t;
  t.reaches = {line("a", {{0, 0}, {0, 100}}), line("mid", {{0, 100}, {0, 200}}),
               line("z", {{0, 200}, {0, 300}})};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, toOutlets({"mid", "nonesuch"}), ps);
  const Problem* not_at_end = find(ps, ProblemCode::OutletNotAtEnd, "mid");
  ASSERT_NE(not_at_end, nullptr);
  EXPECT_EQ(not_at_end->severity, Severity::Error);
  const Problem* unknown = find(ps, ProblemCode::UnknownOutlet, "nonesuch");
  ASSERT_NE(unknown, nullptr);
  EXPECT_EQ(unknown->severity, Severity::Error);
}

// ---------------------------------------------------------------- connections

TEST(GeometryTopology, AConnectionJoinsAnEndAcrossAKnownGap) {
  // The tributary stops 150 m short of the main line (a gap the search
  // reports); the connection extends it to the main line, which is cut there.
  auto table = [] {
    ReachTable t;
    t.reaches = {line("main", {{0, 0}, {0, -4000}}, 4000),
                 line("trib", {{1500, -1000}, {150, -1000}}, 1350)};
    return t;
  };
  ReachTable plain = table();
  ProblemList ps0;
  TopologyOptions opt;
  opt.gap_search_m = 200;
  geos::buildTopologyFromGeometry(plain, opt, ps0);
  EXPECT_EQ(count(ps0, ProblemCode::ProbableGap), 1u);

  ReachTable t = table();
  opt.connections = {{"trib", "main", std::nullopt}};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  auto m = byId(t);
  EXPECT_EQ(s.splits, 1u);
  EXPECT_EQ(count(ps, ProblemCode::ProbableGap), 0u);
  EXPECT_EQ(down(m, "trib"), "main.2");
  EXPECT_NEAR(m["trib"].length_m, 1500.0, 1e-9);  // the 150 m segment added
  EXPECT_DOUBLE_EQ(m["trib"].line.back().x, 0.0);
  const Problem* p = find(ps, ProblemCode::AddedConnection, "trib");
  ASSERT_NE(p, nullptr);
  EXPECT_EQ(p->severity, Severity::Info);
  EXPECT_NE(p->message.find("extended to main (the line is 150 m longer"), std::string::npos)
      << p->message;
}

TEST(GeometryTopology, AConnectionCutsAnOvershootBackToTheCrossing) {
  // As in OvershootAcrossTheMainStemIsAGapAsBefore: trib crosses main and
  // ends 30 m past it. Connected to main, it is cut back to the crossing at
  // (0, 9.87) (on the line from (1500, 500) to (-30, 0): y = 500 * 30 / 1530
  // at x = 0) and joins main there.
  ReachTable t;
  t.reaches = {line("main", {{0, 2000}, {0, -2000}}, 4000),
               line("trib", {{1500, 500}, {-30, 0}}, std::hypot(1530.0, 500.0))};
  TopologyOptions opt;
  opt.connections = {{"trib", "main", std::nullopt}};
  ProblemList ps;
  const auto s = geos::buildTopologyFromGeometry(t, opt, ps);
  auto m = byId(t);
  EXPECT_EQ(s.probable_gaps, 0u);
  EXPECT_EQ(s.splits, 1u);
  EXPECT_EQ(down(m, "trib"), "main.2");
  EXPECT_DOUBLE_EQ(m["trib"].line.back().x, 0.0);
  EXPECT_NEAR(m["trib"].line.back().y, 500.0 * 30.0 / 1530.0, 1e-9);
  // The 30 m overshoot along x is hypot(30, 9.8) = 31.6 m of line.
  EXPECT_NEAR(m["trib"].length_m, std::hypot(1500.0, 500.0 - 500.0 * 30.0 / 1530.0), 1e-9);
  const Problem* p = find(ps, ProblemCode::AddedConnection, "trib");
  ASSERT_NE(p, nullptr);
  EXPECT_NE(p->message.find("cut back"), std::string::npos) << p->message;
}

TEST(GeometryTopology, AConnectionToAPointJoinsTheLinesEndingThere) {
  // Two lines end on either side of a 60 m gap (a culvert not in the
  // layer); the connection takes "upper" to the first vertex of "lower".
  ReachTable t;
  t.reaches = {line("upper", {{0, 1000}, {0, 60}}), line("lower", {{0, 0}, {0, -1000}})};
  TopologyOptions opt;
  Point3 target;
  target.x = 0;
  target.y = 0;
  opt.connections = {{"upper", "", target}};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, opt, ps);
  EXPECT_EQ(down(byId(t), "upper"), "lower");
  EXPECT_EQ(count(ps, ProblemCode::ProbableGap), 0u);
}

TEST(GeometryTopology, AConnectionFromAnUnknownReachIsRefused) {
  ReachTable t;
  t.reaches = {line("a", {{0, 0}, {0, 100}})};
  TopologyOptions opt;
  opt.connections = {{"nonesuch", "a", std::nullopt}};
  ProblemList ps;
  EXPECT_THROW(geos::buildTopologyFromGeometry(t, opt, ps), reachwise::InvalidParameter);
}

TEST(GeometryTopology, PiecesAreNumberedWithTheFlowWhateverTheDigitisingDirection) {
  const Built along = buildByElevation(false);
  const Built against = buildByElevation(true);
  EXPECT_EQ(count(along.problems, ProblemCode::FlippedLine), 0u);
  EXPECT_EQ(count(against.problems, ProblemCode::FlippedLine), 3u);  // every piece of M turned back
  for (const Built* b : {&along, &against}) {
    const auto& m = b->by_id;
    ASSERT_EQ(m.size(), 5u);
    ASSERT_TRUE(m.count("M.1") && m.count("M.2") && m.count("M.3"));
    // M.1 is where the flow enters M (the high end, x = 0), M.3 its outlet.
    EXPECT_DOUBLE_EQ(m.at("M.1").line.front().x, 0.0);
    EXPECT_DOUBLE_EQ(m.at("M.3").line.back().x, 3000.0);
    EXPECT_EQ(down(m, "M.1"), "M.2");
    EXPECT_EQ(down(m, "T"), "M.2");
    EXPECT_EQ(down(m, "M.2"), "M.3");
    EXPECT_EQ(down(m, "U"), "M.3");
    EXPECT_EQ(down(m, "M.3"), "(outlet)");
    for (unsigned k = 1; k <= 3; ++k) {
      const auto& r = m.at("M." + std::to_string(k));
      EXPECT_EQ(r.line_id, "M");
      EXPECT_EQ(r.piece, k);
    }
    EXPECT_TRUE(m.at("T").line_id.empty());
    EXPECT_EQ(m.at("T").piece, 0u);
    EXPECT_NEAR(m.at("M.1").length_m, 1000.0, 1e-9);  // from the tributaries' positions
    EXPECT_NEAR(m.at("M.2").length_m, 800.0, 1e-9);
    EXPECT_NEAR(m.at("M.3").length_m, 1200.0, 1e-9);
    // The base flow along M is shared by length, as the length is.
    double base = 0;
    for (const char* id : {"M.1", "M.2", "M.3"}) {
      const auto& r = m.at(id);
      EXPECT_NEAR(r.base_flow_m3s, 3.0 * r.length_m / 3000.0, 1e-12) << id;
      base += r.base_flow_m3s;
    }
    EXPECT_NEAR(base, 3.0, 1e-12);
    EXPECT_EQ(messagesOf(b->problems, ProblemCode::SplitLine),
              (std::vector<std::string>{"line M is cut between M.1 and M.2 where the end of T meets it",
                                        "line M is cut between M.2 and M.3 where the end of U meets it"}));
  }
  // The same id is the same piece of river, vertex for vertex.
  for (const char* id : {"M.1", "M.2", "M.3"}) {
    const auto& a = along.by_id.at(id).line;
    const auto& b = against.by_id.at(id).line;
    ASSERT_EQ(a.size(), b.size()) << id;
    for (std::size_t i = 0; i < a.size(); ++i) {
      EXPECT_DOUBLE_EQ(a[i].x, b[i].x) << id << " vertex " << i;
      EXPECT_DOUBLE_EQ(a[i].y, b[i].y) << id << " vertex " << i;
    }
    EXPECT_DOUBLE_EQ(along.by_id.at(id).length_m, against.by_id.at(id).length_m) << id;
    EXPECT_FALSE(along.by_id.at(id).reoriented);
    EXPECT_TRUE(against.by_id.at(id).reoriented);
  }
  // The orientation's problems name the pieces by their final ids: each
  // turned piece is reported at its top, which is where that id lies.
  for (const auto& p : against.problems) {
    if (p.code != ProblemCode::FlippedLine) continue;
    const auto& r = against.by_id.at(p.reach_id);
    EXPECT_DOUBLE_EQ(p.x, r.line.front().x) << p.reach_id;
    EXPECT_EQ(p.message.rfind("line " + p.reach_id + " reversed", 0), 0u) << p.message;
  }
}

TEST(GeometryTopology, PiecesFlowingDifferentWaysKeepDigitisingOrderWithANote) {
  // M rises to a crest at x = 1000, where T ends on it: elevation turns the
  // first piece (it climbs as digitised) but not the second.
  ReachTable t;
  t.reaches = {line("M", {{0, 0, 50}, {1000, 0, 100}, {2000, 0, 50}}, 2000),
               line("T", {{1000, 800, 120}, {1000, 0, 100}}, 800)};
  TopologyOptions opt;
  opt.orientation = Orientation::Elevation;
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, opt, ps);
  const auto m = byId(t);
  ASSERT_TRUE(m.count("M.1") && m.count("M.2"));
  EXPECT_TRUE(m.at("M.1").reoriented);
  EXPECT_FALSE(m.at("M.2").reoriented);
  EXPECT_DOUBLE_EQ(m.at("M.1").line.back().x, 0.0);  // digitised first: the piece at x 0..1000
  EXPECT_DOUBLE_EQ(m.at("M.2").line.back().x, 2000.0);
  const auto split = messagesOf(ps, ProblemCode::SplitLine);
  ASSERT_EQ(split.size(), 1u);
  EXPECT_NE(split[0].find("between M.1 and M.2"), std::string::npos) << split[0];
  EXPECT_NE(split[0].find("numbered in digitising order"), std::string::npos) << split[0];
}

TEST(GeometryTopology, AnUnknownOutletLikeAPieceSaysHowTheLineWasCut) {
  ReachTable t = mainWithTwoTributaries(false);
  TopologyOptions opt;
  opt.orientation = Orientation::Outlets;
  opt.outlets = {"M.4"};
  ProblemList ps;
  geos::buildTopologyFromGeometry(t, opt, ps);
  const auto unknown = messagesOf(ps, ProblemCode::UnknownOutlet);
  ASSERT_EQ(unknown.size(), 1u);
  EXPECT_NE(unknown[0].find("outlet M.4"), std::string::npos) << unknown[0];
  EXPECT_NE(unknown[0].find("reach M was cut into M.1, M.2, M.3"), std::string::npos) << unknown[0];
}
