// Results writers, checked by reading the files back with GDAL/OGR (an
// independent reader of GeoPackage and CSV) and instants against POSIX
// timegm().
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <csignal>
#include <cmath>
#include <cstdio>
#include <iterator>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <algorithm>
#include <string>
#include <vector>

#include "NetworkFixtures.hpp"
#include "support/Scratch.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/ResultsWriter.hpp"

namespace {

namespace fs = std::filesystem;
using namespace reachwise;
using io::GpkgResultsWriter;
using io::GpkgWriterOptions;
using routing::kNaN;

/// Seconds since the epoch of a UTC wall-clock time, by POSIX timegm().
double utc(int y, int mo, int d, int h, int mi, double s) {
  return static_cast<double>(testsupport::utcSeconds(y, mo, d, h, mi)) + s;
}

/// Instant of an OGR date-time field (TZ flag 100 = UTC, 15 minutes a unit).
double readInstant(OGRFeature& f, const char* field) {
  int y, mo, d, h, mi, tz;
  float s;
  EXPECT_TRUE(f.GetFieldAsDateTime(f.GetFieldIndex(field), &y, &mo, &d, &h, &mi, &s, &tz));
  EXPECT_GE(tz, 2) << "time zone flag unknown or local";
  const double offset_s = tz >= 100 ? (tz - 100) * 15 * 60.0 : 0.0;
  return utc(y, mo, d, h, mi, s) - offset_s;
}

/// Three reaches, A and B join at a Y and feed C. The table rows are in
/// another order than the plan so that plan.record is exercised.
struct Network {
  network::ReachTable table;
  network::NetworkPlan plan;
  routing::TimeAxis axis;
  routing::NetworkResults results;
  io::RunInfo info;

  static double t0() { return utc(2026, 5, 1, 0, 0, 0); }

  Network() {
    OGRSpatialReference srs;
    srs.importFromEPSG(32633);
    char* wkt = nullptr;
    srs.exportToWkt(&wkt);
    table.crs_wkt = wkt;
    CPLFree(wkt);
    table.source = "brannoch.gpkg";
    table.layer = "reaches";
    auto record = [](std::string id, std::vector<network::Point3> line) {
      network::ReachRecord r;
      r.id = std::move(id);
      r.line = std::move(line);
      return r;
    };
    table.reaches = {record("C,lower", {{500, 500}, {500, 0}}),
                     record("A", {{500, 500}, {250, 750}, {0, 1000}}),  // digitised upstream
                     record("B", {{1000, 1000}, {500, 500}})};
    plan.reach_id = {"A", "B", "C,lower"};
    plan.fid = {2, 3, 1};
    plan.record = {1, 2, 0};
    plan.length_m = {707.1, 707.1, 500};
    plan.section.assign(3, hydraulics::Section::trapezoid(10, 0, 0.035, 0.001));
    plan.muskingum_k_s = {kNaN, kNaN, kNaN};
    plan.muskingum_x = {kNaN, kNaN, kNaN};
    plan.base_flow_m3s = {kNaN, kNaN, kNaN};
    plan.basin = {0, 0, 0};
    plan.strahler = {1, 1, 2};
    plan.top = {{0, 1000}, {1000, 1000}, {500, 500}};
    plan.bottom = {{500, 500}, {500, 500}, {500, 0}};
    plan.reversed = {true, false, false};  // A's line starts at its bottom
    plan.up_offset = {0, 0, 0, 2};
    plan.up_reach = {0, 1};
    plan.up_fraction = {1, 1};
    plan.down_offset = {0, 1, 2, 2};
    plan.down_reach = {2, 2};

    axis.start_unix_s = static_cast<std::int64_t>(t0());
    axis.dt_s = 900;
    axis.steps = 5;
    axis.utc_offset_min = 60;
    results.axis = axis;
    results.reaches.resize(3);
    for (std::size_t i = 0; i < 3; ++i) {
      auto& s = results.reaches[i];
      s.peak_q_m3s = 10.0 + static_cast<double>(i);
      s.peak_time_s = t0() + 3600.0 * static_cast<double>(i + 1) + 0.25;
      s.peak_depth_m = 1.5;
      s.peak_velocity_ms = 0.8;
      s.volume.error_pct = 0.01 * static_cast<double>(i);
      s.volume.event_error_pct = 0.04 * static_cast<double>(i);
      s.numerics.subreaches = 3 + static_cast<std::uint32_t>(i);
      s.numerics.substeps = 2;
      s.numerics.courant = 0.9;
      s.numerics.x = 0.31;
      s.numerics.negative_clamps = 5'000'000'000ull;  // beyond 32 bits
      s.numerics.grid_compromise = i == 2;
      s.numerics.x_clamp_cause = i == 2 ? routing::XClampCause::Surcharge : routing::XClampCause::None;
      s.numerics.envelope_exceedances = 3 * i;
      s.numerics.envelope_excursion_pct = 1.5 * static_cast<double>(i);
    }
    results.reaches[0].peak_depth_m = kNaN;  // must come back as NULL
    results.reaches[2].travel_time_s = 5400;

    auto node = [](std::string id, routing::NodeKind kind, double x, double y, double q, double t) {
      routing::NodeSummary n;
      n.node_id = std::move(id);
      n.kind = kind;
      n.x = x;
      n.y = y;
      n.peak_q_m3s = q;
      n.peak_time_s = t;
      return n;
    };
    results.nodes = {node("n_a", routing::NodeKind::Headwater, 0, 1000, 10, t0() + 1800),
                     node("n_b", routing::NodeKind::Headwater, 1000, 1000, 11, t0() + 2700),
                     node("n_y", routing::NodeKind::Confluence, 500, 500, 19.5, t0() + 9000),
                     node("n_out", routing::NodeKind::Outlet, 500, 0, 12, t0() + 10800)};
    auto& y = results.nodes[2];
    y.branches = {{0, 10.0, t0() + 3600.25}, {1, 11.0, t0() + 7200.25}};
    y.branch_spread_s = 3600;
    y.coincidence_ratio = 19.5 / 21.0;
    y.lake_id = "Mere";  // a lake on the confluence
    results.warnings = {"reach C,lower: grid compromise"};
    results.volume.event_error_pct = -2.5;

    info.inputs = {"brannoch.gpkg", "inflow.csv"};
    info.method = "vpmc";
    info.command_line = "reachwise route brannoch.gpkg --inflow inflow.csv";
    info.warnings = {"forcing resampled to 900 s", "reach C,lower: grid compromise"};
  }

