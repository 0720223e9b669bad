// The run layer in-process: one call routes the shipped sample network
// (forcing formats, hydrograph selection, NetCDF series, base flow,
// write-back, outputs left behind on failure), and its pieces.
#include "reachwise/run/Route.hpp"

#include <gtest/gtest.h>

#include <netcdf.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <mutex>
#include <set>
#include <string>

#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/network/SyntheticNetwork.hpp"
#include "reachwise/run/SeriesChoice.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";

void writeText(const fs::path& p, const std::string& text) { std::ofstream(p) << text; }

/// The sample network with its storm, written to `gpkg`.
run::RouteRequest sampleRequest(const std::string& gpkg) {
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.forcing.inflow = kSample + "inflow.csv";
  r.forcing.lateral = kSample + "lateral.csv";
  r.outputs.gpkg = gpkg;
  return r;
}

std::unique_ptr<GDALDataset> open(const fs::path& p) {
  io::ensureGdal();
  return std::unique_ptr<GDALDataset>(GDALDataset::Open(p.c_str(), GDAL_OF_VECTOR));
}

/// reach_id -> q series from the `hydrographs` table, in time order.
std::map<std::string, std::vector<double>> hydrographs(const fs::path& gpkg, const char* table = "hydrographs") {
  auto ds = open(gpkg);
  std::map<std::string, std::vector<double>> q;
  if (!ds) return q;
  OGRLayer* h = ds->ExecuteSQL(
      (std::string("SELECT reach_id, q FROM ") + table + " ORDER BY reach_id, time").c_str(), nullptr, nullptr);
  for (auto& f : *h) q[f->GetFieldAsString(0)].push_back(f->GetFieldAsDouble(1));
  ds->ReleaseResultSet(h);
  return q;
}

std::map<std::string, double> peaks(const fs::path& gpkg, const char* layer = "reaches") {
  auto ds = open(gpkg);
  std::map<std::string, double> p;
  if (!ds || !ds->GetLayerByName(layer)) return p;
  for (auto& f : *ds->GetLayerByName(layer)) p[f->GetFieldAsString("reach_id")] = f->GetFieldAsDouble("peak_q");
  return p;
}

/// Keeps every outflow series it is given, by plan index.
class Capture final : public routing::SeriesSink {
public:
  void write(std::uint32_t reach, std::span<const double> q, std::span<const double>,
             std::span<const double>) override {
    const std::lock_guard lock(mutex_);
    q_[reach].assign(q.begin(), q.end());
  }
  std::map<std::uint32_t, std::vector<double>> q_;

private:
  std::mutex mutex_;
};

}  // namespace

TEST(Route, OneCallRoutesTheSampleAndEveryOutputAgreesWithTheResults) {
  const testsupport::TempDir tmp;
  run::RouteRequest request = sampleRequest(tmp.file("o.gpkg"));
  Capture capture;
  request.sinks = {&capture};
  const run::RouteSummary s = run::route(request);
  ASSERT_EQ(s.plan.size(), 41u);  // sample-network/README.md
  EXPECT_EQ(s.gpkg, tmp.file("o.gpkg"));
  EXPECT_EQ(s.info.method, "vpmc");
  EXPECT_EQ(s.info.command_line, "reachwise library");
  ASSERT_EQ(s.info.inputs.size(), 3u);
  // The caller's sink saw every reach; its series peak where the summary says.
  ASSERT_EQ(capture.q_.size(), 41u);
  const auto written = peaks(s.gpkg);
  for (std::uint32_t i = 0; i < s.plan.size(); ++i) {
    const auto& q = capture.q_.at(i);
    const double max_sample = *std::max_element(q.begin(), q.end());
    // The reported peak is interpolated between samples: never below the largest sample.
    EXPECT_GE(s.results.reaches[i].peak_q_m3s, max_sample * (1 - 1e-12)) << s.plan.reach_id[i];
    EXPECT_DOUBLE_EQ(written.at(s.plan.reach_id[i]), s.results.reaches[i].peak_q_m3s);
  }
  // Mass conservation over the network (continuity; `vpmc` is held to 1 %, docs/methods.md §4 "Volume balance").
  EXPECT_LT(std::abs(s.results.volume.error_pct), 1.0);
}

