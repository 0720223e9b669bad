// A routed lake in every output of a run: the GeoPackage (`lakes`,
// `lake_series`, `lake_id` on its node), the same written back (`rw_`),
// the CSV tables and the CF-NetCDF series file; and outputs refused before
// routing when a lake file is in the way. The lake is a linear reservoir
// on the node where R2 flows into R1 in the sample network.
#include <gtest/gtest.h>

#include <netcdf.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/run/Route.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
constexpr double kHalf = 150;          // the lake: a 300 m square, 90,000 m2
constexpr double kArea = 4 * kHalf * kHalf;
constexpr double kK_h = 3;             // linear reservoir O = S / k

/// One lake (GeoJSON, the network's CRS) around the node where R2 flows into R1.
std::string writeLake(const testsupport::TempDir& dir) {
  const double x = 511926.51, y = 5181963.78;
  std::ostringstream ring;
  ring.precision(12);
  ring << "[[" << x - kHalf << "," << y - kHalf << "],[" << x + kHalf << "," << y - kHalf << "],[" << x + kHalf
       << "," << y + kHalf << "],[" << x - kHalf << "," << y + kHalf << "],[" << x - kHalf << "," << y - kHalf
       << "]]";
  const std::string path = dir.file("lakes.geojson");
  std::ofstream(path) << R"({"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::32633"}},)"
                      << R"("features":[{"type":"Feature","properties":{"lake_id":"Mere","k_h":)" << kK_h
                      << R"(},"geometry":{"type":"Polygon","coordinates":[)" << ring.str() << "]}}]}";
  return path;
}

run::RouteRequest request(const std::string& lakes) {
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.network.lakes = lakes;
  r.forcing.inflow = kSample + "inflow.csv";
  r.forcing.lateral = kSample + "lateral.csv";
  return r;
}

std::unique_ptr<GDALDataset> open(const fs::path& p) {
  io::ensureGdal();
  return std::unique_ptr<GDALDataset>(GDALDataset::Open(p.c_str(), GDAL_OF_VECTOR));
}

/// The four series of the one lake of `s`, in the order of the lake_series columns.
std::vector<std::vector<double>> seriesOf(const run::RouteSummary& s) {
  const auto lakes = run::routedLakes(s);
  EXPECT_EQ(lakes.size(), 1u);
  const auto& r = *lakes.at(0).routing;
  return {r.result.level_m, r.result.storage_m3, r.inflow_m3s, r.result.outflow_m3s};
}

const char* const kSeriesFields[] = {"level_m", "storage_m3", "inflow_m3s", "outflow_m3s"};

/// `lake_series` of a GeoPackage, in time order: one vector per field.
std::vector<std::vector<double>> seriesTable(GDALDataset& ds, const std::string& table, const std::string& lake) {
  std::vector<std::vector<double>> out(4);
  OGRLayer* rows = ds.ExecuteSQL(("SELECT level_m, storage_m3, inflow_m3s, outflow_m3s FROM " + table +
                                  " WHERE lake_id = '" + lake + "' ORDER BY time")
                                     .c_str(),
                                 nullptr, nullptr);
  if (!rows) return out;
  for (auto& f : *rows)
    for (int c = 0; c < 4; ++c) out[c].push_back(f->GetFieldAsDouble(c));
  ds.ReleaseResultSet(rows);
  return out;
}

std::vector<std::string> splitCsv(const std::string& line) {
  // Good enough for these files: only the geometry column is quoted, and it comes last.
  std::vector<std::string> cells;
  std::string cell;
  bool quoted = false;
  for (char c : line) {
    if (c == '"') quoted = !quoted;
    else if (c == ',' && !quoted) cells.push_back(std::move(cell)), cell.clear();
    else cell += c;
  }
  cells.push_back(cell);
  return cells;
}

std::vector<std::vector<std::string>> readCsv(const fs::path& p) {
  std::ifstream in(p);
  std::vector<std::vector<std::string>> rows;
  for (std::string line; std::getline(in, line);) rows.push_back(splitCsv(line));
  return rows;
}

std::string textAtt(int nc, int var, const char* name) {
  std::size_t len = 0;
  if (nc_inq_attlen(nc, var, name, &len) != NC_NOERR) return "<missing>";
  std::string s(len, '\0');
  nc_get_att_text(nc, var, name, s.data());
  return s;
}

}  // namespace