  std::vector<double> series(std::uint32_t reach) const {
    std::vector<double> q(axis.steps);
    for (std::size_t k = 0; k < q.size(); ++k) q[k] = 100.0 * reach + static_cast<double>(k);
    return q;
  }

  template <class Sink>
  void streamReach(Sink& sink, std::uint32_t r) const {
    const auto q = series(r);
    std::vector<double> depth(q.size(), 1.0), velocity(q.size(), 0.5);
    velocity[1] = kNaN;
    sink.write(r, q, depth, velocity);
  }

  template <class Sink>
  void stream(Sink& sink) const {
    for (std::uint32_t r = 0; r < 3; ++r) streamReach(sink, r);
  }
};

GDALDatasetUniquePtr openVector(const fs::path& path, unsigned flags = 0,
                                const char* const* options = nullptr) {
  io::ensureGdal();
  return GDALDatasetUniquePtr(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | flags, nullptr, options));
}

std::set<std::string> fieldNames(OGRLayer& layer) {
  std::set<std::string> out;
  const auto* defn = layer.GetLayerDefn();
  for (int i = 0; i < defn->GetFieldCount(); ++i) out.insert(defn->GetFieldDefn(i)->GetNameRef());
  return out;
}

void expectFields(OGRLayer& layer, const std::vector<std::string>& names) {
  const auto have = fieldNames(layer);
  for (const auto& n : names) EXPECT_TRUE(have.count(n)) << layer.GetName() << " lacks " << n;
}

// Field names fixed by the output contract (docs/formats.md, "Outputs").
const std::vector<std::string> kReachFields = {
    "reach_id", "peak_q", "peak_time", "peak_depth", "peak_velocity", "inflow_peak_q",
    "inflow_peak_time", "attenuation_pct", "travel_time_h", "volume_in_m3", "volume_lateral_m3",
    "volume_out_m3", "storage_change_m3", "volume_error_pct", "subreaches", "substeps", "dx_m",
    "dt_sub_s", "courant", "x", "cell_reynolds", "reference_q", "amplitude_ratio", "phase_ratio",
    "negative_clamps", "x_clamps", "surcharge_cells", "grid_compromise", "strahler", "basin",
    "event_volume_error_pct", "x_clamp_cause", "envelope_exceedances", "envelope_excursion_pct",
    "ponce_number", "method"};
const std::vector<std::string> kNodeFields = {"node_id", "kind", "peak_q", "peak_time",
                                              "branch_count", "branch_spread_h", "coincidence_ratio",
                                              "lake_id"};

std::unique_ptr<OGRFeature> featureWhere(OGRLayer& layer, const std::string& filter) {
  layer.SetAttributeFilter(filter.c_str());
  layer.ResetReading();
  std::unique_ptr<OGRFeature> f(layer.GetNextFeature());
  layer.SetAttributeFilter(nullptr);
  return f;
}

void writeGpkg(const Network& net, const fs::path& out, GpkgWriterOptions options = {}) {
  GpkgResultsWriter writer(out, net.table, net.plan, net.axis, std::move(options));
  net.stream(writer);
  writer.writeSummaries(net.results, net.info);
  writer.commit();
}

std::vector<fs::path> listDir(const fs::path& dir) {
  std::vector<fs::path> out;
  for (const auto& e : fs::directory_iterator(dir)) out.push_back(e.path().filename());
  return out;
}