// The GeoPackage's rows are written while routing runs, in the order
// reaches finish, which varies with the threads; the tables read back are
// the same whatever the count: feature ids in plan order, same fields.
TEST(Route, TheGeoPackageIsTheSameOnOneAndTwoThreads) {
  const testsupport::TempDir tmp;
  const auto table = [](const fs::path& gpkg, const char* layer) {
    auto ds = open(gpkg);
    std::map<GIntBig, std::string> rows;
    if (!ds || !ds->GetLayerByName(layer)) return rows;
    for (auto& f : *ds->GetLayerByName(layer)) {
      std::string text;
      for (int i = 0; i < f->GetFieldCount(); ++i) text += std::string(f->GetFieldAsString(i)) + "|";
      if (const OGRGeometry* g = f->GetGeometryRef()) text += g->exportToWkt();
      rows[f->GetFID()] = text;
    }
    return rows;
  };
  run::RouteRequest one = sampleRequest(tmp.file("one.gpkg"));
  one.threads = 1;
  run::RouteRequest two = sampleRequest(tmp.file("two.gpkg"));
  two.threads = 2;
  const run::RouteSummary s = run::route(one);
  run::route(two);
  const auto reaches = table(tmp.file("one.gpkg"), "reaches");
  ASSERT_EQ(reaches.size(), 41u);
  for (std::uint32_t i = 0; i < s.plan.size(); ++i)  // reach_id first: plan index i has id i + 1
    EXPECT_EQ(reaches.at(i + 1).substr(0, s.plan.reach_id[i].size() + 1), s.plan.reach_id[i] + "|");
  EXPECT_EQ(table(tmp.file("two.gpkg"), "reaches"), reaches);
  EXPECT_EQ(hydrographs(tmp.file("two.gpkg")), hydrographs(tmp.file("one.gpkg")));
  const auto nodes = table(tmp.file("one.gpkg"), "nodes");
  ASSERT_EQ(nodes.size(), s.results.nodes.size());
  for (std::size_t p = 0; p < s.results.nodes.size(); ++p)  // node_id first: position p has id p + 1
    EXPECT_EQ(nodes.at(static_cast<GIntBig>(p) + 1).substr(0, s.results.nodes[p].node_id.size() + 1),
              s.results.nodes[p].node_id + "|");
  EXPECT_EQ(table(tmp.file("two.gpkg"), "nodes"), nodes);
  // Branch rows numbered 1.. in node order, the same on both.
  const auto branches = table(tmp.file("one.gpkg"), "confluence_branches");
  std::size_t count = 0;
  for (const auto& node : s.results.nodes)
    for (const auto& branch : node.branches) {
      ++count;
      ASSERT_TRUE(branches.count(static_cast<GIntBig>(count))) << count;
      EXPECT_EQ(branches.at(static_cast<GIntBig>(count)).substr(0, node.node_id.size() + 1), node.node_id + "|");
      EXPECT_NE(branches.at(static_cast<GIntBig>(count)).find("|" + s.plan.reach_id[branch.reach] + "|"),
                std::string::npos);
    }
  EXPECT_EQ(branches.size(), count);
  EXPECT_GT(count, 10u);  // the sample's confluences
  EXPECT_EQ(table(tmp.file("two.gpkg"), "confluence_branches"), branches);
}

TEST(Route, NothingWrittenWhenNoOutputIsAskedFor) {
  const testsupport::TempDir tmp;
  run::RouteRequest request = sampleRequest("");
  const fs::path before = fs::current_path();
  fs::current_path(tmp.path());
  const run::RouteSummary s = run::route(request);
  fs::current_path(before);
  EXPECT_TRUE(s.gpkg.empty());
  EXPECT_TRUE(fs::is_empty(tmp.path()));
  EXPECT_EQ(s.results.reaches.size(), 41u);
}

