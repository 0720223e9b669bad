// `reachwise route` options end to end on the shipped sample network: the
// forcing formats, the hydrograph selection, NetCDF series, base flow,
// write-back re-runs and the errors for bad forcing.
#include <gtest/gtest.h>

#include <netcdf.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <string>

#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"
#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kNetwork = kSample + "network.gpkg";
const std::string kStorm = " --inflow " + kSample + "inflow.csv --lateral " + kSample + "lateral.csv";

using Outcome = testsupport::CliRun;

Outcome run(const std::string& args) { return testsupport::runReachwise(args); }

void writeText(const fs::path& p, const std::string& text) { std::ofstream(p) << text; }

std::unique_ptr<GDALDataset> open(const fs::path& p) {
  reachwise::io::ensureGdal();
  return std::unique_ptr<GDALDataset>(GDALDataset::Open(p.c_str(), GDAL_OF_VECTOR));
}

/// reach_id -> q series from the `hydrographs` table, in time order.
std::map<std::string, std::vector<double>> hydrographs(const fs::path& gpkg) {
  auto ds = open(gpkg);
  std::map<std::string, std::vector<double>> q;
  if (!ds) return q;
  OGRLayer* h = ds->ExecuteSQL("SELECT reach_id, q FROM hydrographs ORDER BY reach_id, time", nullptr, nullptr);
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

}  // namespace

TEST(RouteOptions, HydrographSelection) {
  const testsupport::TempDir tmp;
  const std::string out = tmp.file("o.gpkg");
  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + out + " --hydrographs outlets").code, 0);
  auto q = hydrographs(out);
  ASSERT_EQ(q.size(), 1u);  // the sample network drains to one outlet, R1
  EXPECT_EQ(q.begin()->first, "R1");
  EXPECT_EQ(q.begin()->second.size(), 145u);  // 72 h at 30 min (sample-network/README.md)

  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + out + " --overwrite --hydrographs R12,R16").code, 0);
  q = hydrographs(out);
  ASSERT_EQ(q.size(), 2u);
  EXPECT_TRUE(q.count("R12") && q.count("R16"));

  // Every branch meeting at a confluence; with `none` the table is empty.
  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + out + " --overwrite --hydrographs confluences").code, 0);
  q = hydrographs(out);
  EXPECT_GE(q.size(), 2u);
  EXPECT_FALSE(q.count("R1"));
  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + out + " --overwrite --hydrographs none").code, 0);
  EXPECT_TRUE(hydrographs(out).empty());

  const Outcome bad = run("route " + kNetwork + kStorm + " --out " + tmp.file("b.gpkg") + " --hydrographs R1,NOPE,ALSO");
  EXPECT_EQ(bad.code, 1);
  EXPECT_NE(bad.err.find("NOPE, ALSO"), std::string::npos) << bad.err;
  EXPECT_FALSE(fs::exists(tmp.file("b.gpkg")));
}

TEST(RouteOptions, AutoSelectionStaysBoundedOnALargeNetwork) {
  // 12,000 reaches: above the 10,000 where `auto` stops writing every reach.
  const testsupport::TempDir tmp;
  const std::string net = tmp.file("net.gpkg"), lat = tmp.file("lat.nc"), out = tmp.file("o.gpkg");
  ASSERT_EQ(run("synth " + net + " --reaches 12000 --outlets 2 --steps 4 --lateral " + lat).code, 0);
  const Outcome r = run("route " + net + " --lateral " + lat + " --out " + out);
  ASSERT_EQ(r.code, 0) << r.err;
  auto ds = open(out);
  ASSERT_TRUE(ds);
  OGRLayer* h = ds->ExecuteSQL("SELECT COUNT(DISTINCT reach_id) FROM hydrographs", nullptr, nullptr);
  const auto written = h->GetNextFeature()->GetFieldAsInteger64(0);
  ds->ReleaseResultSet(h);
  // Both outlets, and the branches of at most 1,000 confluences (two or
  // three each in a synthetic tree): far fewer than the 12,000 reaches.
  EXPECT_GE(written, 2 + 2 * 1000);
  EXPECT_LE(written, 2 + 3 * 1000);
  OGRLayer* outlets = ds->ExecuteSQL(
      "SELECT COUNT(*) FROM nodes WHERE kind = 'outlet' AND substr(node_id, 3) IN (SELECT reach_id FROM hydrographs)",
      nullptr, nullptr);
  EXPECT_EQ(outlets->GetNextFeature()->GetFieldAsInteger64(0), 2);
  ds->ReleaseResultSet(outlets);
}