TEST(GpkgResultsWriter, LayersFieldsCrsAndValuesReadBackWithOgr) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  GpkgWriterOptions options;
  options.batch_rows = 4;  // several batches for 15 rows
  writeGpkg(net, out, options);

  auto ds = openVector(out);
  ASSERT_TRUE(ds) << CPLGetLastErrorMsg();
  for (const char* name : {"reaches", "nodes", "confluence_branches", "hydrographs", "run_info"})
    ASSERT_NE(ds->GetLayerByName(name), nullptr) << name;
  OGRLayer& reaches = *ds->GetLayerByName("reaches");
  OGRLayer& nodes = *ds->GetLayerByName("nodes");
  expectFields(reaches, kReachFields);
  expectFields(nodes, kNodeFields);
  expectFields(*ds->GetLayerByName("confluence_branches"),
               {"node_id", "branch_reach_id", "branch_peak_q", "branch_peak_time"});
  expectFields(*ds->GetLayerByName("hydrographs"), {"reach_id", "time", "q", "depth", "velocity"});
  expectFields(*ds->GetLayerByName("run_info"), {"key", "value"});
  EXPECT_EQ(reaches.GetGeomType(), wkbLineString);
  EXPECT_EQ(nodes.GetGeomType(), wkbPoint);
  EXPECT_EQ(reaches.GetLayerDefn()->GetFieldDefn(reaches.FindFieldIndex("peak_time", TRUE))->GetType(),
            OFTDateTime);

  // CRS as given (GDAL's own comparison).
  OGRSpatialReference utm33;
  utm33.importFromEPSG(32633);
  ASSERT_NE(reaches.GetSpatialRef(), nullptr);
  EXPECT_TRUE(reaches.GetSpatialRef()->IsSame(&utm33));
  ASSERT_NE(nodes.GetSpatialRef(), nullptr);
  EXPECT_TRUE(nodes.GetSpatialRef()->IsSame(&utm33));

  EXPECT_EQ(reaches.GetFeatureCount(), 3);
  auto a = featureWhere(reaches, "reach_id = 'A'");
  ASSERT_TRUE(a);
  EXPECT_DOUBLE_EQ(a->GetFieldAsDouble("peak_q"), 10.0);
  EXPECT_TRUE(a->IsFieldNull(a->GetFieldIndex("peak_depth")));    // NaN -> NULL
  EXPECT_TRUE(a->IsFieldNull(a->GetFieldIndex("travel_time_h")));
  EXPECT_NEAR(readInstant(*a, "peak_time"), Network::t0() + 3600.25, 1e-3);
  EXPECT_EQ(a->GetFieldAsInteger64("negative_clamps"), 5'000'000'000ll);
  EXPECT_EQ(a->GetFieldAsInteger("subreaches"), 3);
  EXPECT_EQ(a->GetFieldAsInteger("grid_compromise"), 0);
  // Geometry: table row 1 is reach A's (three vertices), drawn from its top.
  const auto* line = a->GetGeometryRef()->toLineString();
  ASSERT_EQ(line->getNumPoints(), 3);
  EXPECT_DOUBLE_EQ(line->getX(0), 0.0);
  EXPECT_DOUBLE_EQ(line->getY(0), 1000.0);
  EXPECT_DOUBLE_EQ(line->getX(1), 250.0);
  EXPECT_DOUBLE_EQ(line->getY(1), 750.0);

  auto c = featureWhere(reaches, "reach_id = 'C,lower'");
  ASSERT_TRUE(c);
  EXPECT_DOUBLE_EQ(c->GetFieldAsDouble("travel_time_h"), 1.5);
  EXPECT_DOUBLE_EQ(c->GetFieldAsDouble("event_volume_error_pct"), 0.08);
  EXPECT_STREQ(c->GetFieldAsString("x_clamp_cause"), "surcharge");
  EXPECT_EQ(c->GetFieldAsInteger64("envelope_exceedances"), 6);
  EXPECT_DOUBLE_EQ(c->GetFieldAsDouble("envelope_excursion_pct"), 3.0);
  EXPECT_TRUE(a->IsFieldNull(a->GetFieldIndex("x_clamp_cause")));  // no clamps: NULL
  EXPECT_EQ(c->GetFieldAsInteger("grid_compromise"), 1);
  EXPECT_EQ(c->GetFieldAsInteger("strahler"), 2);
  EXPECT_DOUBLE_EQ(c->GetGeometryRef()->toLineString()->getY(1), 0.0);

  EXPECT_EQ(nodes.GetFeatureCount(), 4);
  auto y = featureWhere(nodes, "node_id = 'n_y'");
  ASSERT_TRUE(y);
  EXPECT_STREQ(y->GetFieldAsString("kind"), "confluence");
  EXPECT_EQ(y->GetFieldAsInteger("branch_count"), 2);
  EXPECT_DOUBLE_EQ(y->GetFieldAsDouble("branch_spread_h"), 1.0);
  EXPECT_STREQ(y->GetFieldAsString("lake_id"), "Mere");
  EXPECT_TRUE(featureWhere(nodes, "lake_id IS NOT NULL AND node_id <> 'n_y'") == nullptr);
  EXPECT_NEAR(readInstant(*y, "peak_time"), Network::t0() + 9000, 1e-3);
  EXPECT_DOUBLE_EQ(y->GetGeometryRef()->toPoint()->getX(), 500.0);

  OGRLayer& branches = *ds->GetLayerByName("confluence_branches");
  EXPECT_EQ(branches.GetFeatureCount(), 2);
  auto b = featureWhere(branches, "branch_reach_id = 'B'");
  ASSERT_TRUE(b);
  EXPECT_STREQ(b->GetFieldAsString("node_id"), "n_y");
  EXPECT_NEAR(readInstant(*b, "branch_peak_time"), Network::t0() + 7200.25, 1e-3);

  OGRLayer& series = *ds->GetLayerByName("hydrographs");
  EXPECT_EQ(series.GetFeatureCount(), 15);
  auto row = featureWhere(series, "reach_id = 'B' AND q = 103");
  ASSERT_TRUE(row);
  EXPECT_NEAR(readInstant(*row, "time"), Network::t0() + 3 * 900.0, 1e-3);
  auto nan_row = featureWhere(series, "reach_id = 'A' AND q = 1");
  ASSERT_TRUE(nan_row);
  EXPECT_TRUE(nan_row->IsFieldNull(nan_row->GetFieldIndex("velocity")));

  OGRLayer& run_info = *ds->GetLayerByName("run_info");
  std::multiset<std::string> keys;
  run_info.ResetReading();
  for (auto& f : run_info) keys.insert(f->GetFieldAsString("key"));
  EXPECT_EQ(keys.count("input"), 2u);
  EXPECT_EQ(keys.count("warning"), 2u);  // the one in both lists once
  for (const char* key : {"method", "dt_s", "steps", "start", "end", "version", "git_hash",
                          "command_line", "caution"})
    EXPECT_EQ(keys.count(key), 1u) << key;
  auto event = featureWhere(run_info, "key = 'event_volume_error_pct'");
  ASSERT_TRUE(event);
  EXPECT_STREQ(event->GetFieldAsString("value"), "-2.5");
  auto start = featureWhere(run_info, "key = 'start'");
  EXPECT_STREQ(start->GetFieldAsString("value"), "2026-05-01T01:00:00+01:00");  // ISO 8601 at +01:00
}

