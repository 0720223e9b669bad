// Lakes wherever they sit in a network, routed by run::route: a lake with
// two outflowing reaches (its outflow shared by the bifurcation rule or a
// run-file table naming the lake), a terminal lake below a lake in the
// middle of the network that tributaries enter directly, reaches naming
// their lake (`lake_id`) on a `to_reach` network, and forcing that names a
// reach lying inside a lake. Small invented layers in UTM 33N, written here
// with GDAL.
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <numbers>
#include <optional>
#include <set>
#include <span>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/run/Calibrate.hpp"
#include "reachwise/run/Route.hpp"
#include "support/Scratch.hpp"
#include "support/Errors.hpp"

using namespace reachwise;

namespace {

struct Line {
  std::string id;
  std::optional<std::string> to;    // with a to_reach field only
  std::optional<std::string> lake;  // lake field
  double x0, y0, x1, y1;
  double width = 10;
};

/// A line layer with the attributes routing needs; `to_reach` when asked,
/// the lake field under `lake_field` when any line has one.
void writeNetwork(const std::string& path, const std::vector<Line>& lines, bool with_to_reach,
                  const std::string& lake_field = "lake_id") {
  GDALAllRegister();
  GDALDatasetUniquePtr ds(
      GetGDALDriverManager()->GetDriverByName("GPKG")->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("reaches", &srs, wkbLineString, nullptr);
  ASSERT_NE(layer, nullptr);
  std::vector<std::string> text = {"reach_id"};
  if (with_to_reach) text.push_back("to_reach");
  const bool lakes = std::any_of(lines.begin(), lines.end(), [](const Line& l) { return l.lake.has_value(); });
  if (lakes) text.push_back(lake_field);
  for (const auto& name : text) {
    OGRFieldDefn f(name.c_str(), OFTString);
    layer->CreateField(&f);
  }
  for (const char* name : {"slope", "manning_n", "bottom_width", "side_slope"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  for (const auto& l : lines) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", l.id.c_str());
    if (with_to_reach && l.to) f.SetField("to_reach", l.to->c_str());
    if (lakes && l.lake) f.SetField(lake_field.c_str(), l.lake->c_str());
    f.SetField("slope", 0.001);
    f.SetField("manning_n", 0.035);
    f.SetField("bottom_width", l.width);
    f.SetField("side_slope", 1.5);
    OGRLineString g;
    g.addPoint(l.x0, l.y0);
    g.addPoint(l.x1, l.y1);
    f.SetGeometry(&g);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
}

struct Lake {
  std::string id;
  double x, y, half;  // a square
  std::map<std::string, double> numbers;
};

void writeLakes(const std::string& path, const std::vector<Lake>& lakes) {
  GDALAllRegister();
  GDALDatasetUniquePtr ds(
      GetGDALDriverManager()->GetDriverByName("GPKG")->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("lakes", &srs, wkbPolygon, nullptr);
  OGRFieldDefn id("lake_id", OFTString);
  layer->CreateField(&id);
  for (const char* name : {"crest_level_m", "weir_length_m", "k_h"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  for (const auto& l : lakes) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("lake_id", l.id.c_str());
    for (const auto& [name, value] : l.numbers) f.SetField(name.c_str(), value);
    OGRLinearRing ring;
    ring.addPoint(l.x - l.half, l.y - l.half);
    ring.addPoint(l.x + l.half, l.y - l.half);
    ring.addPoint(l.x + l.half, l.y + l.half);
    ring.addPoint(l.x - l.half, l.y + l.half);
    ring.closeRings();
    OGRPolygon poly;
    poly.addRing(&ring);
    f.SetGeometry(&poly);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
}

/// `base` plus a sin² bump of `peak` from hour `start` lasting `len` hours.
double storm(std::size_t n, double base, double peak, double start, double len) {
  const double t = double(n) - start;
  return base + (t > 0 && t < len ? peak * std::pow(std::sin(std::numbers::pi * t / len), 2) : 0.0);
}

/// An hourly inflow CSV (wide): one storm per reach, 72 steps.
void writeInflow(const std::string& path, const std::vector<std::string>& ids) {
  std::ofstream csv(path);
  csv << "time";
  for (const auto& id : ids) csv << "," << id;
  csv << "\n";
  for (std::size_t n = 0; n < 72; ++n) {
    char t[40];
    std::snprintf(t, sizeof t, "2026-05-%02zuT%02zu:00:00Z", 1 + n / 24, n % 24);
    csv << t;
    for (std::size_t k = 0; k < ids.size(); ++k) csv << "," << storm(n, 3 + k, 60 + 20 * k, 4 + 3 * k, 16);
    csv << "\n";
  }
}

/// Two rivers (A, B) meeting in lake L, which two channels leave (C, 20 m
/// wide, and D, 10 m): net.gpkg, lakes.gpkg and a storm on A and B in
/// inflow.csv, in `dir`.
void writeTwoChannelLake(const std::filesystem::path& dir) {
  const auto at = [&](const char* name) { return (dir / name).string(); };
  writeNetwork(at("net.gpkg"),
               {{"A", {}, {}, 0, 10000, 0, 5000},
                {"B", {}, {}, 3000, 8000, 0, 5000},
                {"C", {}, {}, 0, 5000, -2000, 0, 20},
                {"D", {}, {}, 0, 5000, 2000, 0, 10}},
               false);
  writeLakes(at("lakes.gpkg"), {{"L", 0, 5000, 200, {{"crest_level_m", 100}, {"weir_length_m", 15}}}});
  writeInflow(at("inflow.csv"), {"A", "B"});
}

/// Keeps every reach's outflow series, by plan index.
struct Keep : routing::SeriesSink {
  std::map<std::uint32_t, std::vector<double>> q;
  void write(std::uint32_t reach, std::span<const double> qs, std::span<const double>,
             std::span<const double>) override {
    q[reach].assign(qs.begin(), qs.end());
  }
};

double trapezoids(const std::vector<double>& q, double dt) {
  double v = 0;
  for (std::size_t n = 1; n < q.size(); ++n) v += 0.5 * dt * (q[n - 1] + q[n]);
  return v;
}

std::uint32_t indexOf(const network::NetworkPlan& plan, const std::string& id) {
  return static_cast<std::uint32_t>(std::find(plan.reach_id.begin(), plan.reach_id.end(), id) - plan.reach_id.begin());
}

std::set<std::string> ids(const network::NetworkPlan& plan, const std::vector<std::uint32_t>& v) {
  std::set<std::string> out;
  for (const auto r : v) out.insert(plan.reach_id[r]);
  return out;
}

using testsupport::contains;
using testsupport::errorOf;

}  // namespace

// Two rivers (A, B) meet in lake L, which two channels leave (C, 20 m
// wide, and D, 10 m). The lake's outflow is shared as a bifurcation's:
// `default_split = "width"` gives C 20/30 and D 10/30 (docs/formats.md,
// "Bifurcations"); a `[[network.split]]` table naming the lake gives its
// own shares. Each channel's top inflow is its share of the lake's outflow
// and the two sum to it.
TEST(LakeTopology, LakeWithTwoOutflowingReachesSharesItsOutflow) {
  testsupport::TempDir dir;
  const auto at = [&](const char* name) { return (dir.path() / name).string(); };
  writeTwoChannelLake(dir.path());
  run::RouteRequest request;
  request.network.path = at("net.gpkg");
  request.network.lakes = at("lakes.gpkg");
  request.forcing.inflow = at("inflow.csv");
  request.method = routing::Method::ConstantParameter;
  request.outputs.gpkg = at("out.gpkg");
  const run::RouteSummary s = run::route(request);
  const auto& plan = s.plan;
  const run::LakeResult* l = s.lake("L");
  ASSERT_NE(l, nullptr);
  EXPECT_EQ(ids(plan, l->inflow_reaches), (std::set<std::string>{"A", "B"}));
  ASSERT_EQ(l->outflow_reaches.size(), 2u);
  ASSERT_EQ(l->outflow_shares.size(), 2u);
  const auto shareOf = [&](const run::LakeResult& lake, const std::string& id) {
    for (std::size_t k = 0; k < lake.outflow_reaches.size(); ++k)
      if (plan.reach_id[lake.outflow_reaches[k]] == id) return lake.outflow_shares[k];
    return std::nan("");
  };
  // Width rule: in proportion to the bottom widths, 20 : 10.
  EXPECT_NEAR(shareOf(*l, "C"), 20.0 / 30.0, 1e-12);
  EXPECT_NEAR(shareOf(*l, "D"), 10.0 / 30.0, 1e-12);
  const auto& lake = l->routing;
  ASSERT_TRUE(lake.routed);
  const double dt = s.results.axis.dt_s;
  const double out = trapezoids(lake.result.outflow_m3s, dt);
  const std::uint32_t c = indexOf(plan, "C"), d = indexOf(plan, "D");
  // The reaches' top inflow volumes are trapezoids of their samples, as is `out`.
  EXPECT_NEAR(s.results.reaches[c].volume.inflow_m3 / out, 20.0 / 30.0, 1e-12);
  EXPECT_NEAR(s.results.reaches[d].volume.inflow_m3 / out, 10.0 / 30.0, 1e-12);
  EXPECT_NEAR((s.results.reaches[c].volume.inflow_m3 + s.results.reaches[d].volume.inflow_m3) / out, 1.0, 1e-14);
  EXPECT_LT(std::abs(lake.result.volume_error_m3), 1e-9 * lake.result.volume_in_m3);
  const double in_peak = *std::max_element(lake.inflow_m3s.begin(), lake.inflow_m3s.end());
  const double out_peak = *std::max_element(lake.result.outflow_m3s.begin(), lake.result.outflow_m3s.end());
  EXPECT_LT(out_peak, in_peak);
  // The network's balance with the lake's storage in it: the hand-over
  // between reaches is its only error (constant-parameter Muskingum–Cunge;
  // measured 3e-4 %, bounded at 0.01 %).
  EXPECT_LT(std::abs(s.results.volume.error_pct), 0.01) << s.results.volume.error_pct;
  {
    GDALDatasetUniquePtr o(GDALDataset::Open(request.outputs.gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    ASSERT_TRUE(o);
    OGRLayer* layer = o->GetLayerByName("lakes");
    ASSERT_NE(layer, nullptr);
    std::unique_ptr<OGRFeature> f(layer->GetNextFeature());
    ASSERT_TRUE(f);
    const std::string into = f->GetFieldAsString("reach_id");
    EXPECT_TRUE(into == "C;D" || into == "D;C") << into;
  }
  std::printf("lake L: in peak %.3f, out peak %.3f; C %.4g + D %.4g of %.4g m3; network volume error %.3g %%\n",
              in_peak, out_peak, s.results.reaches[c].volume.inflow_m3, s.results.reaches[d].volume.inflow_m3, out,
              s.results.volume.error_pct);

  // A split table naming the lake, with no default rule: the table alone
  // gives the shares (A and B already split into C and D before the join).
  {
    std::ofstream toml(at("run.toml"));
    toml << "[network]\ndefault_split = \"none\"\n\n[[network.split]]\nat = \"L\"\nshares = { C = 0.8, D = 0.2 }\n";
  }
  request.network.config = at("run.toml");
  request.outputs.gpkg.clear();
  const run::RouteSummary t = run::route(request);
  const run::LakeResult* m = t.lake("L");
  ASSERT_NE(m, nullptr);
  for (const auto& p : t.network->problems) EXPECT_NE(p.codeName(), "split_assumed") << p.message;
  EXPECT_NEAR(shareOf(*m, "C"), 0.8, 1e-15);
  EXPECT_NEAR(shareOf(*m, "D"), 0.2, 1e-15);
  const double out_t = trapezoids(m->routing.result.outflow_m3s, dt);
  EXPECT_NEAR(t.results.reaches[indexOf(t.plan, "C")].volume.inflow_m3 / out_t, 0.8, 1e-12);
  // The lake saw the same inflow, so its outflow does not depend on the
  // shares (to round-off: its inflow sums each upstream outflow's shares).
  ASSERT_EQ(m->routing.result.outflow_m3s.size(), lake.result.outflow_m3s.size());
  for (std::size_t n = 0; n < lake.result.outflow_m3s.size(); ++n)
    EXPECT_NEAR(m->routing.result.outflow_m3s[n], lake.result.outflow_m3s[n], 1e-12 * out_peak) << n;

  // A table that names a reach not leaving the lake: the run file and key.
  {
    std::ofstream toml(at("bad.toml"));
    toml << "[[network.split]]\nat = \"L\"\nshares = { C = 0.8, A = 0.2 }\n";
  }
  request.network.config = at("bad.toml");
  const std::string e = errorOf([&] { run::route(request); });
  EXPECT_TRUE(contains(e, "bad.toml") && contains(e, "network.split[1].shares.A") &&
              contains(e, "not an outflowing reach of lake L"))
      << e;
}

// Tributaries T1 and T2 enter lake M directly; S leaves it and runs into
// lake E, a terminal sink, through P, a piece lying inside E (dropped). X
// drains elsewhere. E is routed on S's outflow: what it keeps is storage,
// what it spills leaves the network.
TEST(LakeTopology, TerminalLakeBelowALakeInTheMiddle) {
  testsupport::TempDir dir;
  const auto at = [&](const char* name) { return (dir.path() / name).string(); };
  writeNetwork(at("net.gpkg"),
               {{"T1", {}, {}, 0, 10000, 0, 6000},
                {"T2", {}, {}, 3000, 9000, 0, 6000},
                {"S", {}, {}, 0, 6000, 0, 2150},
                {"P", {}, {}, 0, 2150, 0, 2000},
                {"X", {}, {}, 8000, 8000, 8000, 0}},
               false);
  writeLakes(at("lakes.gpkg"), {{"M", 0, 6000, 200, {{"crest_level_m", 50}, {"weir_length_m", 15}}},
                                {"E", 0, 2000, 300, {{"crest_level_m", 20}, {"weir_length_m", 10}}}});
  writeInflow(at("inflow.csv"), {"T1", "T2", "X"});
  run::RouteRequest request;
  request.network.path = at("net.gpkg");
  request.network.lakes = at("lakes.gpkg");
  request.forcing.inflow = at("inflow.csv");
  request.method = routing::Method::ConstantParameter;
  request.outputs.gpkg = at("out.gpkg");
  Keep keep;
  request.sinks = {&keep};
  const run::RouteSummary s = run::route(request);
  const auto& plan = s.plan;
  EXPECT_EQ(indexOf(plan, "P"), plan.size()) << "P lies inside E: dropped";
  EXPECT_EQ(s.network->dropped_in_lake.at("P"), "E");
  const run::LakeResult* m = s.lake("M");
  const run::LakeResult* e = s.lake("E");
  ASSERT_TRUE(m && e);
  EXPECT_EQ(ids(plan, m->inflow_reaches), (std::set<std::string>{"T1", "T2"}));
  EXPECT_EQ(ids(plan, m->outflow_reaches), std::set<std::string>{"S"});
  EXPECT_TRUE(e->terminal());
  EXPECT_EQ(ids(plan, e->inflow_reaches), std::set<std::string>{"S"});
  const std::uint32_t si = indexOf(plan, "S"), xi = indexOf(plan, "X");
  EXPECT_TRUE(plan.isOutlet(si));
  // M takes T1 + T2; E takes S's outflow samples.
  for (std::size_t n = 0; n < plan.size(); ++n) ASSERT_TRUE(keep.q.count(static_cast<std::uint32_t>(n)));
  const auto& t1 = keep.q[indexOf(plan, "T1")];
  const auto& t2 = keep.q[indexOf(plan, "T2")];
  for (std::size_t n = 0; n < t1.size(); ++n) {
    ASSERT_NEAR(m->routing.inflow_m3s[n], t1[n] + t2[n], 1e-12 * (t1[n] + t2[n])) << n;
    ASSERT_EQ(e->routing.inflow_m3s[n], keep.q[si][n]) << n;
  }
  const auto& r = e->routing.result;
  EXPECT_LT(std::abs(r.volume_error_m3), 1e-9 * r.volume_in_m3);
  double peak_level = 0;
  for (double h : r.level_m) peak_level = std::max(peak_level, h);
  EXPECT_GT(peak_level, 20.0) << "E spills over its crest";
  EXPECT_GT(r.storage_change_m3, 0.0);
  // Balance: the network's outflow is X's plus E's spill; its storage the
  // reaches' plus both lakes'.
  const auto& v = s.results.volume;
  EXPECT_NEAR(v.outflow_m3, s.results.reaches[xi].volume.outflow_m3 + r.volume_out_m3, 1e-12 * v.outflow_m3);
  double stored = m->routing.result.storage_change_m3 + r.storage_change_m3;
  for (const auto& reach : s.results.reaches) stored += reach.volume.storage_change_m3;
  EXPECT_NEAR(v.storage_change_m3, stored, 1e-12 * std::abs(stored));
  EXPECT_LT(std::abs(v.error_pct), 0.01) << v.error_pct;  // as above: the hand-over only
  // The terminal lake is a note, saying where its spill goes.
  bool noted = false;
  for (const auto& p : s.network->problems)
    noted |= p.codeName() == "terminal_lake" && contains(p.message, "lake E") &&
             contains(p.message, "spills over its weir leaves the network");
  EXPECT_TRUE(noted);
  {
    GDALDatasetUniquePtr o(GDALDataset::Open(request.outputs.gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    ASSERT_TRUE(o);
    OGRLayer* layer = o->GetLayerByName("lakes");
    ASSERT_NE(layer, nullptr);
    EXPECT_EQ(layer->GetFeatureCount(), 2);
    for (auto& f : *layer)
      if (std::string(f->GetFieldAsString("lake_id")) == "E") {
        EXPECT_TRUE(f->IsFieldNull(f->GetFieldIndex("reach_id"))) << "a terminal lake's outflow enters no reach";
        EXPECT_NEAR(f->GetFieldAsDouble("volume_out_m3"), r.volume_out_m3, 1e-6 * r.volume_out_m3);
      }
  }
  std::printf("terminal lake E: in %.4g m3, stored %.4g, spilled %.4g, peak level %.3f m; network volume error "
              "%.3g %%\n",
              r.volume_in_m3, r.storage_change_m3, r.volume_out_m3, peak_level, v.error_pct);
}

// A `to_reach` network whose lines do not reach the lakes: reaches name
// their lake in a field mapped by the run file (`LAKE`). A and B flow into
// lake L and on into C (their to_reach): L sits at C's top. D names lake T
// and flows nowhere: T is terminal.
TEST(LakeTopology, ReachesNameTheirLakeOnAToReachNetwork) {
  testsupport::TempDir dir;
  const auto at = [&](const char* name) { return (dir.path() / name).string(); };
  const auto network = [&](const std::string& d_lake, const std::string& b_to) {
    writeNetwork(at("net.gpkg"),
                 {{"A", std::string("C"), std::string("L"), 0, 10000, 0, 8000},
                  {"B", b_to, std::string("L"), 2000, 10000, 0, 8000},
                  {"C", {}, {}, 0, 8000, 0, 0},
                  {"D", {}, d_lake, 5000, 9000, 5000, 4000}},
                 true, "LAKE");
  };
  network("T", "C");
  writeLakes(at("lakes.gpkg"), {{"L", 50000, 50000, 300, {{"crest_level_m", 10}, {"weir_length_m", 12}}},
                                {"T", 60000, 50000, 300, {{"k_h", 6}}}});
  {
    std::ofstream toml(at("run.toml"));
    toml << "[network.fields]\nlake_id = \"LAKE\"\n";
  }
  writeInflow(at("inflow.csv"), {"A", "B", "D"});
  run::RouteRequest request;
  request.network.path = at("net.gpkg");
  request.network.config = at("run.toml");
  request.network.lakes = at("lakes.gpkg");
  request.forcing.inflow = at("inflow.csv");
  request.method = routing::Method::ConstantParameter;
  const run::RouteSummary s = run::route(request);
  const auto& plan = s.plan;
  const run::LakeResult* l = s.lake("L");
  const run::LakeResult* t = s.lake("T");
  ASSERT_TRUE(l && t);
  EXPECT_EQ(ids(plan, l->inflow_reaches), (std::set<std::string>{"A", "B"}));
  EXPECT_EQ(ids(plan, l->outflow_reaches), std::set<std::string>{"C"});
  EXPECT_TRUE(t->terminal());
  EXPECT_EQ(ids(plan, t->inflow_reaches), std::set<std::string>{"D"});
  // No stale geometry notes: L has inflow and outflow, T inflow.
  for (const auto& p : s.network->problems) {
    EXPECT_FALSE(p.codeName() == "lake_without_inflow") << p.message;
    EXPECT_FALSE(p.codeName() == "terminal_lake" && contains(p.message, "lake L")) << p.message;
  }
  // C takes L's outflow.
  const double dt = s.results.axis.dt_s;
  EXPECT_NEAR(s.results.reaches[indexOf(plan, "C")].volume.inflow_m3 / trapezoids(l->routing.result.outflow_m3s, dt),
              1.0, 1e-12);
  EXPECT_LT(std::abs(s.results.volume.error_pct), 0.01) << s.results.volume.error_pct;

  // A lake id that is no lake: the network file, feature, reach and the mapped field.
  network("Nowhere", "C");
  std::string e = errorOf([&] { run::route(request); });
  EXPECT_TRUE(contains(e, "net.gpkg") && contains(e, "feature 4") && contains(e, "reach D") &&
              contains(e, "field LAKE") && contains(e, "\"Nowhere\""))
      << e;
  // A reach flowing into C, below the lake, without naming it: the lake
  // cannot sit at C's top.
  writeNetwork(at("net.gpkg"),
               {{"A", std::string("C"), std::string("L"), 0, 10000, 0, 8000},
                {"B", std::string("C"), std::string("L"), 2000, 10000, 0, 8000},
                {"Z", std::string("C"), {}, -2000, 10000, 0, 8000},
                {"C", {}, {}, 0, 8000, 0, 0},
                {"D", {}, std::string("T"), 5000, 9000, 5000, 4000}},
               true, "LAKE");
  e = errorOf([&] { run::route(request); });
  EXPECT_TRUE(contains(e, "lakes.gpkg") && contains(e, "lake L") && contains(e, "reach Z flows into C") &&
              contains(e, "give it lake_id = L"))
      << e;
  // Reaches naming one lake but flowing into different reaches.
  network("T", "");
  e = errorOf([&] { run::route(request); });
  EXPECT_TRUE(contains(e, "net.gpkg") && contains(e, "field to_reach") && contains(e, "names lake L like reach") &&
              contains(e, "must flow into the same reaches"))
      << e;
}

// Forcing for a reach that lies inside a lake (dropped when the network is
// joined across it) names the reach and the lake.
TEST(LakeTopology, ForcingForAReachInsideALakeNamesTheLake) {
  testsupport::TempDir dir;
  const auto at = [&](const char* name) { return (dir.path() / name).string(); };
  writeNetwork(at("net.gpkg"),
               {{"A", {}, {}, 0, 10000, 0, 5100}, {"P", {}, {}, 0, 5100, 0, 4900}, {"C", {}, {}, 0, 4900, 0, 0}},
               false);
  writeLakes(at("lakes.gpkg"), {{"Mid", 0, 5000, 200, {{"k_h", 3}}}});
  writeInflow(at("inflow.csv"), {"A", "P"});
  run::RouteRequest request;
  request.network.path = at("net.gpkg");
  request.network.lakes = at("lakes.gpkg");
  request.forcing.inflow = at("inflow.csv");
  const std::string e = errorOf([&] { run::route(request); });
  EXPECT_TRUE(contains(e, "inflow.csv") && contains(e, "reach P lies inside lake Mid")) << e;
}

// A lake that two channels leave and no reach enters (a spring-fed pond
// with point inflow given at the top of one channel): the inflow passes
// through the lake and its outflow is shared by the bifurcation rule applied
// to the channels themselves (bottom widths 20 : 10).
TEST(LakeTopology, LakeWithoutInflowSharesByTheRuleToo) {
  testsupport::TempDir dir;
  const auto at = [&](const char* name) { return (dir.path() / name).string(); };
  writeNetwork(at("net.gpkg"), {{"C", {}, {}, 0, 5000, -2000, 0, 20}, {"D", {}, {}, 0, 5000, 2000, 0, 10}}, false);
  writeLakes(at("lakes.gpkg"), {{"Pond", 0, 5000, 200, {{"k_h", 2}}}});
  writeInflow(at("inflow.csv"), {"C"});
  run::RouteRequest request;
  request.network.path = at("net.gpkg");
  request.network.lakes = at("lakes.gpkg");
  request.forcing.inflow = at("inflow.csv");
  request.method = routing::Method::ConstantParameter;
  const run::RouteSummary s = run::route(request);
  const run::LakeResult* p = s.lake("Pond");
  ASSERT_NE(p, nullptr);
  EXPECT_TRUE(p->inflow_reaches.empty());
  ASSERT_EQ(p->outflow_reaches.size(), 2u);
  const std::uint32_t c = indexOf(s.plan, "C"), d = indexOf(s.plan, "D");
  const double sc = p->outflow_reaches[0] == c ? p->outflow_shares[0] : p->outflow_shares[1];
  EXPECT_NEAR(sc, 20.0 / 30.0, 1e-12);  // default_split = "width"
  const double dt = s.results.axis.dt_s;
  const double out = trapezoids(p->routing.result.outflow_m3s, dt);
  // The pond took C's point inflow, and C and D share what it let out.
  EXPECT_NEAR(p->routing.result.volume_in_m3 / s.results.reaches[c].volume.point_inflow_m3, 1.0, 1e-12);
  EXPECT_NEAR(s.results.reaches[c].volume.inflow_m3 / out, 20.0 / 30.0, 1e-12);
  EXPECT_NEAR(s.results.reaches[d].volume.inflow_m3 / out, 10.0 / 30.0, 1e-12);
  EXPECT_LT(std::abs(s.results.volume.error_pct), 0.01) << s.results.volume.error_pct;
}

// Calibration where a gauge's sub-basin cannot be cut out alone: the gauge
// on C, one of the two channels leaving lake L, whose other channel D lies
// outside C's sub-basin (the lake takes both channels' top inflow, so the
// part {A, B, C} cannot route it). That sub-basin is routed with the whole
// network (docs/methods.md, "Calibration"). A twin experiment (common
// practice): observations routed with n × 1.3 on every reach are fitted
// from the layer's n, and the fit's final score equals the whole network's
// at the gauge (the same routing, so to round-off).
TEST(LakeTopology, CalibrationAtAChannelLeavingATwoOutflowLake) {
  testsupport::TempDir dir;
  const auto at = [&](const char* name) { return (dir.path() / name).string(); };
  writeTwoChannelLake(dir.path());
  run::NetworkSource source{at("net.gpkg"), "", "", ""};
  source.lakes = at("lakes.gpkg");
  const auto net = run::loadNetwork(source);
  network::NetworkPlan plan = run::routablePlan(*net);
  for (auto& s : plan.section) s = s.withRoughnessScaled(1.3);
  const run::RunForcing forcing({at("inflow.csv"), "", {}}, plan);
  const routing::NetworkRouteOptions options =
      run::networkRouteOptions(*net, plan, routing::Method::VariableParameter, routing::kDiffusionWaveMinPonce,
                               routing::kGridSpreadBudget, 1);
  ASSERT_EQ(options.lakes.size(), 1u);
  Keep truth;
  (void)routing::routeNetwork(plan, forcing.axis(), forcing.provider(), options, &truth);
  const std::uint32_t c = indexOf(plan, "C");
  {
    std::ofstream csv(at("observed.csv"));
    csv << "time,C\n";
    for (std::size_t n = 0; n < forcing.axis().steps; ++n) {
      char t[40];
      std::snprintf(t, sizeof t, "2026-05-%02zuT%02zu:00:00Z", 1 + n / 24, n % 24);
      csv << t << "," << fmt::format("{:.17g}", truth.q.at(c)[n]) << "\n";
    }
  }
  run::CalibrateRequest request;
  request.network = source;
  request.forcing.inflow = at("inflow.csv");
  request.gauges.observed = at("observed.csv");
  request.threads = 1;
  const run::CalibrationResult result = run::calibrate(request);
  ASSERT_EQ(result.sub_basins.size(), 1u);
  const run::SubBasinResult& sb = result.sub_basins[0];
  EXPECT_EQ(ids(result.plan, sb.reaches), (std::set<std::string>{"A", "B", "C"}));
  // The optimiser stops at 1e-3 in log(multiplier); 1 % leaves room for
  // the flat top of the objective behind a weir lake.
  EXPECT_NEAR(sb.multiplier, 1.3, 0.013);
  EXPECT_GT(sb.after.kge, 0.999);
  ASSERT_EQ(result.scores.size(), 1u);
  EXPECT_NEAR(sb.after.kge, result.scores[0].kge, 1e-12);
}