TEST(LakeOutputs, GeoPackageAndCsvHoldTheLakeTheSummaryHolds) {
  const testsupport::TempDir tmp;
  run::RouteRequest r = request(writeLake(tmp));
  r.outputs.gpkg = tmp.file("out.gpkg");
  r.outputs.csv_dir = tmp.file("csv");
  const run::RouteSummary s = run::route(r);
  const auto want = seriesOf(s);
  const std::size_t steps = s.results.axis.steps;
  ASSERT_EQ(want[0].size(), steps);

  // The series obey the lake's own definition (docs/formats.md, "Lakes and
  // reservoirs"): a prismatic lake's level is its storage over its area
  // above the bottom level (0 by default), and a linear reservoir's outflow
  // is S / k. Relative 1e-9: the polygon's coordinates are decimal, so its
  // area is 90,000 m2 only to about 1e-12.
  for (std::size_t n = 0; n < steps; ++n) {
    EXPECT_NEAR(want[0][n], want[1][n] / kArea, 1e-9 * (1 + want[0][n])) << n;
    EXPECT_NEAR(want[3][n], want[1][n] / (kK_h * 3600), 1e-9 * (1 + want[3][n])) << n;
  }

  auto ds = open(r.outputs.gpkg);
  ASSERT_TRUE(ds);
  OGRLayer* lakes = ds->GetLayerByName("lakes");
  ASSERT_NE(lakes, nullptr);
  EXPECT_EQ(lakes->GetFeatureCount(), 1);
  EXPECT_EQ(wkbFlatten(lakes->GetGeomType()), wkbMultiPolygon);
  // The lake's series, value for value (doubles round-trip through SQLite REAL).
  ASSERT_NE(ds->GetLayerByName("lake_series"), nullptr);
  const auto got = seriesTable(*ds, "lake_series", "Mere");
  for (int c = 0; c < 4; ++c) {
    ASSERT_EQ(got[c].size(), steps) << kSeriesFields[c];
    for (std::size_t n = 0; n < steps; ++n) EXPECT_EQ(got[c][n], want[c][n]) << kSeriesFields[c] << " " << n;
  }
  // The node the lake sits on (the top of R1) names it; no other does.
  int named = 0;
  for (auto& f : *ds->GetLayerByName("nodes")) {
    const int field = f->GetFieldIndex("lake_id");
    ASSERT_GE(field, 0);
    if (f->IsFieldSetAndNotNull(field)) {
      ++named;
      EXPECT_STREQ(f->GetFieldAsString(field), "Mere");
      EXPECT_STREQ(f->GetFieldAsString("node_id"), "N:R1");
    }
  }
  EXPECT_EQ(named, 1);
  for (const auto& node : s.results.nodes) EXPECT_EQ(node.lake_id, node.node_id == "N:R1" ? "Mere" : "");

  // CSV: lakes.csv, the layer's fields then a WKT geometry; lake_series.csv, the same series.
  const auto table = readCsv(fs::path(r.outputs.csv_dir) / "lakes.csv");
  ASSERT_EQ(table.size(), 2u);
  const auto& header = table[0];
  ASSERT_EQ(header.size(), static_cast<std::size_t>(lakes->GetLayerDefn()->GetFieldCount()) + 1);
  for (int i = 0; i < lakes->GetLayerDefn()->GetFieldCount(); ++i)
    EXPECT_EQ(header[i], lakes->GetLayerDefn()->GetFieldDefn(i)->GetNameRef());
  EXPECT_EQ(header.back(), "geometry");
  EXPECT_EQ(table[1][0], "Mere");
  EXPECT_EQ(table[1][1], "R1");
  std::unique_ptr<OGRFeature> f(lakes->GetNextFeature());
  EXPECT_EQ(std::stod(table[1][2]), f->GetFieldAsDouble("inflow_peak_m3s"));
  EXPECT_EQ(table[1].back().rfind("MULTIPOLYGON", 0), 0u) << table[1].back();
  OGRGeometry* g = nullptr;
  ASSERT_EQ(OGRGeometryFactory::createFromWkt(table[1].back().c_str(), nullptr, &g), OGRERR_NONE);
  EXPECT_NEAR(g->toMultiPolygon()->get_Area(), kArea, 1e-3);
  OGRGeometryFactory::destroyGeometry(g);

  const auto series = readCsv(fs::path(r.outputs.csv_dir) / "lake_series.csv");
  ASSERT_EQ(series.size(), steps + 1);
  EXPECT_EQ(series[0], (std::vector<std::string>{"lake_id", "time", "level_m", "storage_m3", "inflow_m3s", "outflow_m3s"}));
  for (std::size_t n = 0; n < steps; ++n) {
    ASSERT_EQ(series[n + 1].size(), 6u);
    EXPECT_EQ(series[n + 1][0], "Mere");
    for (int c = 0; c < 4; ++c) EXPECT_EQ(std::stod(series[n + 1][2 + c]), want[c][n]) << kSeriesFields[c] << " " << n;
  }
  // Times as in hydrographs.csv (same axis, same form).
  const auto hydrographs = readCsv(fs::path(r.outputs.csv_dir) / "hydrographs.csv");
  ASSERT_GT(hydrographs.size(), steps);
  for (std::size_t n = 0; n < steps; ++n) EXPECT_EQ(series[n + 1][1], hydrographs[n + 1][1]);
}