int timeZoneFlag(OGRFeature& f, const char* field) {
  int y, mo, d, h, mi, tz;
  float s;
  EXPECT_TRUE(f.GetFieldAsDateTime(f.GetFieldIndex(field), &y, &mo, &d, &h, &mi, &s, &tz));
  return tz;
}

TEST(GpkgResultsWriter, DateTimesInUtcByDefaultOrAtTheRunOffset) {
  // GeoPackage 1.2 (OGC 12-128r15), DATETIME: ISO 8601 in UTC ("Z"); OGR's
  // time-zone flag is 100 for UTC plus one per 15 minutes east.
  fixtures::TempDir dir;
  const Network net;
  writeGpkg(net, dir.file("utc.gpkg"));
  GpkgWriterOptions local;
  local.local_offset_times = true;
  writeGpkg(net, dir.file("local.gpkg"), local);
  for (const auto& [name, flag] : {std::pair{"utc.gpkg", 100}, std::pair{"local.gpkg", 104}}) {
    auto ds = openVector(dir.file(name));
    ASSERT_TRUE(ds);
    auto c = featureWhere(*ds->GetLayerByName("reaches"), "reach_id = 'C,lower'");
    ASSERT_TRUE(c);
    EXPECT_EQ(timeZoneFlag(*c, "peak_time"), flag) << name;
    EXPECT_NEAR(readInstant(*c, "peak_time"), Network::t0() + 3 * 3600.0 + 0.25, 1e-3) << name;
    auto row = featureWhere(*ds->GetLayerByName("hydrographs"), "reach_id = 'A' AND q = 4");
    ASSERT_TRUE(row);
    EXPECT_EQ(timeZoneFlag(*row, "time"), flag) << name;
    EXPECT_NEAR(readInstant(*row, "time"), Network::t0() + 3600.0, 1e-3) << name;
  }
}

TEST(GpkgResultsWriter, NothingRemainsWithoutCommit) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  fs::path working;
  {
    GpkgResultsWriter writer(out, net.table, net.plan, net.axis);
    working = writer.workingPath();
    net.stream(writer);
    writer.writeSummaries(net.results, net.info);
    EXPECT_TRUE(fs::exists(working));
    EXPECT_FALSE(fs::exists(out));
  }
  EXPECT_FALSE(fs::exists(working));
  EXPECT_FALSE(fs::exists(out));
  EXPECT_TRUE(listDir(out.parent_path()).empty());
}

TEST(GpkgResultsWriter, RefusesToReplaceAnOutputWithoutOverwrite) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  { std::ofstream(out) << "keep me"; }
  try {
    GpkgResultsWriter writer(out, net.table, net.plan, net.axis);
    FAIL() << "an existing output was not refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, out.string());
  }
  EXPECT_EQ(fs::file_size(out), 7u);
  EXPECT_EQ(listDir(out.parent_path()).size(), 1u);

  GpkgWriterOptions options;
  options.overwrite = true;
  writeGpkg(net, out, options);
  auto ds = openVector(out);
  ASSERT_TRUE(ds);
  EXPECT_EQ(ds->GetLayerByName("reaches")->GetFeatureCount(), 3);
}

TEST(GpkgResultsWriter, WritesOnlySelectedHydrographs) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  GpkgWriterOptions options;
  options.series = io::SeriesSelection::of({2});
  writeGpkg(net, out, options);
  auto ds = openVector(out);
  ASSERT_TRUE(ds);
  OGRLayer& series = *ds->GetLayerByName("hydrographs");
  EXPECT_EQ(series.GetFeatureCount(), 5);
  for (auto& f : series) EXPECT_STREQ(f->GetFieldAsString("reach_id"), "C,lower");

  options.series = io::SeriesSelection::of({7});
  EXPECT_THROW(GpkgResultsWriter(dir.file("bad.gpkg"), net.table, net.plan, net.axis, options),
               InvalidParameter);
}

/// The value of the first row of a one-row SQL query, as text.
std::string sqlText(GDALDataset& ds, const std::string& sql) {
  OGRLayer* result = ds.ExecuteSQL(sql.c_str(), nullptr, "SQLITE");
  EXPECT_NE(result, nullptr) << sql;
  if (!result) return {};
  std::unique_ptr<OGRFeature> f(result->GetNextFeature());
  std::string out = f && f->IsFieldSetAndNotNull(0) ? f->GetFieldAsString(0) : "(null)";
  ds.ReleaseResultSet(result);
  return out;
}