TEST(Route, TheSameNetworkRoutesTwiceFromItsPiecesWithTheSameResult) {
  // What a calibration loop does: load once, bind the forcing once, route
  // many times; the router is deterministic (same inputs, same bits).
  const auto net = run::loadNetwork({kSample + "network.gpkg", "", "", ""});
  const network::NetworkPlan plan = run::routablePlan(*net);
  const run::RunForcing forcing({kSample + "inflow.csv", kSample + "lateral.csv", std::nullopt}, plan);
  routing::NetworkRouteOptions options;
  options.base_flow_m3s = run::baseFlows(plan);
  const auto a = routing::routeNetwork(plan, forcing.axis(), forcing.provider(), options);
  options.threads = 1;
  const auto b = routing::routeNetwork(plan, forcing.axis(), forcing.provider(), options);
  EXPECT_EQ(b.threads, 1u);   // the arena asked for
  EXPECT_GE(a.threads, 1u);   // the default arena: what the machine offers
  ASSERT_EQ(a.reaches.size(), b.reaches.size());
  for (std::size_t i = 0; i < a.reaches.size(); ++i)
    EXPECT_EQ(a.reaches[i].peak_q_m3s, b.reaches[i].peak_q_m3s) << plan.reach_id[i];
  // And one call gives the same numbers.
  const run::RouteSummary s = run::route(sampleRequest(""));
  for (std::size_t i = 0; i < a.reaches.size(); ++i) EXPECT_EQ(s.results.reaches[i].peak_q_m3s, a.reaches[i].peak_q_m3s);
}

TEST(Route, HydrographSelection) {
  const testsupport::TempDir tmp;
  run::RouteRequest request = sampleRequest(tmp.file("o.gpkg"));
  request.outputs.hydrographs = "outlets";
  run::route(request);
  auto q = hydrographs(tmp.file("o.gpkg"));
  ASSERT_EQ(q.size(), 1u);  // the sample network drains to one outlet, R1
  EXPECT_EQ(q.begin()->first, "R1");
  EXPECT_EQ(q.begin()->second.size(), 145u);  // 72 h at 30 min (sample-network/README.md)

  request.outputs.overwrite = true;
  request.outputs.hydrographs = "R12,R16";
  run::route(request);
  q = hydrographs(tmp.file("o.gpkg"));
  ASSERT_EQ(q.size(), 2u);
  EXPECT_TRUE(q.count("R12") && q.count("R16"));

  // Every branch meeting at a confluence; with `none` the table is empty.
  request.outputs.hydrographs = "confluences";
  run::route(request);
  q = hydrographs(tmp.file("o.gpkg"));
  EXPECT_GE(q.size(), 2u);
  EXPECT_FALSE(q.count("R1"));
  request.outputs.hydrographs = "none";
  run::route(request);
  EXPECT_TRUE(hydrographs(tmp.file("o.gpkg")).empty());

  // Unknown ids: one error naming all of them, and no output.
  run::RouteRequest bad = sampleRequest(tmp.file("b.gpkg"));
  bad.outputs.hydrographs = "R1,NOPE,ALSO";
  try {
    run::route(bad);
    ADD_FAILURE() << "unknown reach ids were accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("NOPE, ALSO"), std::string::npos) << e.what();
  }
  EXPECT_FALSE(fs::exists(tmp.file("b.gpkg")));
}