TEST(RouteOptions, LargeLayersWithABackgroundSpatialIndexStillCommit) {
  // GDAL builds the R-tree of a GeoPackage layer of 100,000 features or more
  // in a background thread when allowed (the writer turns it off unless the
  // user allows it, as here); this GDAL setting starts that at the first
  // feature, so the sample network takes the same path as a national one.
  ASSERT_EQ(setenv("OGR_GPKG_ALLOW_THREADED_RTREE", "YES", 1), 0);
  ASSERT_EQ(setenv("OGR_GPKG_THREADED_RTREE_AT_FIRST_FEATURE", "YES", 1), 0);
  const testsupport::TempDir tmp;
  const Outcome r = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg"));
  unsetenv("OGR_GPKG_THREADED_RTREE_AT_FIRST_FEATURE");
  unsetenv("OGR_GPKG_ALLOW_THREADED_RTREE");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(peaks(tmp.file("o.gpkg")).size(), 41u);
}

TEST(RouteOptions, NetcdfForcingGivesTheSameRunAsCsv) {
  const testsupport::TempDir tmp;
  reachwise::io::Forcing lateral = reachwise::io::readForcingCsv(std::nullopt, fs::path(kSample + "lateral.csv"));
  reachwise::io::writeForcingNetcdf(tmp.path() / "lateral.nc", lateral);
  const std::string csv_out = tmp.file("csv.gpkg"), nc_out = tmp.file("nc.gpkg");
  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + csv_out).code, 0);
  const Outcome nc = run("route " + kNetwork + " --inflow " + kSample + "inflow.csv --lateral " +
                         tmp.file("lateral.nc") + " --out " + nc_out);
  ASSERT_EQ(nc.code, 0) << nc.err;
  const auto a = peaks(csv_out), b = peaks(nc_out);
  ASSERT_EQ(a.size(), 41u);
  ASSERT_EQ(b.size(), a.size());
  for (const auto& [id, q] : a) EXPECT_NEAR(b.at(id), q, 1e-9 * q) << id;

  // A NetCDF file without the variable of its kind is refused by name.
  const Outcome wrong = run("route " + kNetwork + " --inflow " + tmp.file("lateral.nc") + " --out " + tmp.file("w.gpkg"));
  EXPECT_EQ(wrong.code, 1);
  EXPECT_NE(wrong.err.find("no `inflow` variable"), std::string::npos) << wrong.err;
  // NetCDF forcing is not resampled.
  const Outcome dt = run("route " + kNetwork + " --lateral " + tmp.file("lateral.nc") + " --dt 600 --out " +
                         tmp.file("w.gpkg"));
  EXPECT_EQ(dt.code, 1);
  EXPECT_NE(dt.err.find("not resampled"), std::string::npos) << dt.err;
  EXPECT_FALSE(fs::exists(tmp.file("w.gpkg")));
}

TEST(RouteOptions, SeriesGoToNetcdfInsteadOfTheTable) {
  const testsupport::TempDir tmp;
  const std::string ref = tmp.file("ref.gpkg"), out = tmp.file("o.gpkg"), nc = tmp.file("s.nc");
  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + ref + " --hydrographs R1,R12").code, 0);
  const Outcome r = run("route " + kNetwork + kStorm + " --out " + out + " --hydrographs R1,R12 --series " + nc);
  ASSERT_EQ(r.code, 0) << r.err;
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
  // An existing series file is kept unless --overwrite.
  EXPECT_EQ(run("route " + kNetwork + kStorm + " --out " + tmp.file("p.gpkg") + " --series " + nc).code, 1);
  EXPECT_FALSE(fs::exists(tmp.file("p.gpkg")));
}