TEST(GpkgResultsWriter, HydrographRowsAreCountedAndStoredAsGdalStoresThem) {
  // The rows go in through SQLite rather than OGR: the file must still be
  // what GDAL itself writes. GeoPackage 1.2 (OGC 12-128r15), DATETIME:
  // "YYYY-MM-DDTHH:MM:SS.SSSZ"; gpkg_ogr_contents holds the feature count
  // and a trigger keeps it as rows are added (GDAL's own extension).
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  writeGpkg(net, out);
  {
    auto ds = openVector(out);
    ASSERT_TRUE(ds);
    const std::string rows = sqlText(*ds, "SELECT COUNT(*) FROM hydrographs");
    EXPECT_EQ(rows, "15");  // 3 reaches × 5 steps
    EXPECT_EQ(sqlText(*ds, "SELECT feature_count FROM gpkg_ogr_contents WHERE table_name = 'hydrographs'"), rows);
    EXPECT_EQ(sqlText(*ds, "SELECT time || '' FROM hydrographs WHERE reach_id = 'A' AND q = 4"), "2026-05-01T01:00:00.000Z");
    EXPECT_EQ(sqlText(*ds, "SELECT typeof(time) || typeof(q) FROM hydrographs LIMIT 1"), "textreal");
    // A missing value (NaN; the fixture's second step) is NULL, as OGR writes an unset field.
    EXPECT_EQ(sqlText(*ds, "SELECT typeof(velocity) FROM hydrographs WHERE reach_id = 'A' AND q = 1"), "null");
    EXPECT_EQ(sqlText(*ds, "SELECT typeof(velocity) FROM hydrographs WHERE reach_id = 'A' AND q = 2"), "real");
  }
  {
    // A row added later through OGR is counted by the trigger.
    std::unique_ptr<GDALDataset> ds(GDALDataset::Open(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
    ASSERT_TRUE(ds);
    OGRLayer& series = *ds->GetLayerByName("hydrographs");
    OGRFeature f(series.GetLayerDefn());
    f.SetField("reach_id", "A");
    ASSERT_EQ(series.CreateFeature(&f), OGRERR_NONE);
  }
  auto ds = openVector(out);
  ASSERT_TRUE(ds);
  EXPECT_EQ(ds->GetLayerByName("hydrographs")->GetFeatureCount(), 16);
  EXPECT_EQ(sqlText(*ds, "SELECT feature_count FROM gpkg_ogr_contents WHERE table_name = 'hydrographs'"), "16");
}

TEST(GpkgResultsWriter, CallerMistakesAreInternalErrorsAndLeaveNothing) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  {
    GpkgResultsWriter writer(out, net.table, net.plan, net.axis);
    const std::vector<double> short_series(net.axis.steps - 1, 1.0);
    EXPECT_THROW(writer.write(0, short_series, {}, {}), InternalError);
    EXPECT_THROW(writer.write(3, net.series(0), {}, {}), InternalError);  // no plan reach 3
    EXPECT_THROW(writer.commit(), InternalError);  // summaries were never written
    auto results = net.results;
    results.reaches.pop_back();
    EXPECT_THROW(writer.writeSummaries(results, net.info), InternalError);
  }
  EXPECT_FALSE(fs::exists(out));
  EXPECT_TRUE(listDir(out.parent_path()).empty());
  // A run with lakes must write them before committing: a file without its
  // lakes would look complete.
  {
    GpkgWriterOptions options;
    options.lakes = true;
    GpkgResultsWriter writer(out, net.table, net.plan, net.axis, options);
    net.stream(writer);
    writer.writeSummaries(net.results, net.info);
    EXPECT_THROW(writer.commit(), InternalError);
  }
  EXPECT_FALSE(fs::exists(out));
  EXPECT_TRUE(listDir(out.parent_path()).empty());
}

/// A feature's fields as text (NULL as "NULL") and its geometry as WKT, as OGR reads them back.
std::vector<std::string> asText(const OGRFeature& f) {
  std::vector<std::string> values;
  for (int i = 0; i < f.GetFieldCount(); ++i)
    values.emplace_back(f.IsFieldSetAndNotNull(i) ? f.GetFieldAsString(i) : "NULL");
  if (const OGRGeometry* g = f.GetGeometryRef()) values.push_back(g->exportToWkt());
  return values;
}

/// Every feature of `layer` by feature id.
std::map<GIntBig, std::vector<std::string>> featuresById(OGRLayer& layer) {
  std::map<GIntBig, std::vector<std::string>> out;
  layer.ResetReading();
  for (auto& f : layer) out[f->GetFID()] = asText(*f);
  return out;
}

/// The rows of `hydrographs`, whatever their ids.
std::multiset<std::vector<std::string>> seriesRows(OGRLayer& layer) {
  std::multiset<std::vector<std::string>> out;
  layer.ResetReading();
  for (auto& f : layer) out.insert(asText(*f));
  return out;
}

// Written on the writer's own thread while routing runs, the tables are
// those written afterwards: the same feature ids (plan index + 1 for
// reaches, the position in NetworkResults::nodes + 1 for nodes, what
// writing in order gives), fields and geometries, whatever order the
// reaches and nodes finish in, and whichever came before writeSummaries().
TEST(GpkgResultsWriter, BackgroundWritingGivesTheSameTablesInAnyOrder) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path plain = dir.file("plain.gpkg");
  writeGpkg(net, plain);
  for (const std::vector<std::uint32_t>& finished :
       std::vector<std::vector<std::uint32_t>>{{2, 0, 1}, {1}, {}}) {
    SCOPED_TRACE(::testing::PrintToString(finished));
    const fs::path out = dir.file("background.gpkg");
    {
      GpkgWriterOptions options;
      options.background = true;
      options.overwrite = true;
      options.batch_rows = 4;
      GpkgResultsWriter writer(out, net.table, net.plan, net.axis, options);
      EXPECT_TRUE(writer.wantsSummaries());
      for (std::uint32_t r : finished) {
        net.streamReach(writer, r);
        writer.summarised(r, net.results.reaches[r]);
      }
      // Nodes as they become final, last first; n_y, the confluence, lists two branches.
      if (finished.size() == 3) {
        const auto& nodes = net.results.nodes;
        writer.nodeFinished(3, 2, nodes[3]);
        writer.nodeFinished(2, 0, nodes[2]);
        writer.nodeFinished(0, 0, nodes[0]);
      }
      for (std::uint32_t r = 0; r < 3; ++r)
        if (std::find(finished.begin(), finished.end(), r) == finished.end()) net.streamReach(writer, r);
      writer.writeSummaries(net.results, net.info);
      writer.commit();
    }
    auto a = openVector(plain);
    auto b = openVector(out);
    ASSERT_TRUE(a && b);
    const auto expected = featuresById(*a->GetLayerByName("reaches"));
    ASSERT_EQ(expected.size(), 3u);
    EXPECT_EQ(expected.begin()->first, 1);  // plan order from 1
    EXPECT_EQ(featuresById(*b->GetLayerByName("reaches")), expected);
    const auto rows = seriesRows(*b->GetLayerByName("hydrographs"));
    EXPECT_EQ(rows.size(), 15u);
    EXPECT_EQ(rows, seriesRows(*a->GetLayerByName("hydrographs")));
    EXPECT_EQ(featuresById(*b->GetLayerByName("nodes")), featuresById(*a->GetLayerByName("nodes")));
    const auto branches = featuresById(*a->GetLayerByName("confluence_branches"));
    ASSERT_EQ(branches.size(), 2u);
    EXPECT_EQ(featuresById(*b->GetLayerByName("confluence_branches")), branches);
  }
}