TEST(Route, AutoSelectionStaysBoundedOnALargeNetwork) {
  // 12,000 reaches: above the size where `auto` stops writing every reach.
  static_assert(run::kAutoAllBelowReaches < 12000);
  const network::ReachTable table =
      network::toReachTable(network::generateSyntheticNetwork({12000, 2, 7}));
  const network::ReachGraph graph(table);
  const network::NetworkPlan plan = graph.freeze();
  const std::vector<bool> mask = run::chooseSeries("auto", plan).mask(plan.size());
  std::size_t written = 0, outlets = 0;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    written += mask[i];
    outlets += mask[i] && plan.isOutlet(i);
  }
  // Both outlets, and the branches of kAutoConfluences confluences (two or
  // three each in a synthetic tree): far fewer than the 12,000 reaches.
  EXPECT_EQ(outlets, 2u);
  EXPECT_GE(written, 2 + 2 * run::kAutoConfluences);
  EXPECT_LE(written, 2 + 3 * run::kAutoConfluences);
  // Below the threshold, auto is everything.
  const network::ReachTable small = network::toReachTable(network::generateSyntheticNetwork({50, 1, 7}));
  const network::ReachGraph small_graph(small);
  const auto small_mask = run::chooseSeries("auto", small_graph.freeze()).mask(50);
  EXPECT_EQ(std::count(small_mask.begin(), small_mask.end(), true), 50);
}

/// The features of `layer` whose geometry meets the rectangle, by GEOS
/// through GDAL, feature by feature (no index).
std::set<GIntBig> meeting(OGRLayer& layer, const OGREnvelope& w) {
  OGRLinearRing ring;
  ring.addPoint(w.MinX, w.MinY);
  ring.addPoint(w.MaxX, w.MinY);
  ring.addPoint(w.MaxX, w.MaxY);
  ring.addPoint(w.MinX, w.MaxY);
  ring.closeRings();
  OGRPolygon rect;
  rect.addRing(&ring);
  std::set<GIntBig> out;
  layer.SetSpatialFilter(nullptr);
  for (auto& f : layer)
    if (f->GetGeometryRef() && f->GetGeometryRef()->Intersects(&rect)) out.insert(f->GetFID());
  return out;
}

/// The features GDAL gives for the rectangle through the layer's spatial index.
std::set<GIntBig> filtered(OGRLayer& layer, const OGREnvelope& w) {
  layer.SetSpatialFilterRect(w.MinX, w.MinY, w.MaxX, w.MaxY);
  std::set<GIntBig> out;
  for (auto& f : layer) out.insert(f->GetFID());
  layer.SetSpatialFilter(nullptr);
  return out;
}

std::string firstText(GDALDataset& ds, const std::string& sql) {
  OGRLayer* r = ds.ExecuteSQL(sql.c_str(), nullptr, nullptr);
  std::string out;
  if (r) {
    if (auto f = std::unique_ptr<OGRFeature>(r->GetNextFeature())) out = f->GetFieldAsString(0);
    ds.ReleaseResultSet(r);
  }
  return out;
}