TEST(LakeOutputs, NetcdfSeriesFileHoldsTheLakeOnItsOwnDimension) {
  const testsupport::TempDir tmp;
  run::RouteRequest r = request(writeLake(tmp));
  r.outputs.gpkg = tmp.file("out.gpkg");
  r.outputs.series_nc = tmp.file("series.nc");
  r.outputs.hydrographs = "R1,R2";
  const run::RouteSummary s = run::route(r);
  const auto want = seriesOf(s);
  const std::size_t steps = s.results.axis.steps;

  int nc = 0, dim = 0, var = 0;
  ASSERT_EQ(nc_open(r.outputs.series_nc.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  std::size_t n_lake = 0;
  ASSERT_EQ(nc_inq_dimid(nc, "lake", &dim), NC_NOERR);
  nc_inq_dimlen(nc, dim, &n_lake);
  EXPECT_EQ(n_lake, 1u);
  ASSERT_EQ(nc_inq_varid(nc, "lake_id", &var), NC_NOERR);
  char* id = nullptr;
  ASSERT_EQ(nc_get_var_string(nc, var, &id), NC_NOERR);
  EXPECT_STREQ(id, "Mere");
  nc_free_string(1, &id);
  EXPECT_EQ(textAtt(nc, var, "cf_role"), "timeseries_id");
  int time_dim = 0;
  ASSERT_EQ(nc_inq_dimid(nc, "time", &time_dim), NC_NOERR);
  // CF-1.8 §3.1 and §3.2: every data variable has a UDUNITS `units` and a
  // `long_name`; §5 (`coordinates`) ties it to its lake_id; dimensions
  // (time, lake), time first (§2.4 recommends T first).
  const std::map<std::string, std::string> units = {
      {"lake_level", "m"}, {"lake_storage", "m3"}, {"lake_inflow", "m3 s-1"}, {"lake_outflow", "m3 s-1"}};
  const char* const names[] = {"lake_level", "lake_storage", "lake_inflow", "lake_outflow"};
  for (int c = 0; c < 4; ++c) {
    ASSERT_EQ(nc_inq_varid(nc, names[c], &var), NC_NOERR) << names[c];
    EXPECT_EQ(textAtt(nc, var, "units"), units.at(names[c])) << names[c];
    EXPECT_GT(textAtt(nc, var, "long_name").size(), 10u) << names[c];
    EXPECT_NE(textAtt(nc, var, "long_name"), "<missing>") << names[c];
    EXPECT_EQ(textAtt(nc, var, "coordinates"), "lake_id") << names[c];
    int ndims = 0, dims[2] = {-1, -1};
    ASSERT_EQ(nc_inq_varndims(nc, var, &ndims), NC_NOERR);
    ASSERT_EQ(ndims, 2);
    nc_inq_vardimid(nc, var, dims);
    EXPECT_EQ(dims[0], time_dim);
    EXPECT_EQ(dims[1], dim);
    std::vector<double> got(steps);
    ASSERT_EQ(nc_get_var_double(nc, var, got.data()), NC_NOERR);
    for (std::size_t n = 0; n < steps; ++n) EXPECT_EQ(got[n], want[c][n]) << names[c] << " " << n;
  }
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "Conventions"), "CF-1.8");
  nc_close(nc);

  // The series went to the NetCDF file: the GeoPackage's lake_series is
  // empty, as its hydrographs table is; the lakes layer is complete.
  auto ds = open(r.outputs.gpkg);
  ASSERT_TRUE(ds);
  ASSERT_NE(ds->GetLayerByName("lake_series"), nullptr);
  EXPECT_EQ(ds->GetLayerByName("lake_series")->GetFeatureCount(), 0);
  EXPECT_EQ(ds->GetLayerByName("lakes")->GetFeatureCount(), 1);

  // `--hydrographs none`: no series at all, lakes' neither (no lake dimension).
  r.outputs.series_nc.clear();
  r.outputs.gpkg = tmp.file("none.gpkg");
  r.outputs.hydrographs = "none";
  run::route(r);
  ds = open(r.outputs.gpkg);
  EXPECT_EQ(ds->GetLayerByName("lake_series")->GetFeatureCount(), 0);
  EXPECT_EQ(ds->GetLayerByName("lakes")->GetFeatureCount(), 1);
}