// An ensemble (whose `reaches` rows need every member) does not take
// summaries while routing runs, even when asked to.
TEST(GpkgResultsWriter, BackgroundWritingIsForAPlainGeoPackageRunOnly) {
  fixtures::TempDir dir;
  const Network net;
  GpkgWriterOptions options;
  options.background = true;
  options.member_column = true;
  GpkgResultsWriter ensemble(dir.file("e.gpkg"), net.table, net.plan, net.axis, options);
  EXPECT_FALSE(ensemble.wantsSummaries());
  options.background = false;
  options.member_column = false;
  GpkgResultsWriter plain(dir.file("p.gpkg"), net.table, net.plan, net.axis, options);
  EXPECT_FALSE(plain.wantsSummaries());
  // A fan-out asks on behalf of its sinks.
  io::SeriesFanOut none({&ensemble, &plain});
  EXPECT_FALSE(none.wantsSummaries());
  options.background = true;
  GpkgResultsWriter background(dir.file("b.gpkg"), net.table, net.plan, net.axis, options);
  io::SeriesFanOut some({&plain, &background});
  EXPECT_TRUE(some.wantsSummaries());
}

// A run abandoned while the writing thread has rows queued leaves nothing.
TEST(GpkgResultsWriter, BackgroundWritingAbandonedLeavesNothing) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  {
    GpkgWriterOptions options;
    options.background = true;
    GpkgResultsWriter writer(out, net.table, net.plan, net.axis, options);
    for (int k = 0; k < 200; ++k) net.stream(writer);
    writer.summarised(1, net.results.reaches[1]);
  }
  EXPECT_FALSE(fs::exists(out));
  EXPECT_TRUE(listDir(out.parent_path()).empty());
}

// A write that fails on the writing thread (here the file-size limit,
// POSIX setrlimit RLIMIT_FSIZE, in a child process so that the limit does
// not reach the other tests) stops the run with the file's name, at the
// next series handed over or at writeSummaries(), and leaves nothing.
TEST(GpkgResultsWriter, BackgroundWriteFailureReachesTheRun) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("out.gpkg");
  const fs::path message = dir.file("message.txt");
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    ::signal(SIGXFSZ, SIG_IGN);
    std::string what = "no error";
    try {
      GpkgWriterOptions options;
      options.background = true;
      options.batch_rows = 100;
      GpkgResultsWriter writer(out, net.table, net.plan, net.axis, options);
      const rlimit limit{2 << 20, 2 << 20};
      ::setrlimit(RLIMIT_FSIZE, &limit);
      for (int k = 0; k < 20000; ++k) net.stream(writer);  // 60,000 series rows: beyond 2 MiB
      writer.writeSummaries(net.results, net.info);
      writer.commit();
    } catch (const std::exception& e) {
      what = e.what();
    }
    const rlimit none{RLIM_INFINITY, RLIM_INFINITY};
    ::setrlimit(RLIMIT_FSIZE, &none);
    std::ofstream(message) << what;
    ::_exit(0);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  std::ifstream in(message);
  std::string what((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(what.find(out.string()), std::string::npos) << what;
  EXPECT_EQ(what.find("no error"), std::string::npos) << what;
  EXPECT_FALSE(fs::exists(out));
  for (const auto& e : fs::directory_iterator(dir.path()))
    if (e.path().filename() != "message.txt") ADD_FAILURE() << "left behind: " << e.path();
}

/// A GeoPackage holding the user's own network layer, named `reaches`.
void writeInput(const std::string& path) {
  fixtures::Layer layer;
  layer.fields = fixtures::reachFields();
  layer.features = {fixtures::reach("LINESTRING (500 500, 500 0)", "C,lower", std::nullopt),
                    fixtures::reach("LINESTRING (0 1000, 250 750, 500 500)", "A", "C,lower"),
                    fixtures::reach("LINESTRING (1000 1000, 500 500)", "B", "C,lower")};
  fixtures::write(path, "GPKG", {layer});
}

void expectOriginalIntact(GDALDataset& ds) {
  OGRLayer* original = ds.GetLayerByName("reaches");
  ASSERT_NE(original, nullptr);
  EXPECT_EQ(original->GetFeatureCount(), 3);
  std::set<std::string> expected;
  for (const auto& f : fixtures::reachFields()) expected.insert(f.name);
  EXPECT_EQ(fieldNames(*original), expected);
}

TEST(GpkgResultsWriter, WriteBackAddsPrefixedLayersBesideTheOriginal) {
  fixtures::TempDir dir;
  const Network net;
  const auto input = dir.file("network.gpkg");
  writeInput(input);
  auto run = [&](bool overwrite) {
    GpkgWriterOptions options;
    options.overwrite = overwrite;
    auto writer = GpkgResultsWriter::writeBack(input, "rw_", net.table, net.plan, net.axis, options);
    net.stream(*writer);
    writer->writeSummaries(net.results, net.info);
    writer->commit();
  };
  run(false);
  {
    auto ds = openVector(input);
    ASSERT_TRUE(ds);
    expectOriginalIntact(*ds);
    for (const char* name : {"rw_reaches", "rw_nodes", "rw_confluence_branches", "rw_hydrographs",
                             "rw_run_info"})
      ASSERT_NE(ds->GetLayerByName(name), nullptr) << name;
    expectFields(*ds->GetLayerByName("rw_reaches"), kReachFields);
    EXPECT_EQ(ds->GetLayerByName("rw_hydrographs")->GetFeatureCount(), 15);
    EXPECT_EQ(ds->GetLayerCount(), 6);
  }
  // A second run is refused without overwrite, and replaces the layers with it.
  EXPECT_THROW(run(false), InputError);
  run(true);
  auto ds = openVector(input);
  ASSERT_TRUE(ds);
  expectOriginalIntact(*ds);
  EXPECT_EQ(ds->GetLayerCount(), 6);
  EXPECT_EQ(ds->GetLayerByName("rw_reaches")->GetFeatureCount(), 3);
  EXPECT_EQ(ds->GetLayerByName("rw_hydrographs")->GetFeatureCount(), 15);
}

TEST(GpkgResultsWriter, WriteBackWithoutCommitLeavesTheInputAsItWas) {
  fixtures::TempDir dir;
  const Network net;
  const auto input = dir.file("network.gpkg");
  writeInput(input);
  {
    auto writer = GpkgResultsWriter::writeBack(input, "rw_", net.table, net.plan, net.axis);
    net.stream(*writer);
    writer->writeSummaries(net.results, net.info);
  }
  auto ds = openVector(input);
  ASSERT_TRUE(ds);
  expectOriginalIntact(*ds);
  EXPECT_EQ(ds->GetLayerCount(), 1);
}

TEST(GpkgResultsWriter, WriteBackRefusesWhatIsNotAGeoPackage) {
  fixtures::TempDir dir;
  const Network net;
  const auto input = dir.file("network.geojson");
  fixtures::Layer layer;
  layer.fields = fixtures::reachFields();
  layer.features = {fixtures::reach("LINESTRING (500 500, 500 0)", "C", std::nullopt)};
  fixtures::write(input, "GeoJSON", {layer});
  try {
    GpkgResultsWriter::writeBack(input, "rw_", net.table, net.plan, net.axis);
    FAIL() << "a GeoJSON source was accepted for write-back";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, input);
    EXPECT_NE(std::string(e.what()).find("GeoPackage"), std::string::npos) << e.what();
  }
  EXPECT_THROW(GpkgResultsWriter::writeBack(dir.file("missing.gpkg"), "rw_", net.table, net.plan,
                                            net.axis),
               InputError);
  const auto gpkg = dir.file("network.gpkg");
  writeInput(gpkg);
  EXPECT_THROW(GpkgResultsWriter::writeBack(gpkg, "", net.table, net.plan, net.axis),
               InvalidParameter);
}