TEST(Route, OutputSpatialIndexesFindWhatAScanFindsAndFollowEdits) {
  // The writer packs the R-trees of `reaches` and `nodes` itself. Checked
  // from outside: GDAL reports an index, window queries through it give
  // the features a scan of every geometry finds (GEOS intersection), SQLite's
  // rtreecheck() finds the trees consistent, and a feature added and moved
  // later through GDAL is found where it is and not where it was (the
  // GeoPackage's triggers keep the index up to date).
  const testsupport::TempDir tmp;
  run::route(sampleRequest(tmp.file("o.gpkg")));
  io::ensureGdal();
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(tmp.file("o.gpkg").c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
  ASSERT_TRUE(ds);
  for (const std::string name : {"reaches", "nodes"}) {
    SCOPED_TRACE(name);
    OGRLayer* layer = ds->GetLayerByName(name.c_str());
    ASSERT_TRUE(layer);
    EXPECT_TRUE(layer->TestCapability(OLCFastSpatialFilter));
    EXPECT_EQ(firstText(*ds, "SELECT rtreecheck('rtree_" + name + "_geom')"), "ok");
    EXPECT_EQ(firstText(*ds, "SELECT count(*) FROM rtree_" + name + "_geom"),
              firstText(*ds, "SELECT count(*) FROM " + name + " WHERE geom IS NOT NULL"));
    OGREnvelope all;
    ASSERT_EQ(layer->GetExtent(&all, TRUE), OGRERR_NONE);
    // A 4 × 4 grid of windows, each a little wider than its cell so that
    // they overlap, and one beyond the extent.
    const double w = all.MaxX - all.MinX, h = all.MaxY - all.MinY;
    std::size_t found = 0;
    for (int i = 0; i < 4; ++i)
      for (int j = 0; j < 4; ++j) {
        OGREnvelope cell;
        cell.MinX = all.MinX + w * (0.25 * i - 0.013), cell.MaxX = all.MinX + w * (0.25 * (i + 1) + 0.017);
        cell.MinY = all.MinY + h * (0.25 * j - 0.011), cell.MaxY = all.MinY + h * (0.25 * (j + 1) + 0.019);
        const auto expected = meeting(*layer, cell);
        EXPECT_EQ(filtered(*layer, cell), expected) << "window " << i << ", " << j;
        found += expected.size();
      }
    EXPECT_GE(found, static_cast<std::size_t>(layer->GetFeatureCount()));  // the windows cover every feature
    OGREnvelope away;
    away.MinX = all.MaxX + 1e4, away.MaxX = all.MaxX + 2e4, away.MinY = all.MinY, away.MaxY = all.MaxY;
    EXPECT_TRUE(filtered(*layer, away).empty());

    // An edit after the run: a feature added beyond the extent, then moved.
    OGRFeature added(layer->GetLayerDefn());
    OGRPoint p(all.MaxX + 1.5e4, 0.5 * (all.MinY + all.MaxY)), p2(all.MaxX + 3.5e4, p.getY());
    OGRLineString l, l2;
    l.addPoint(p.getX(), p.getY()), l.addPoint(p.getX() + 10, p.getY() + 10);
    l2.addPoint(p2.getX(), p2.getY()), l2.addPoint(p2.getX() + 10, p2.getY() + 10);
    const bool is_line = name == "reaches";
    added.SetGeometry(is_line ? static_cast<OGRGeometry*>(&l) : &p);
    ASSERT_EQ(layer->CreateFeature(&added), OGRERR_NONE);
    EXPECT_EQ(filtered(*layer, away), std::set<GIntBig>{added.GetFID()});
    added.SetGeometry(is_line ? static_cast<OGRGeometry*>(&l2) : &p2);
    ASSERT_EQ(layer->SetFeature(&added), OGRERR_NONE);
    EXPECT_TRUE(filtered(*layer, away).empty());
    away.MinX += 2e4, away.MaxX += 2e4;
    EXPECT_EQ(filtered(*layer, away), std::set<GIntBig>{added.GetFID()});
    EXPECT_EQ(firstText(*ds, "SELECT rtreecheck('rtree_" + name + "_geom')"), "ok");
  }
}

TEST(Route, NetcdfForcingGivesTheSameRunAsCsv) {
  const testsupport::TempDir tmp;
  io::Forcing lateral = io::readForcingCsv(std::nullopt, fs::path(kSample + "lateral.csv"));
  io::writeForcingNetcdf(tmp.path() / "lateral.nc", lateral);
  const run::RouteSummary csv = run::route(sampleRequest(""));
  run::RouteRequest nc_request = sampleRequest("");
  nc_request.forcing.lateral = tmp.file("lateral.nc");
  const run::RouteSummary nc = run::route(nc_request);
  ASSERT_EQ(nc.results.reaches.size(), csv.results.reaches.size());
  // The lateral inflow is read from the file while routing, ahead of the
  // reaches (each reach's series once); the CSV inflow is in memory.
  EXPECT_EQ(nc.results.series_read_ahead + nc.results.series_read_on_demand, nc.plan.size());
  EXPECT_EQ(csv.results.series_read_ahead + csv.results.series_read_on_demand, 0u);
  for (std::size_t i = 0; i < csv.results.reaches.size(); ++i) {
    const double q = csv.results.reaches[i].peak_q_m3s;
    EXPECT_NEAR(nc.results.reaches[i].peak_q_m3s, q, 1e-9 * q) << csv.plan.reach_id[i];
  }

  // A value missing inside one reach's series, read ahead of that reach:
  // the run fails naming the file, the reach and the time, and leaves no
  // output behind.
  {
    int nc = -1, v = -1, ids = -1;
    ASSERT_EQ(nc_open(tmp.file("lateral.nc").c_str(), NC_WRITE, &nc), NC_NOERR);
    ASSERT_EQ(nc_inq_varid(nc, "lateral", &v), NC_NOERR);
    ASSERT_EQ(nc_inq_varid(nc, "reach_id", &ids), NC_NOERR);
    double fill = 0;
    ASSERT_EQ(nc_get_att_double(nc, v, "_FillValue", &fill), NC_NOERR);
    const std::size_t at[2] = {10, 3};  // (time, reach)
    ASSERT_EQ(nc_put_var1_double(nc, v, at, &fill), NC_NOERR);
    char* id = nullptr;
    ASSERT_EQ(nc_get_var1_string(nc, ids, &at[1], &id), NC_NOERR);
    const std::string bad_reach = id;
    nc_free_string(1, &id);
    ASSERT_EQ(nc_close(nc), NC_NOERR);
    run::RouteRequest bad = sampleRequest(tmp.file("bad.gpkg"));
    bad.forcing.lateral = tmp.file("lateral.nc");
    try {
      run::route(bad);
      ADD_FAILURE() << "a missing value inside a series was accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(e.where().file, tmp.file("lateral.nc")) << e.what();
      EXPECT_EQ(e.where().reach_id, bad_reach) << e.what();
      EXPECT_FALSE(e.where().time.empty()) << e.what();
      EXPECT_NE(std::string(e.what()).find("_FillValue"), std::string::npos) << e.what();
    }
    EXPECT_FALSE(fs::exists(tmp.file("bad.gpkg")));
  }

  // A NetCDF file without the variable of its kind is refused by name.
  run::RouteRequest wrong = sampleRequest(tmp.file("w.gpkg"));
  wrong.forcing = {tmp.file("lateral.nc"), "", std::nullopt};
  try {
    run::route(wrong);
    ADD_FAILURE() << "a lateral file was taken for inflow";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("no `inflow` variable"), std::string::npos) << e.what();
  }
  // NetCDF forcing is not resampled.
  wrong.forcing = {"", tmp.file("lateral.nc"), 600.0};
  try {
    run::route(wrong);
    ADD_FAILURE() << "NetCDF forcing was resampled";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("not resampled"), std::string::npos) << e.what();
  }
  EXPECT_FALSE(fs::exists(tmp.file("w.gpkg")));
}