TEST(LakeOutputs, WriteBackAddsPrefixedLakeLayers) {
  const testsupport::TempDir tmp;
  const fs::path copy = tmp.path() / "net.gpkg";
  fs::copy_file(kSample + "network.gpkg", copy);
  run::RouteRequest r = request(writeLake(tmp));
  r.network.path = copy.string();
  r.outputs.write_back = true;
  const run::RouteSummary s = run::route(r);
  const auto want = seriesOf(s);
  {
    auto ds = open(copy);
    ASSERT_TRUE(ds);
    ASSERT_NE(ds->GetLayerByName("rw_lakes"), nullptr);
    EXPECT_EQ(ds->GetLayerByName("rw_lakes")->GetFeatureCount(), 1);
    EXPECT_EQ(ds->GetLayerByName("lakes"), nullptr) << "only prefixed layers are added";
    const auto got = seriesTable(*ds, "rw_lake_series", "Mere");
    for (int c = 0; c < 4; ++c) EXPECT_EQ(got[c], want[c]) << kSeriesFields[c];
  }
  // Kept unless overwriting is asked for; rewritten then.
  EXPECT_THROW(run::route(r), InputError);
  r.outputs.overwrite = true;
  EXPECT_NO_THROW(run::route(r));
  auto ds = open(copy);
  EXPECT_EQ(ds->GetLayerByName("rw_lakes")->GetFeatureCount(), 1);
  EXPECT_EQ(ds->GetLayerByName("rw_lake_series")->GetFeatureCount(), static_cast<GIntBig>(want[0].size()));
}

TEST(LakeOutputs, AnExistingLakeFileStopsTheRunBeforeAnyOutputIsLeft) {
  const testsupport::TempDir tmp;
  run::RouteRequest r = request(writeLake(tmp));
  r.outputs.gpkg = tmp.file("out.gpkg");
  r.outputs.csv_dir = tmp.file("csv");
  fs::create_directories(r.outputs.csv_dir);
  std::ofstream(fs::path(r.outputs.csv_dir) / "lake_series.csv") << "kept\n";
  try {
    run::route(r);
    ADD_FAILURE() << "an existing lake_series.csv was replaced";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("lake_series.csv"), std::string::npos) << e.what();
  }
  EXPECT_FALSE(fs::exists(r.outputs.gpkg));
  std::vector<std::string> left;
  for (const auto& e : fs::recursive_directory_iterator(tmp.path())) left.push_back(e.path().filename().string());
  std::sort(left.begin(), left.end());
  EXPECT_EQ(left, (std::vector<std::string>{"csv", "lake_series.csv", "lakes.geojson"}));
  std::ifstream kept(fs::path(r.outputs.csv_dir) / "lake_series.csv");
  std::string line;
  std::getline(kept, line);
  EXPECT_EQ(line, "kept");
}