TEST(CsvResults, TablesParseBackWithGdalCsvDriver) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("csv");
  io::writeCsvTables(out, false, net.table, net.plan, net.results, net.info);
  {
    // One stream feeding both writers, as a run with --out and --csv does.
    io::CsvSeriesWriter series(out, false, net.plan, net.axis);
    GpkgResultsWriter gpkg(dir.file("both.gpkg"), net.table, net.plan, net.axis);
    io::SeriesFanOut both({&series, &gpkg});
    net.stream(both);
    series.commit();
    EXPECT_EQ(gpkg.hydrographRows(), 15u);
  }
  EXPECT_EQ(listDir(out).size(), 5u);  // no temporary files left

  const char* const options[] = {"EMPTY_STRING_AS_NULL=YES", nullptr};
  auto reaches = openVector(out / "reaches.csv", 0, options);
  ASSERT_TRUE(reaches) << CPLGetLastErrorMsg();
  OGRLayer& rl = *reaches->GetLayer(0);
  expectFields(rl, kReachFields);
  EXPECT_EQ(rl.GetFeatureCount(), 3);
  // RFC 4180 quoting, read back by GDAL's CSV driver: the comma survived.
  auto c = featureWhere(rl, "reach_id = 'C,lower'");
  ASSERT_TRUE(c);
  EXPECT_DOUBLE_EQ(c->GetFieldAsDouble("peak_q"), 12.0);
  EXPECT_DOUBLE_EQ(c->GetFieldAsDouble("event_volume_error_pct"), 0.08);
  EXPECT_STREQ(c->GetFieldAsString("x_clamp_cause"), "surcharge");
  EXPECT_EQ(c->GetFieldAsInteger64("envelope_exceedances"), 6);
  // ISO 8601 at the run's offset: 03:00:00.25Z is 04:00:00.250+01:00.
  EXPECT_STREQ(c->GetFieldAsString("peak_time"), "2026-05-01T04:00:00.250+01:00");
  OGRGeometry* geometry = nullptr;
  ASSERT_EQ(OGRGeometryFactory::createFromWkt(c->GetFieldAsString("geometry"), nullptr, &geometry),
            OGRERR_NONE);
  std::unique_ptr<OGRGeometry> owned(geometry);
  EXPECT_DOUBLE_EQ(geometry->toLineString()->getY(1), 0.0);
  auto a = featureWhere(rl, "reach_id = 'A'");
  ASSERT_TRUE(a);
  OGRGeometry* a_geometry = nullptr;
  ASSERT_EQ(OGRGeometryFactory::createFromWkt(a->GetFieldAsString("geometry"), nullptr, &a_geometry),
            OGRERR_NONE);
  std::unique_ptr<OGRGeometry> a_owned(a_geometry);
  EXPECT_DOUBLE_EQ(a_geometry->toLineString()->getY(0), 1000.0);  // in flow direction
  EXPECT_TRUE(a->IsFieldNull(a->GetFieldIndex("peak_depth")));
  EXPECT_EQ(a->GetFieldAsInteger64("negative_clamps"), 5'000'000'000ll);

  auto nodes = openVector(out / "nodes.csv", 0, options);
  ASSERT_TRUE(nodes);
  expectFields(*nodes->GetLayer(0), kNodeFields);
  auto y = featureWhere(*nodes->GetLayer(0), "node_id = 'n_y'");
  ASSERT_TRUE(y);
  EXPECT_DOUBLE_EQ(y->GetFieldAsDouble("x"), 500.0);
  EXPECT_STREQ(y->GetFieldAsString("kind"), "confluence");
  EXPECT_STREQ(y->GetFieldAsString("lake_id"), "Mere");

  auto branches = openVector(out / "confluence_branches.csv", 0, options);
  ASSERT_TRUE(branches);
  EXPECT_EQ(branches->GetLayer(0)->GetFeatureCount(), 2);

  auto series = openVector(out / "hydrographs.csv", 0, options);
  ASSERT_TRUE(series);
  OGRLayer& sl = *series->GetLayer(0);
  EXPECT_EQ(sl.GetFeatureCount(), 15);
  auto row = featureWhere(sl, "reach_id = 'C,lower' AND q = '204'");
  ASSERT_TRUE(row);
  EXPECT_STREQ(row->GetFieldAsString("time"), "2026-05-01T02:00:00+01:00");
  auto nan_row = featureWhere(sl, "reach_id = 'A' AND q = '1'");
  ASSERT_TRUE(nan_row);
  EXPECT_TRUE(nan_row->IsFieldNull(nan_row->GetFieldIndex("velocity")));

  auto run_info = openVector(out / "run_info.csv", 0, options);
  ASSERT_TRUE(run_info);
  auto warning = featureWhere(*run_info->GetLayer(0), "key = 'warning' AND value LIKE 'reach%'");
  ASSERT_TRUE(warning);
  EXPECT_STREQ(warning->GetFieldAsString("value"), "reach C,lower: grid compromise");
}