TEST(Route, SeriesGoToNetcdfInsteadOfTheTable) {
  const testsupport::TempDir tmp;
  const std::string ref = tmp.file("ref.gpkg"), out = tmp.file("o.gpkg"), nc = tmp.file("s.nc");
  run::RouteRequest request = sampleRequest(ref);
  request.outputs.hydrographs = "R1,R12";
  run::route(request);
  request.outputs.gpkg = out;
  request.outputs.series_nc = nc;
  run::route(request);
  EXPECT_TRUE(hydrographs(out).empty());
  {  // run_info says where the series went, and how many series were held at once
    auto ds = open(out);
    std::map<std::string, std::string> info;
    for (auto& f : *ds->GetLayerByName("run_info")) info[f->GetFieldAsString("key")] = f->GetFieldAsString("value");
    EXPECT_EQ(info["series"], nc);
    ASSERT_TRUE(info.count("peak_live_series"));
    EXPECT_GT(std::stoi(info["peak_live_series"]), 0);
    EXPECT_LT(std::stoi(info["peak_live_series"]), 41);  // fewer than the reaches: series are released
  }
  const auto expected = hydrographs(ref);

  int ncid = 0, dim = 0, var = 0;
  ASSERT_EQ(nc_open(nc.c_str(), NC_NOWRITE, &ncid), NC_NOERR);
  std::size_t n_reach = 0, n_time = 0;
  ASSERT_EQ(nc_inq_dimid(ncid, "reach", &dim), NC_NOERR);
  nc_inq_dimlen(ncid, dim, &n_reach);
  ASSERT_EQ(nc_inq_dimid(ncid, "time", &dim), NC_NOERR);
  nc_inq_dimlen(ncid, dim, &n_time);
  ASSERT_EQ(n_reach, 2u);
  ASSERT_EQ(n_time, 145u);
  ASSERT_EQ(nc_inq_varid(ncid, "reach_id", &var), NC_NOERR);
  char* ids[2] = {nullptr, nullptr};
  ASSERT_EQ(nc_get_var_string(ncid, var, ids), NC_NOERR);
  std::vector<double> q(n_time * n_reach);
  ASSERT_EQ(nc_inq_varid(ncid, "outflow", &var), NC_NOERR);
  ASSERT_EQ(nc_get_var_double(ncid, var, q.data()), NC_NOERR);
  for (std::size_t r = 0; r < n_reach; ++r) {
    const auto& want = expected.at(ids[r]);
    ASSERT_EQ(want.size(), n_time);
    for (std::size_t t = 0; t < n_time; ++t) EXPECT_NEAR(q[t * n_reach + r], want[t], 1e-9 * (1 + want[t]));
  }
  nc_free_string(2, ids);
  nc_close(ncid);
  // An existing series file is kept unless overwriting is asked for.
  request.outputs.gpkg = tmp.file("p.gpkg");
  EXPECT_THROW(run::route(request), InputError);
  EXPECT_FALSE(fs::exists(tmp.file("p.gpkg")));
}

