// The shipped sample network: topology from geometry agrees with the ids,
// and the broken variants give the problems they were made for.
#include <gtest/gtest.h>

#include <algorithm>
#include <map>

#include "io/NetworkFixtures.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/geos/GeometryTopology.hpp"
#include "reachwise/network/Validation.hpp"

using namespace reachwise;

namespace {

const std::string kSample = std::string(REACHWISE_SOURCE_DIR) + "/sample-network/";

std::map<std::string, std::string> downstream(const network::ReachTable& t) {
  std::map<std::string, std::string> out;
  for (const auto& r : t.reaches) out[r.id] = r.to_reach.value_or("");
  return out;
}

}  // namespace

TEST(NetworkReaderTopology, GeometryGivesTheSameLinksAsTheIds) {
  network::ProblemList from_ids_problems, from_geometry_problems;
  const auto ids = io::readNetwork(kSample + "network.gpkg", {}, from_ids_problems);
  io::ReadOptions opt;
  opt.config.topology = io::TopologySource::Geometry;  // ignore the to_reach field
  io::ReadSummary summary;
  const auto geom =
      io::readNetwork(kSample + "network.gpkg", opt, from_geometry_problems, &summary);
  EXPECT_TRUE(summary.topology_from_geometry);
  EXPECT_DOUBLE_EQ(summary.snap_tolerance_m, 5.0);  // the default, in metres
  EXPECT_DOUBLE_EQ(summary.gap_search_m, 50.0);     // 10 x the tolerance
  EXPECT_EQ(summary.topology.splits, 0u);
  EXPECT_EQ(summary.topology.probable_gaps, 0u);
  EXPECT_TRUE(from_geometry_problems.empty());
  const auto a = downstream(ids), b = downstream(geom);
  ASSERT_EQ(a.size(), b.size());
  for (const auto& [id, to] : a) EXPECT_EQ(b.at(id), to) << id;
}

TEST(NetworkReaderTopology, OutletOrientationKeepsAWellDigitisedNetwork) {
  network::ProblemList ps;
  io::ReadOptions opt;
  opt.config.topology = io::TopologySource::Geometry;
  opt.config.orientation = io::Orientation::Outlets;
  io::ReadSummary summary;
  const auto geom = io::readNetwork(kSample + "network.gpkg", opt, ps, &summary);
  EXPECT_EQ(summary.topology.flipped, 0u);
  const auto ids = io::readNetwork(kSample + "network.gpkg", {}, ps);
  EXPECT_EQ(downstream(geom), downstream(ids));
}

TEST(NetworkReaderTopology, GapVariantReportsAProbableGap) {
  network::ProblemList ps;
  io::ReadSummary summary;
  const auto t = io::readNetwork(kSample + "gap.gpkg", {}, ps, &summary);
  EXPECT_TRUE(summary.topology_from_geometry);  // the variant has no to_reach field
  EXPECT_EQ(summary.topology.probable_gaps, 1u);
  bool found = false;
  for (const auto& p : ps)
    if (p.codeName() == "probable_gap" && p.reach_id == "R13" && p.severity == network::Severity::Error)
      found = true;
  EXPECT_TRUE(found);
  EXPECT_EQ(downstream(t).at("R13"), "");  // not joined: an outlet of its own
}

TEST(NetworkReaderTopology, CycleVariantIsFoundByTheGraphValidation) {
  network::ProblemList ps;
  const auto t = io::readNetwork(kSample + "cycle.gpkg", {}, ps);
  EXPECT_TRUE(ps.empty());  // a cycle is a graph-level fault, not a feature fault
  const network::ReachGraph graph(t);
  const auto graph_problems = network::validate(graph);
  bool cycle = false;
  for (const auto& p : graph_problems) cycle |= p.codeName() == "cycle";
  EXPECT_TRUE(cycle);
}

TEST(NetworkReaderTopology, OutletOrientationUndoesReversedDigitising) {
  network::ProblemList ps;
  const auto ids = io::readNetwork(kSample + "network.gpkg", {}, ps);
  // Reverse every third line (the outlet reach R1 included) and forget the links.
  auto scrambled = ids;
  std::size_t reversed = 0;
  for (std::size_t i = 0; i < scrambled.reaches.size(); i += 3, ++reversed) {
    auto& line = scrambled.reaches[i].line;
    std::reverse(line.begin(), line.end());
  }
  for (auto& r : scrambled.reaches) r.to_reach.reset();
  network::geos::TopologyOptions opt;
  opt.orientation = network::geos::Orientation::Outlets;
  opt.outlets = {"R1"};
  const auto s = network::geos::buildTopologyFromGeometry(scrambled, opt, ps);
  EXPECT_EQ(s.flipped, reversed);
  EXPECT_EQ(downstream(scrambled), downstream(ids));
  // Without a named outlet the free end needing the fewest reversals wins.
  // Here R1's bottom ties with R16's top (both need 14), and the wider
  // channel (the main stem, 40 m) decides.
  auto scrambled2 = ids;
  for (std::size_t i = 0; i < scrambled2.reaches.size(); i += 3) {
    auto& line = scrambled2.reaches[i].line;
    std::reverse(line.begin(), line.end());
  }
  opt.outlets.clear();
  network::geos::buildTopologyFromGeometry(scrambled2, opt, ps);
  EXPECT_EQ(downstream(scrambled2), downstream(ids));
}

TEST(NetworkReaderTopology, SplitPiecesKeepTheAttributesOfTheirLine) {
  fixtures::TempDir dir;
  fixtures::Layer l;
  l.fields = {{"reach_id", OFTInteger}, {"slope", OFTReal}, {"manning_n", OFTReal},
              {"bottom_width", OFTReal}, {"length", OFTReal}};
  l.features = {{"LINESTRING (500000 5000000,500000 4997000)", {"7", "0.001", "0.03", "12", "3300"}},
                {"LINESTRING (499000 4999000,500000 4999000)", {"8", "0.004", "0.05", "3", ""}}};
  fixtures::write(dir.file("t.gpkg"), "GPKG", {l});
  network::ProblemList ps;
  io::ReadSummary summary;
  const auto t = io::readNetwork(dir.file("t.gpkg"), {}, ps, &summary);
  EXPECT_EQ(summary.topology.splits, 1u);
  const auto links = downstream(t);
  EXPECT_EQ(links.at("7.1"), "7.2");
  EXPECT_EQ(links.at("8"), "7.2");
  EXPECT_EQ(links.at("7.2"), "");
  for (const auto& r : t.reaches) {
    if (r.id.rfind("7.", 0) != 0) continue;
    EXPECT_DOUBLE_EQ(r.section.bottom_width_m, 12.0) << r.id;
    EXPECT_DOUBLE_EQ(r.section.bed_slope, 0.001) << r.id;
    EXPECT_EQ(r.fid, 1) << r.id;
    // The 3300 m length field is shared 1:2 like the planar pieces (1000 m, 2000 m).
    EXPECT_NEAR(r.length_m, r.id == "7.1" ? 1100.0 : 2200.0, 1e-9) << r.id;
  }
}