TEST(CsvResults, RefusesExistingFilesAndLeavesNothingHalfWritten) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("csv");
  fs::create_directories(out);
  { std::ofstream(out / "nodes.csv") << "mine"; }
  EXPECT_THROW(io::writeCsvTables(out, false, net.table, net.plan, net.results, net.info), InputError);
  EXPECT_EQ(listDir(out).size(), 1u);
  {
    io::CsvSeriesWriter series(out, false, net.plan, net.axis);
    net.stream(series);
  }
  EXPECT_EQ(listDir(out).size(), 1u);  // hydrographs.csv never appeared
  io::writeCsvTables(out, true, net.table, net.plan, net.results, net.info);
  EXPECT_EQ(listDir(out).size(), 4u);
}

}  // namespace

// A text cell a spreadsheet would run as a formula (it begins with =, +, -,
// @, tab or CR) is written quoted with a leading apostrophe, the common
// defence against CSV formula injection (OWASP "CSV Injection", from
// memory); other text stays as it was.
TEST(CsvResults, FormulaLikeTextGetsALeadingApostrophe) {
  fixtures::TempDir dir;
  Network net;
  net.plan.reach_id[0] = "=HYPERLINK(\"http://x\")";
  net.plan.reach_id[1] = "-12";  // a plain number: harmless, written as it is
  const fs::path out = dir.file("csv");
  {
    io::CsvSeriesWriter series(out, false, net.plan, net.axis);
    net.stream(series);
    series.commit();
  }
  std::ifstream in(out / "hydrographs.csv");
  std::set<std::string> ids;
  std::string line;
  std::getline(in, line);  // header
  while (std::getline(in, line)) {
    // The id is everything before the comma that follows its closing quote.
    const std::size_t end = line[0] == '"' ? line.find("\",") + 1 : line.find(',');
    ids.insert(line.substr(0, end));
  }
  EXPECT_TRUE(ids.count("\"'=HYPERLINK(\"\"http://x\"\")\"")) << *ids.begin();
  EXPECT_TRUE(ids.count("-12"));
  EXPECT_TRUE(ids.count(net.plan.reach_id[2]) || ids.count('"' + net.plan.reach_id[2] + '"'));
  for (const auto& id : ids) EXPECT_NE(id.front(), '=') << id;
}

// A failed write names the system's reason, read at once (before the
// clean-up can change errno): here the file-size limit (EFBIG, "File too
// large"; POSIX setrlimit RLIMIT_FSIZE), in a child process so that the
// limit does not reach the rest of the tests.
TEST(CsvResults, AFailedWriteKeepsTheSystemReason) {
  fixtures::TempDir dir;
  const Network net;
  const fs::path out = dir.file("csv");
  fs::create_directories(out);
  const fs::path message = dir.file("message.txt");
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    ::signal(SIGXFSZ, SIG_IGN);
    const rlimit limit{100, 100};
    ::setrlimit(RLIMIT_FSIZE, &limit);
    std::string what = "no error";
    try {
      io::writeCsvTables(out, false, net.table, net.plan, net.results, net.info);
    } catch (const std::exception& e) {
      what = e.what();
    }
    std::FILE* f = std::fopen(message.c_str(), "w");  // the end of the message fits the limit
    if (f) {
      std::fputs(what.substr(what.size() > 60 ? what.size() - 60 : 0).c_str(), f);
      std::fclose(f);
    }
    ::_exit(0);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  std::ifstream in(message);
  std::string what((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(what.find("File too large"), std::string::npos) << what;
  EXPECT_EQ(what.find("Success"), std::string::npos) << what;
  // Nothing of the failed set is left, not even its temporary files.
  for (const auto& e : fs::directory_iterator(out)) ADD_FAILURE() << "left behind: " << e.path();
}