TEST(Route, BaseFlowAccumulatesToASteadyOutletFlow) {
  // With only a base flow, every reach carries the base flows of all reaches
  // above it, at every step: the steady state of mass conservation
  // (continuity, common practice). 41 reaches × 0.5 m3/s at the outlet.
  const testsupport::TempDir tmp;
  writeText(tmp.path() / "run.toml", "[network.fields]\nbase_flow = { default = 0.5 }\n");
  writeText(tmp.path() / "in.csv", "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,0\nR12,2026-05-01T12:00:00Z,0\n");
  run::RouteRequest request;
  request.network = {kSample + "network.gpkg", "", tmp.file("run.toml"), ""};
  request.forcing = {tmp.file("in.csv"), "", 1800.0};
  Capture capture;
  request.sinks = {&capture};
  const run::RouteSummary s = run::route(request);
  std::uint32_t outlet = 0;
  while (!s.plan.isOutlet(outlet)) ++outlet;
  const auto& q = capture.q_.at(outlet);
  ASSERT_EQ(q.size(), 25u);
  for (double v : q) EXPECT_NEAR(v, 41 * 0.5, 1e-9);

  writeText(tmp.path() / "neg.toml", "[network.fields]\nbase_flow = { default = -1 }\n");
  request.network.config = tmp.file("neg.toml");
  try {
    run::route(request);
    ADD_FAILURE() << "a negative base flow was accepted";
  } catch (const run::NetworkHasErrors& e) {
    ASSERT_FALSE(e.problems().empty());
    EXPECT_NE(run::problemLine(e.problems().front()).find("base_flow"), std::string::npos)
        << run::problemLine(e.problems().front());
  }
}

TEST(Route, WriteBackRunsAgainOnTheSameFile) {
  const testsupport::TempDir tmp;
  const fs::path copy = tmp.path() / "net.gpkg";
  fs::copy_file(kSample + "network.gpkg", copy);
  run::RouteRequest request = sampleRequest("");
  request.network.path = copy.string();
  request.outputs.write_back = true;
  EXPECT_EQ(run::route(request).gpkg, copy.string());
  // The written-back results layer is not taken for a second network layer,
  // and is kept unless overwriting is asked for.
  EXPECT_THROW(run::route(request), InputError);
  request.outputs.overwrite = true;
  EXPECT_NO_THROW(run::route(request));
  EXPECT_EQ(peaks(copy, "rw_reaches").size(), 41u);
  EXPECT_EQ(hydrographs(copy, "rw_hydrographs").size(), 41u);
  EXPECT_FALSE(run::loadNetwork({copy.string(), "", "", ""})->hasErrors());
}

