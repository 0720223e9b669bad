// Lakes: reading a polygon layer (io::readLakes), attaching reaches by
// geometry (network::linkLakes), and loading them with a network
// (run::loadNetwork). The expected links come from the plan's own
// up/down lists, not from geometry.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <functional>
#include <map>
#include <optional>
#include <set>
#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/io/LakeReader.hpp"
#include "reachwise/network/Lakes.hpp"
#include "reachwise/run/Network.hpp"
#include "reachwise/run/Route.hpp"
#include "support/Scratch.hpp"
#include "support/Errors.hpp"

using namespace reachwise;
using network::Point2;

namespace {

const std::string kNetwork = REACHWISE_SOURCE_DIR "/sample-network/network.gpkg";

struct LakeSpec {
  std::string id;
  std::vector<Point2> ring;  // exterior, open
  std::map<std::string, double> numbers;
  std::optional<std::string> table;
};

std::vector<Point2> square(Point2 c, double half) {
  return {{c.x - half, c.y - half}, {c.x + half, c.y - half}, {c.x + half, c.y + half}, {c.x - half, c.y + half}};
}

/// The network layer's CRS (so the lakes share it exactly).
std::unique_ptr<OGRSpatialReference> networkSrs() {
  GDALAllRegister();
  GDALDatasetUniquePtr ds(GDALDataset::Open(kNetwork.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  return std::unique_ptr<OGRSpatialReference>(ds->GetLayer(0)->GetSpatialRef()->Clone());
}

void writeLakes(const std::string& path, const std::vector<LakeSpec>& lakes, const OGRSpatialReference* srs,
                bool with_id_field = true) {
  GDALAllRegister();
  auto* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(driver->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRLayer* layer = ds->CreateLayer("lakes", const_cast<OGRSpatialReference*>(srs), wkbPolygon, nullptr);
  ASSERT_NE(layer, nullptr);
  if (with_id_field) {
    OGRFieldDefn id("lake_id", OFTString);
    layer->CreateField(&id);
  }
  for (const char* name : {"crest_level_m", "weir_length_m", "weir_coefficient", "k_h", "initial_level_m"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  OGRFieldDefn table("outflow_table", OFTString);
  layer->CreateField(&table);
  for (const auto& spec : lakes) {
    OGRFeature f(layer->GetLayerDefn());
    if (with_id_field) f.SetField("lake_id", spec.id.c_str());
    for (const auto& [name, value] : spec.numbers) f.SetField(name.c_str(), value);
    if (spec.table) f.SetField("outflow_table", spec.table->c_str());
    OGRLinearRing ring;
    for (const auto& p : spec.ring) ring.addPoint(p.x, p.y);
    ring.closeRings();
    OGRPolygon poly;
    poly.addRing(&ring);
    f.SetGeometry(&poly);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
}

using testsupport::contains;
using testsupport::errorOf;

}  // namespace

TEST(Lakes, ReadsRulesAndAreas) {
  testsupport::TempDir dir;
  const auto srs = networkSrs();
  {
    std::ofstream csv(dir.path() / "rating.csv");
    csv << "level_m,outflow_m3s\n100,0\n101,12.5\n103,80\n";
  }
  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLakes(path,
             {{"W", square({0, 0}, 500), {{"crest_level_m", 100}, {"weir_length_m", 25}}, {}},
              {"K", square({5000, 0}, 250), {{"k_h", 6}, {"initial_level_m", 0.5}}, {}},
              {"T", square({9000, 0}, 100), {}, std::string("rating.csv")}},
             srs.get());
  const auto table = io::readLakes(path, {});
  ASSERT_EQ(table.lakes.size(), 3u);
  EXPECT_EQ(table.layer, "lakes");
  EXPECT_DOUBLE_EQ(table.metres_per_unit, 1.0);
  const auto& w = table.lakes[0];
  EXPECT_NEAR(w.area_m2, 1e6, 1e-6);  // 1000 m square
  EXPECT_EQ(w.rule.kind, routing::OutflowRule::Kind::Weir);
  EXPECT_EQ(w.rule.weir_coefficient, routing::kBroadCrestedWeirCoefficient);
  EXPECT_EQ(w.rule.crest_level_m, 100.0);
  EXPECT_EQ(w.rings.size(), 1u);
  EXPECT_EQ(w.rings[0].size(), 4u) << "the closing vertex is dropped";
  const auto& k = table.lakes[1];
  EXPECT_NEAR(k.area_m2, 2.5e5, 1e-6);
  EXPECT_EQ(k.rule.kind, routing::OutflowRule::Kind::Linear);
  EXPECT_DOUBLE_EQ(k.rule.k_s, 6 * 3600.0);
  ASSERT_TRUE(k.initial_level_m);
  EXPECT_EQ(*k.initial_level_m, 0.5);
  const auto& t = table.lakes[2];
  EXPECT_EQ(t.rule.kind, routing::OutflowRule::Kind::LevelTable);
  EXPECT_EQ(t.rule.x, (std::vector<double>{100, 101, 103}));
  EXPECT_EQ(t.rule.outflow_m3s, (std::vector<double>{0, 12.5, 80}));
  // Each lake routes: a weir lake passes a steady 30 m3/s at the head
  // (30 / (C L))^(2/3) above the crest.
  const auto res = w.levelPool().route(std::vector<double>(4, 30.0), 3600);
  EXPECT_NEAR(res.level_m[0], 100 + std::pow(30 / (routing::kBroadCrestedWeirCoefficient * 25), 2.0 / 3.0), 1e-9);
}

TEST(Lakes, BadLakesNameFileLakeAndField) {
  testsupport::TempDir dir;
  const auto srs = networkSrs();
  const auto path = [&](const char* name) { return (dir.path() / name).string(); };
  {
    std::ofstream csv(dir.path() / "falling.csv");
    csv << "level_m,outflow_m3s\n100,0\n101,20\n102,10\n";
  }
  writeLakes(path("norule.gpkg"), {{"A", square({0, 0}, 50), {{"k_h", 1}}, {}}, {"B", square({500, 0}, 50), {}, {}}},
             srs.get());
  std::string e = errorOf([&] { io::readLakes(path("norule.gpkg"), {}); });
  EXPECT_TRUE(contains(e, "norule.gpkg") && contains(e, "lake B") && contains(e, "field crest_level_m") &&
              contains(e, "no outflow rule"))
      << e;

  writeLakes(path("two.gpkg"), {{"A", square({0, 0}, 50), {{"k_h", 1}, {"crest_level_m", 3}, {"weir_length_m", 4}}, {}}},
             srs.get());
  e = errorOf([&] { io::readLakes(path("two.gpkg"), {}); });
  EXPECT_TRUE(contains(e, "lake A") && contains(e, "more than one outflow rule")) << e;

  writeLakes(path("falling.gpkg"), {{"F", square({0, 0}, 50), {}, std::string("falling.csv")}}, srs.get());
  e = errorOf([&] { io::readLakes(path("falling.gpkg"), {}); });
  EXPECT_TRUE(contains(e, "lake F") && contains(e, "field level_outflow") && contains(e, "must not decrease")) << e;

  writeLakes(path("weir.gpkg"), {{"G", square({0, 0}, 50), {{"crest_level_m", 3}, {"weir_length_m", -4}}, {}}},
             srs.get());
  e = errorOf([&] { io::readLakes(path("weir.gpkg"), {}); });
  EXPECT_TRUE(contains(e, "lake G") && contains(e, "field weir_length_m")) << e;

  writeLakes(path("dup.gpkg"), {{"D", square({0, 0}, 50), {{"k_h", 1}}, {}}, {"D", square({500, 0}, 50), {{"k_h", 1}}, {}}},
             srs.get());
  e = errorOf([&] { io::readLakes(path("dup.gpkg"), {}); });
  EXPECT_TRUE(contains(e, "lake D") && contains(e, "earlier lake")) << e;

  writeLakes(path("noid.gpkg"), {{"", square({0, 0}, 50), {{"k_h", 1}}, {}}}, srs.get(), false);
  e = errorOf([&] { io::readLakes(path("noid.gpkg"), {}); });
  EXPECT_TRUE(contains(e, "field lake_id")) << e;

  OGRSpatialReference geographic;
  geographic.importFromEPSG(4326);
  writeLakes(path("wgs84.gpkg"), {{"A", square({14, 46}, 0.01), {{"k_h", 1}}, {}}}, &geographic);
  char* wkt = nullptr;
  srs->exportToWkt(&wkt);
  io::LakeReadOptions o;
  o.network_crs_wkt = wkt;
  CPLFree(wkt);
  e = errorOf([&] { io::readLakes(path("wgs84.gpkg"), o); });
  EXPECT_TRUE(contains(e, "wgs84.gpkg") && contains(e, "not the network's")) << e;
  // On its own, the geographic lake's area is geodesic: a 0.02° square at
  // 46° N is 0.02 · 111.2 km by 0.02 · 111.2 km · cos 46° ≈ 3.43 km2
  // (spherical estimate; the ellipsoid differs by well under 1 %).
  const auto g = io::readLakes(path("wgs84.gpkg"), {});
  const double sphere = std::pow(0.02 * M_PI / 180 * 6371000, 2) * std::cos(46 * M_PI / 180);
  EXPECT_NEAR(g.lakes[0].area_m2 / sphere, 1.0, 0.01) << g.lakes[0].area_m2;
}

// linkLakes on a plan put together by hand: ends inside, within the
// tolerance outside, beyond it, in a hole; a reach inside; overlapping lakes.
TEST(Lakes, LinksEndsByTolerance) {
  network::NetworkPlan plan;
  const auto add = [&](const std::string& id, Point2 top, Point2 bottom) {
    plan.reach_id.push_back(id);
    plan.fid.push_back(static_cast<std::int64_t>(plan.reach_id.size()));
    plan.top.push_back(top);
    plan.bottom.push_back(bottom);
  };
  add("in_inside", {-500, 0}, {-50, 0});     // downstream end inside lake L
  add("in_near", {0, -500}, {0, -103});      // 3 m outside the edge at y = -100
  add("far", {0, -600}, {0, -107});          // 7 m outside: not linked
  add("out", {100, 0}, {600, 0});            // starts on the edge
  add("piece", {-20, 20}, {20, 20});         // wholly inside
  add("hole_end", {-500, 300}, {0, 300});    // ends in lake H's hole (40 m from its ring)
  add("two", {2000, 0}, {3000, 0});          // starts where M and N overlap
  network::LakeTable lakes;
  network::LakeRecord l, h, m, n;
  l.lake_id = "L";
  l.rings = {square({0, 0}, 100)};
  h.lake_id = "H";
  h.rings = {square({0, 300}, 90), square({0, 300}, 40)};  // a ring with a hole
  m.lake_id = "M";
  m.rings = {square({2000, 0}, 50)};
  n.lake_id = "N";
  n.rings = {square({2050, 0}, 60)};
  lakes.lakes = {l, h, m, n};
  EXPECT_TRUE(network::insideRings(h.rings, {0, 250 - 0.5 * 40 - 1}));
  EXPECT_FALSE(network::insideRings(h.rings, {0, 300}));
  EXPECT_NEAR(network::distanceToRings(h.rings, {0, 300}), 40, 1e-12);

  network::ProblemList problems;
  const auto links = network::linkLakes(plan, lakes, 5.0, problems);
  ASSERT_EQ(links.size(), 4u);
  EXPECT_EQ(links[0].inflow, (std::vector<std::uint32_t>{0, 1}));
  EXPECT_EQ(links[0].outflow, (std::vector<std::uint32_t>{3}));
  EXPECT_EQ(links[0].inside, (std::vector<std::uint32_t>{4}));
  EXPECT_TRUE(links[1].inflow.empty()) << "an end in the hole is not on the lake";
  EXPECT_TRUE(links[1].terminal());
  EXPECT_EQ(links[2].outflow, (std::vector<std::uint32_t>{6})) << "the first lake in table order";
  EXPECT_TRUE(links[3].outflow.empty());
  std::multiset<std::string> codes;
  for (const auto& p : problems) codes.insert(std::string(p.codeName()));
  EXPECT_EQ(codes.count("lake_piece"), 1u);
  EXPECT_EQ(codes.count("lake_overlap"), 1u);
  EXPECT_EQ(codes.count("terminal_lake"), 2u);        // H and N
  EXPECT_EQ(codes.count("lake_without_inflow"), 3u);  // H, M, N
  EXPECT_TRUE(network::hasErrors(problems));
}

// The sample network with three lakes placed on its nodes: around a
// confluence (the reaches ending there flow in, the one starting there
// carries the outflow), around an outlet (a terminal sink), and around a
// headwater reach (inside, dropped; its node's reaches link to the lake).
TEST(Lakes, LoadedWithTheSampleNetwork) {
  testsupport::TempDir dir;
  const auto base = run::loadNetwork({kNetwork, "", ""});
  ASSERT_FALSE(base->hasErrors());
  const auto plan = base->graph->freeze();
  const auto same = [](Point2 a, Point2 b) { return std::hypot(a.x - b.x, a.y - b.y) < 1e-6; };
  const auto endsNear = [&](Point2 c, double half) {
    std::size_t k = 0;
    for (std::size_t i = 0; i < plan.size(); ++i)
      for (Point2 p : {plan.top[i], plan.bottom[i]})
        k += std::abs(p.x - c.x) <= half + 5 && std::abs(p.y - c.y) <= half + 5;
    return k;
  };
  // A confluence: reach d with two or more upstream reaches.
  std::optional<std::size_t> d;
  for (std::size_t i = 0; i < plan.size() && !d; ++i)
    if (plan.up_offset[i + 1] - plan.up_offset[i] >= 2) d = i;
  ASSERT_TRUE(d);
  const Point2 node = plan.top[*d];
  std::vector<std::uint32_t> ups(plan.up_reach.begin() + plan.up_offset[*d], plan.up_reach.begin() + plan.up_offset[*d + 1]);
  std::sort(ups.begin(), ups.end());
  ASSERT_EQ(endsNear(node, 100), ups.size() + 1) << "no other end within the lake";
  // An outlet.
  std::optional<std::size_t> o;
  for (std::size_t i = 0; i < plan.size() && !o; ++i)
    if (plan.isOutlet(i) && !same(plan.bottom[i], node)) o = i;
  ASSERT_TRUE(o);
  // A headwater whose box holds no end but its own and its bottom node's.
  std::optional<std::size_t> hw;
  std::vector<Point2> box;
  for (std::size_t i = 0; i < plan.size() && !hw; ++i) {
    if (!plan.isHeadwater(i) || plan.isOutlet(i) || i == *d || same(plan.bottom[i], node)) continue;
    const double x0 = std::min(plan.top[i].x, plan.bottom[i].x) - 20, x1 = std::max(plan.top[i].x, plan.bottom[i].x) + 20;
    const double y0 = std::min(plan.top[i].y, plan.bottom[i].y) - 20, y1 = std::max(plan.top[i].y, plan.bottom[i].y) + 20;
    std::size_t inside = 0, expected = 1;  // its own top
    for (std::size_t j = 0; j < plan.size(); ++j) {
      for (Point2 p : {plan.top[j], plan.bottom[j]}) inside += p.x >= x0 - 5 && p.x <= x1 + 5 && p.y >= y0 - 5 && p.y <= y1 + 5;
      expected += same(plan.bottom[j], plan.bottom[i]) + same(plan.top[j], plan.bottom[i]);
    }
    if (inside != expected) continue;
    hw = i;
    box = {{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}};
  }
  ASSERT_TRUE(hw);

  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLakes(path,
             {{"confluence", square(node, 100), {{"crest_level_m", 10}, {"weir_length_m", 30}}, {}},
              {"end", square(plan.bottom[*o], 100), {{"k_h", 12}}, {}},
              {"head", box, {{"k_h", 2}}, {}}},
             networkSrs().get());
  run::NetworkSource source{kNetwork, "", ""};
  source.lakes = path;
  const auto net = run::loadNetwork(source);
  ASSERT_TRUE(net->lakes);
  ASSERT_EQ(net->lake_links.size(), 3u);
  // Compared by reach id: the reach inside "head" is dropped, so the
  // loaded plan is the sample's less that reach.
  ASSERT_TRUE(net->lake_plan);
  const auto& lp = *net->lake_plan;
  EXPECT_EQ(lp.size(), plan.size() - 1);
  const auto ids = [&](const std::vector<std::uint32_t>& v) {
    std::set<std::string> out;
    for (auto r : v) out.insert(lp.reach_id[r]);
    return out;
  };
  std::set<std::string> up_ids;
  for (auto u : ups) up_ids.insert(plan.reach_id[u]);
  const auto& c = net->lake_links[0];
  EXPECT_EQ(ids(c.inflow), up_ids);
  EXPECT_EQ(ids(c.outflow), std::set<std::string>{plan.reach_id[*d]});
  const auto& e = net->lake_links[1];
  EXPECT_EQ(ids(e.inflow), std::set<std::string>{plan.reach_id[*o]});
  EXPECT_TRUE(e.terminal());
  const auto& h = net->lake_links[2];
  EXPECT_TRUE(h.inside.empty()) << "dropped";
  for (const auto& id : lp.reach_id) EXPECT_NE(id, plan.reach_id[*hw]);
  const auto& down = plan.down_reach;
  ASSERT_EQ(plan.down_offset[*hw + 1] - plan.down_offset[*hw], 1u);
  EXPECT_EQ(ids(h.outflow), std::set<std::string>{plan.reach_id[down[plan.down_offset[*hw]]]});
  bool terminal_reported = false, piece_reported = false;
  for (const auto& p : net->problems) {
    terminal_reported |= p.codeName() == "terminal_lake" && contains(p.message, "lake end");
    piece_reported |= p.codeName() == "lake_piece" && p.reach_id == plan.reach_id[*hw];
  }
  EXPECT_TRUE(terminal_reported);
  EXPECT_TRUE(piece_reported);
  EXPECT_FALSE(net->hasErrors());
  // Every lake is placed for routing: the terminal lake takes the outlet
  // flowing into it, the others sit at the top of their outflowing reach.
  const auto routable = run::routablePlan(*net);
  const auto placed = run::networkLakes(*net, routable);
  ASSERT_EQ(placed.size(), 3u);
  EXPECT_TRUE(placed[1].outflow_reaches.empty());
  ASSERT_EQ(placed[1].inflow_reaches.size(), 1u);
  EXPECT_EQ(routable.reach_id[placed[1].inflow_reaches[0]], plan.reach_id[*o]);
  EXPECT_TRUE(routable.isOutlet(placed[1].inflow_reaches[0]));
  ASSERT_EQ(placed[0].outflow_reaches.size(), 1u);
  EXPECT_EQ(routable.reach_id[placed[0].outflow_reaches[0]], plan.reach_id[*d]);
  EXPECT_EQ(placed[0].outflow_shares, std::vector<double>{1.0});
}

// Routing the sample storm through a weir lake on the node where R2 flows
// into R1: the lake takes R2's outflow, R1 takes the lake's outflow (lower
// and later), and the network's volume still balances.
TEST(Lakes, RouteTakesALakeOnANode) {
  testsupport::TempDir dir;
  const std::string sample = REACHWISE_SOURCE_DIR "/sample-network/";
  run::RouteRequest request;
  request.network.path = kNetwork;
  request.forcing.inflow = sample + "inflow.csv";
  request.forcing.lateral = sample + "lateral.csv";
  const run::RouteSummary plain = run::route(request);

  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLakes(path, {{"Upper", square({511926.51, 5181963.78}, 150), {{"crest_level_m", 210}, {"weir_length_m", 10}}, {}}},
             networkSrs().get());
  request.network.lakes = path;
  request.outputs.gpkg = (dir.path() / "out.gpkg").string();
  const run::RouteSummary s = run::route(request);
  const auto& plan = s.plan;
  const auto index = [&](const std::string& id) {
    return static_cast<std::size_t>(std::find(plan.reach_id.begin(), plan.reach_id.end(), id) - plan.reach_id.begin());
  };
  const std::size_t r1 = index("R1"), r2 = index("R2");
  ASSERT_LT(r1, plan.size());
  ASSERT_EQ(s.lakes.size(), 1u);
  ASSERT_EQ(s.lake("Upper"), &s.lakes[0]);
  EXPECT_EQ(s.lakes[0].outflow_reaches, std::vector<std::uint32_t>{static_cast<std::uint32_t>(r1)});
  EXPECT_EQ(s.lakes[0].inflow_reaches, std::vector<std::uint32_t>{static_cast<std::uint32_t>(r2)});
  ASSERT_TRUE(s.lakes[0].routing.routed);
  const auto& lake = s.lakes[0].routing;
  const double in_peak = *std::max_element(lake.inflow_m3s.begin(), lake.inflow_m3s.end());
  const double out_peak = *std::max_element(lake.result.outflow_m3s.begin(), lake.result.outflow_m3s.end());
  // The lake's inflow is R2's outflow, whose peak the results carry
  // (interpolated between samples: at least the highest sample).
  EXPECT_GE(s.results.reaches[r2].peak_q_m3s, in_peak * (1 - 1e-12));
  EXPECT_LT(out_peak, in_peak);
  EXPECT_LT(s.results.reaches[r1].peak_q_m3s, plain.results.reaches[r1].peak_q_m3s);
  EXPECT_LT(std::abs(lake.result.volume_error_m3), 1e-9 * lake.result.volume_in_m3);
  // The network balance with the lake holds as well as without it (vpmc, 1 %).
  EXPECT_LT(std::abs(s.results.volume.error_pct), 1.0);
  EXPECT_NEAR(s.results.volume.error_pct, plain.results.volume.error_pct, 0.05);
  // The results' lakes layer: one polygon with the lake's figures.
  {
    GDALDatasetUniquePtr out(GDALDataset::Open(request.outputs.gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    ASSERT_TRUE(out);
    OGRLayer* layer = out->GetLayerByName("lakes");
    ASSERT_NE(layer, nullptr);
    ASSERT_EQ(layer->GetFeatureCount(), 1);
    std::unique_ptr<OGRFeature> f(layer->GetNextFeature());
    EXPECT_STREQ(f->GetFieldAsString("lake_id"), "Upper");
    EXPECT_STREQ(f->GetFieldAsString("reach_id"), "R1");
    const double qin = f->GetFieldAsDouble("inflow_peak_m3s"), qout = f->GetFieldAsDouble("outflow_peak_m3s");
    // Interpolated peaks: at least the highest sample, and near it.
    EXPECT_GE(qin, in_peak * (1 - 1e-12));
    EXPECT_LT(qin, in_peak * 1.02);
    EXPECT_GE(qout, out_peak * (1 - 1e-12));
    EXPECT_LT(qout, out_peak * 1.02);
    EXPECT_NEAR(f->GetFieldAsDouble("attenuation_pct"), 100 * (1 - qout / qin), 1e-9);
    EXPECT_GT(f->GetFieldAsDouble("lag_h"), 0.0);
    EXPECT_GT(f->GetFieldAsDouble("peak_level_m"), 210.0);
    EXPECT_NEAR(f->GetFieldAsDouble("volume_in_m3"), lake.result.volume_in_m3, 1e-6 * lake.result.volume_in_m3);
    EXPECT_LT(std::abs(f->GetFieldAsDouble("volume_error_m3")), 1e-9 * lake.result.volume_in_m3);
    const OGRGeometry* g = f->GetGeometryRef();
    ASSERT_NE(g, nullptr);
    EXPECT_NEAR(g->toMultiPolygon()->get_Area(), 300.0 * 300.0, 1e-3);
    EXPECT_FALSE(f->IsFieldNull(f->GetFieldIndex("outflow_peak_time")));
  }
  std::printf("sample with lake Upper: R1 peak %.3f -> %.3f m3/s, lake in %.3f out %.3f, volume error %.4f %% (%.4f %% "
              "without)\n",
              plain.results.reaches[r1].peak_q_m3s, s.results.reaches[r1].peak_q_m3s, in_peak, out_peak,
              s.results.volume.error_pct, plain.results.volume.error_pct);
}

// A river running through a lake: the reach lying inside (R2, both ends on
// the lake) is dropped, the reaches that flowed into it flow into the lake,
// and the lake's outflow enters R1, which started on its shore.
TEST(Lakes, RiverThroughALakeIsJoinedAcrossIt) {
  testsupport::TempDir dir;
  const auto base = run::loadNetwork({kNetwork, "", ""});
  const auto plan = base->graph->freeze();
  const auto at = [&](const network::NetworkPlan& p, const std::string& id) {
    return static_cast<std::size_t>(std::find(p.reach_id.begin(), p.reach_id.end(), id) - p.reach_id.begin());
  };
  const std::size_t r2 = at(plan, "R2");
  ASSERT_LT(r2, plan.size());
  std::set<std::string> feeding;  // the reaches flowing into R2
  for (auto k = plan.up_offset[r2]; k < plan.up_offset[r2 + 1]; ++k) feeding.insert(plan.reach_id[plan.up_reach[k]]);
  ASSERT_FALSE(feeding.empty());
  const Point2 a = plan.top[r2], b = plan.bottom[r2];
  const double x0 = std::min(a.x, b.x) - 30, x1 = std::max(a.x, b.x) + 30;
  const double y0 = std::min(a.y, b.y) - 30, y1 = std::max(a.y, b.y) + 30;
  writeLakes((dir.path() / "lakes.gpkg").string(),
             {{"Long", {{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}}, {{"crest_level_m", 300}, {"weir_length_m", 20}}, {}}},
             networkSrs().get());

  run::RouteRequest request;
  request.network.path = kNetwork;
  request.network.lakes = (dir.path() / "lakes.gpkg").string();
  request.forcing.inflow = REACHWISE_SOURCE_DIR "/sample-network/inflow.csv";
  const run::RouteSummary s = run::route(request);
  EXPECT_EQ(s.plan.size(), plan.size() - 1);
  EXPECT_EQ(at(s.plan, "R2"), s.plan.size()) << "R2 is dropped";
  const std::size_t r1 = at(s.plan, "R1");
  ASSERT_LT(r1, s.plan.size());
  std::set<std::string> into_r1;
  for (auto k = s.plan.up_offset[r1]; k < s.plan.up_offset[r1 + 1]; ++k) into_r1.insert(s.plan.reach_id[s.plan.up_reach[k]]);
  EXPECT_EQ(into_r1, feeding);
  ASSERT_NE(s.lake("Long"), nullptr);
  ASSERT_TRUE(s.lake("Long")->routing.routed);
  EXPECT_EQ(s.lake("Long")->outflow_reaches, std::vector<std::uint32_t>{static_cast<std::uint32_t>(r1)});
  const auto& lake = s.lake("Long")->routing.result;
  // What entered the lake is what the feeding reaches sent (their outflow
  // volumes, summed over their sub-steps; the lake integrates the samples:
  // within 1 %).
  double sent = 0;
  for (const auto& id : feeding) sent += s.results.reaches[at(s.plan, id)].volume.outflow_m3;
  EXPECT_NEAR(lake.volume_in_m3 / sent, 1.0, 0.01);
  EXPECT_LT(std::abs(lake.volume_error_m3), 1e-9 * lake.volume_in_m3);
  EXPECT_LT(std::abs(s.results.volume.error_pct), 1.0);
  bool listed = false;
  for (const auto& p : s.network->problems) listed |= p.codeName() == "lake_piece" && p.reach_id == "R2";
  EXPECT_TRUE(listed);
  std::printf("river through lake Long: %zu feeding reaches, lake in %.4g m3 (sent %.4g), network volume error %.4f %%\n",
              feeding.size(), lake.volume_in_m3, sent, s.results.volume.error_pct);
}
