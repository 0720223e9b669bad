// Synthetic network geometry: no two lines cross (checked with GEOS, a
// reference library independent of the generator), linked lines meet only
// at their shared node, and the line ends alone give back the same links
// (the reader's topology from geometry, which uses GEOS snapping).
#include <geos_c.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdio>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/io/SyntheticWriter.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/SyntheticNetwork.hpp"
#include "reachwise/network/Validation.hpp"
#include "support/Scratch.hpp"
#include "network/SyntheticFixtures.hpp"

using namespace reachwise::network;

namespace {

using synthfixture::make;

struct Geos {
  GEOSContextHandle_t ctx = GEOS_init_r();
  ~Geos() { GEOS_finish_r(ctx); }
};

/// Every pair of lines whose envelopes meet (GEOS STRtree), tested with
/// GEOSIntersects; returns pairs that intersect other than by one shared node.
std::vector<std::string> badIntersections(const SyntheticNetwork& net) {
  Geos geos;
  GEOSContextHandle_t h = geos.ctx;
  std::vector<GEOSGeometry*> lines(net.size());
  for (std::size_t i = 0; i < net.size(); ++i) {
    const auto pts = net.line(i);
    GEOSCoordSequence* seq = GEOSCoordSeq_create_r(h, static_cast<unsigned>(pts.size()), 2);
    for (std::size_t k = 0; k < pts.size(); ++k)
      GEOSCoordSeq_setXY_r(h, seq, static_cast<unsigned>(k), pts[k].x, pts[k].y);
    lines[i] = GEOSGeom_createLineString_r(h, seq);
  }
  GEOSSTRtree* tree = GEOSSTRtree_create_r(h, 10);
  for (std::size_t i = 0; i < net.size(); ++i) GEOSSTRtree_insert_r(h, tree, lines[i], reinterpret_cast<void*>(i));
  struct Query {
    std::vector<std::size_t> hits;
  } query;
  std::vector<std::string> bad;
  for (std::size_t i = 0; i < net.size(); ++i) {
    query.hits.clear();
    GEOSSTRtree_query_r(
        h, tree, lines[i],
        [](void* item, void* data) {
          static_cast<Query*>(data)->hits.push_back(reinterpret_cast<std::size_t>(item));
        },
        &query);
    for (std::size_t j : query.hits) {
      if (j <= i || GEOSIntersects_r(h, lines[i], lines[j]) != 1) continue;
      // The one point they may share: i's bottom is j's top or the reverse,
      // or both end at the same confluence.
      const auto li = net.line(i), lj = net.line(j);
      Point2 shared{};
      bool linked = true;
      if (net.downstream[i] == j) shared = li.back();
      else if (net.downstream[j] == i) shared = lj.back();
      else if (net.downstream[i] == net.downstream[j] && net.downstream[i] != kSyntheticOutlet) shared = li.back();
      else linked = false;
      GEOSGeometry* cut = GEOSIntersection_r(h, lines[i], lines[j]);
      double x = 0, y = 0;
      const bool one_point = linked && cut && GEOSGeomTypeId_r(h, cut) == GEOS_POINT &&
                             GEOSGeomGetX_r(h, cut, &x) == 1 && GEOSGeomGetY_r(h, cut, &y) == 1 &&
                             x == shared.x && y == shared.y;
      if (cut) GEOSGeom_destroy_r(h, cut);
      if (!one_point) bad.push_back(SyntheticNetwork::id(i) + " x " + SyntheticNetwork::id(j));
    }
  }
  GEOSSTRtree_destroy_r(h, tree);
  for (GEOSGeometry* g : lines) GEOSGeom_destroy_r(h, g);
  return bad;
}

}  // namespace

TEST(SyntheticGeometry, NoTwoLinesCrossByGeos) {
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    const auto bad = badIntersections(make(3000, seed, seed));
    EXPECT_TRUE(bad.empty()) << "seed " << seed << ": " << bad.size() << " pairs, first "
                             << (bad.empty() ? "" : bad.front());
  }
}

TEST(SyntheticGeometry, TheIntersectionCheckFindsACrossingWhenThereIsOne) {
  // The check above must be able to fail: move one headwater's top onto
  // the middle of a line it is not linked to.
  auto net = make(500, 4);
  std::vector<char> has_upstream(net.size(), 0);
  for (auto d : net.downstream)
    if (d != kSyntheticOutlet) has_upstream[d] = 1;
  std::size_t head = 0;
  while (has_upstream[head]) ++head;
  std::size_t other = 0;
  while (other == head || net.downstream[head] == other || net.downstream[other] == head ||
         net.downstream[other] == net.downstream[head])
    ++other;
  // The headwater's top is shared with no other line; move it just past the
  // middle of `other`'s first segment, so that its first segment crosses it.
  const auto o = net.line(other);
  const Point2 m{0.5 * (o[0].x + o[1].x), 0.5 * (o[0].y + o[1].y)};
  const Point2 v = net.vertices[net.vertex_begin[head] + 1];
  net.vertices[net.vertex_begin[head]] = {m.x + 0.05 * (m.x - v.x), m.y + 0.05 * (m.y - v.y)};
  const auto bad = badIntersections(net);
  const std::string a = SyntheticNetwork::id(std::min(head, other)), b = SyntheticNetwork::id(std::max(head, other));
  EXPECT_NE(std::find(bad.begin(), bad.end(), a + " x " + b), bad.end());
}

TEST(SyntheticGeometry, TopologyFromLineEndsGivesTheSameLinks) {
  testsupport::TempDir dir;
  const auto net = make(2000, 5, 2);
  const std::string path = dir.file("synth.gpkg");
  reachwise::io::writeSyntheticGpkg(path, net);

  reachwise::io::ReadOptions ids, geometry;
  ids.config.topology = reachwise::io::TopologySource::Ids;
  geometry.config.topology = reachwise::io::TopologySource::Geometry;
  for (const auto* options : {&ids, &geometry}) {
    ProblemList problems;
    const ReachTable table = reachwise::io::readNetwork(path, *options, problems);
    const ReachGraph graph(table);
    mergeProblems(problems, validate(graph));
    for (const auto& p : problems)
      EXPECT_EQ(p.severity, Severity::Info) << p.codeName() << " " << p.reach_id << ": " << p.message;
    ASSERT_EQ(table.reaches.size(), net.size());
    std::map<std::string, std::string> down;
    for (const auto& r : table.reaches) down[r.id] = r.to_reach ? *r.to_reach : "";
    for (std::size_t i = 0; i < net.size(); ++i) {
      const std::string expected =
          net.downstream[i] == kSyntheticOutlet ? "" : SyntheticNetwork::id(net.downstream[i]);
      EXPECT_EQ(down[SyntheticNetwork::id(i)], expected) << i;
    }
  }
}