TEST(Route, ANetworkWithErrorsIsRefusedWithItsProblems) {
  run::RouteRequest request = sampleRequest("");
  request.network.path = kSample + "cycle.gpkg";
  try {
    run::route(request);
    ADD_FAILURE() << "a network with a cycle was routed";
  } catch (const run::NetworkHasErrors& e) {
    bool cycle = false;
    for (const auto& p : e.problems()) cycle |= p.severity == network::Severity::Error &&
                                                run::problemLine(p).find("cycle") != std::string::npos;
    EXPECT_TRUE(cycle) << e.what();
  }
}

// Each bad forcing file gives its own error, naming the file and line, and
// leaves nothing behind in the output folder.
struct BadForcing {
  const char* name;
  const char* csv;
  const char* expected;
};

class RouteBadForcing : public ::testing::TestWithParam<BadForcing> {};

TEST_P(RouteBadForcing, ErrorNamesFileAndLineAndLeavesNoOutput) {
  const testsupport::TempDir tmp;
  const fs::path out_dir = tmp.path() / "out";
  fs::create_directories(out_dir);
  writeText(tmp.path() / "in.csv", GetParam().csv);
  run::RouteRequest request = sampleRequest((out_dir / "o.gpkg").string());
  request.forcing = {tmp.file("in.csv"), "", std::nullopt};
  request.outputs.csv_dir = (out_dir / "tables").string();
  try {
    run::route(request);
    ADD_FAILURE() << "bad forcing was accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("in.csv"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find(GetParam().expected), std::string::npos) << e.what();
  }
  EXPECT_TRUE(fs::is_empty(out_dir)) << "something was left in " << out_dir;
}

INSTANTIATE_TEST_SUITE_P(
    Cases, RouteBadForcing,
    ::testing::Values(
        BadForcing{"UnparsableTime", "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,1\nR12,2026-05-01T0x:00,2\n",
                   "line 3"},
        BadForcing{"OutOfOrder", "reach_id,time,discharge\nR12,2026-05-01T01:00:00Z,1\nR12,2026-05-01T00:00:00Z,2\n",
                   "line 3"},
        BadForcing{"Duplicated", "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,1\nR12,2026-05-01T00:00:00Z,2\n",
                   "repeats the time on line 2"},
        BadForcing{"Negative", "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,1\nR12,2026-05-01T01:00:00Z,-2\n",
                   "negative"},
        BadForcing{"NotANumber", "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,1\nR12,2026-05-01T01:00:00Z,abc\n",
                   "not a finite number"},
        BadForcing{"UnknownReaches",
                   "time,R12,Q1,Q2\n2026-05-01T00:00:00Z,1,1,1\n2026-05-01T01:00:00Z,1,1,1\n", "Q1, Q2"},
        BadForcing{"OffTheGrid",
                   "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,1\nR12,2026-05-01T01:00:00Z,2\n"
                   "R12,2026-05-01T02:30:00Z,2\n",
                   "line 4"}),
    [](const ::testing::TestParamInfo<BadForcing>& info) { return std::string(info.param.name); });

TEST(Route, MethodNamesRoundTrip) {
  for (const auto m : {routing::Method::VariableParameter, routing::Method::ConstantParameter, routing::Method::Muskingum,
                       routing::Method::DiffusionWave})
    EXPECT_EQ(run::methodFromName(run::methodName(m)), m);
  EXPECT_FALSE(run::methodFromName("kinematic").has_value());
  // The names are fixed by the command-line contract (README, "Commands").
  EXPECT_EQ(run::methodNames(), (std::vector<std::string>{"vpmc", "mc", "muskingum", "diffusion"}));
}