TEST(RouteOptions, BaseFlowAccumulatesToASteadyOutletFlow) {
  // With only a base flow, every reach carries the base flows of all reaches
  // above it, at every step: the steady state of mass conservation
  // (continuity, common practice). 41 reaches × 0.5 m3/s at the outlet.
  const testsupport::TempDir tmp;
  writeText(tmp.path() / "run.toml", "[network.fields]\nbase_flow = { default = 0.5 }\n");
  writeText(tmp.path() / "in.csv",
            "reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,0\nR12,2026-05-01T12:00:00Z,0\n");
  const std::string out = tmp.file("o.gpkg");
  const Outcome r = run("route " + kNetwork + " --config " + tmp.file("run.toml") + " --inflow " +
                        tmp.file("in.csv") + " --dt 1800 --out " + out + " --hydrographs outlets");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto q = hydrographs(out);
  ASSERT_EQ(q.count("R1"), 1u);
  ASSERT_EQ(q.at("R1").size(), 25u);
  for (double v : q.at("R1")) EXPECT_NEAR(v, 41 * 0.5, 1e-9);

  writeText(tmp.path() / "neg.toml", "[network.fields]\nbase_flow = { default = -1 }\n");
  const Outcome neg = run("route " + kNetwork + " --config " + tmp.file("neg.toml") + " --inflow " +
                          tmp.file("in.csv") + " --out " + tmp.file("n.gpkg"));
  EXPECT_EQ(neg.code, 1);
  EXPECT_NE(neg.err.find("base_flow"), std::string::npos) << neg.err;
}

TEST(RouteOptions, WriteBackRunsAgainOnTheSameFile) {
  const testsupport::TempDir tmp;
  const fs::path copy = tmp.path() / "net.gpkg";
  fs::copy_file(kNetwork, copy);
  ASSERT_EQ(run("route " + copy.string() + kStorm + " --write-back").code, 0);
  // The written-back results layer is not taken for a second network layer.
  const Outcome again = run("route " + copy.string() + kStorm + " --write-back");
  EXPECT_EQ(again.code, 1);
  EXPECT_NE(again.err.find("--overwrite"), std::string::npos) << again.err;
  const Outcome replaced = run("route " + copy.string() + kStorm + " --write-back --overwrite");
  EXPECT_EQ(replaced.code, 0) << replaced.err;
  EXPECT_EQ(peaks(copy, "rw_reaches").size(), 41u);
  EXPECT_EQ(run("check " + copy.string()).code, 0);
}

TEST(RouteOptions, QuietPrintsNothingAndForcingIsRequired) {
  const testsupport::TempDir tmp;
  const Outcome q = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --quiet");
  EXPECT_EQ(q.code, 0);
  EXPECT_EQ(q.out, "");
  EXPECT_EQ(q.err, "");
  const Outcome loud = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --overwrite");
  EXPECT_NE(loud.out.find("cell updates/s"), std::string::npos) << loud.out;
  EXPECT_EQ(run("route " + kNetwork + " --out " + tmp.file("x.gpkg")).code, 2);  // usage: no forcing
}

TEST(RouteOptions, RunFileHoldsTheOptionsAndFlagsWin) {
  const testsupport::TempDir tmp;
  writeText(tmp.path() / "run.toml", "[route]\ninflow = \"" + kSample + "inflow.csv\"\nlateral = \"" + kSample +
                                         "lateral.csv\"\nout = \"from-file.gpkg\"\nhydrographs = \"outlets\"\n");
  const Outcome r = run("route " + kNetwork + " --config " + tmp.file("run.toml") + " --hydrographs R12");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto q = hydrographs(tmp.path() / "from-file.gpkg");  // out relative to the run file
  ASSERT_EQ(q.size(), 1u);
  EXPECT_EQ(q.begin()->first, "R12");  // the flag overrides the file
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
  const Outcome r = run("route " + kNetwork + " --inflow " + tmp.file("in.csv") + " --out " +
                        (out_dir / "o.gpkg").string() + " --csv " + (out_dir / "tables").string());
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("in.csv"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find(GetParam().expected), std::string::npos) << r.err;
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
