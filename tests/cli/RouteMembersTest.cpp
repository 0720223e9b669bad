// `reachwise route --members` and the run-file key `members`: a forecast
// ensemble written to a GeoPackage, CSV files and a report; bad members
// refused with exit status 1, the file named and no output left.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <string>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Members.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kValidator = "/usr/lib/python3/dist-packages/osgeo_utils/samples/validate_gpkg.py";

/// Members: the sample inflow times each factor, as `members/f<k>.csv`.
void writeMembers(const fs::path& dir, const std::vector<double>& factors) {
  testsupport::writeScaledMembers(dir / "members", factors, "f");
}

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

}  // namespace

TEST(RouteMembers, RunFileKeyWritesPercentilesMembersAndReport) {
  testsupport::TempDir dir;
  writeMembers(dir.path(), {0.8, 1.0, 1.3, 0.9});
  std::ofstream(dir.path() / "run.toml") << "[route]\nmembers = \"members/f*.csv\"\nlateral = \"" << kSample
                                         << "lateral.csv\"\n";
  const fs::path out = dir.path() / "out.gpkg";
  const auto run = testsupport::runReachwise("route " + kSample + "network.gpkg --lakes " + kSample +
                                             "lakes.gpkg --config " + (dir.path() / "run.toml").string() +
                                             " --out " + out.string() + " --csv " + (dir.path() / "csv").string() +
                                             " --report " + (dir.path() / "report").string() + " --threads 2");
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_TRUE(contains(run.out, "routed 4 members")) << run.out;

  reachwise::io::ensureGdal();
  GDALDatasetUniquePtr ds(GDALDataset::Open(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* reaches = ds->GetLayerByName("reaches");
  ASSERT_TRUE(reaches);
  const auto n_reaches = reaches->GetFeatureCount();
  ASSERT_GT(n_reaches, 0);
  for (auto& f : *reaches) {
    // Percentiles are ordered (p10 <= p50 <= p90, a property of any
    // quantile function) and the peak of the reference member f0 (0.8 ×)
    // lies within the members' range.
    const double p10 = f->GetFieldAsDouble("peak_q_p10"), p50 = f->GetFieldAsDouble("peak_q_p50"),
                 p90 = f->GetFieldAsDouble("peak_q_p90");
    EXPECT_LE(p10, p50);
    EXPECT_LE(p50, p90);
    EXPECT_LT(p10, p90) << f->GetFieldAsString("reach_id") << ": members differ, so must the percentiles";
    EXPECT_EQ(f->GetFieldAsInteger("members"), 4);
    EXPECT_FALSE(f->IsFieldNull(f->GetFieldIndex("peak_time_p50")));
  }
  OGRLayer* members = ds->GetLayerByName("member_reaches");
  ASSERT_TRUE(members);
  EXPECT_EQ(members->GetFeatureCount(), 4 * n_reaches);
  std::set<std::string> names;
  for (auto& f : *members) names.insert(f->GetFieldAsString("member"));
  EXPECT_EQ(names, (std::set<std::string>{"f0", "f1", "f2", "f3"}));
  OGRLayer* hydrographs = ds->GetLayerByName("hydrographs");
  ASSERT_TRUE(hydrographs);
  ASSERT_EQ(hydrographs->GetLayerDefn()->GetFieldIndex("member"), 0);
  // Every member's rows: the sample writes every reach (`auto` below 10,000 reaches).
  EXPECT_EQ(hydrographs->GetFeatureCount() % 4, 0);
  std::map<std::string, std::string> info;
  OGRLayer* run_info = ds->GetLayerByName("run_info");
  std::string member_rows;
  for (auto& f : *run_info) {
    info[f->GetFieldAsString(0)] = f->GetFieldAsString(1);
    if (std::string(f->GetFieldAsString(0)) == "member") member_rows += std::string(f->GetFieldAsString(1)) + ";";
  }
  EXPECT_EQ(info["members"], "4");
  EXPECT_EQ(member_rows, "f0;f1;f2;f3;");
  // The new columns are described with their units (gpkg_data_columns).
  OGRLayer* titles = ds->ExecuteSQL(
      "SELECT table_name || '.' || column_name, title FROM gpkg_data_columns WHERE column_name LIKE 'peak_q_p%' "
      "OR table_name = 'member_reaches'",
      nullptr, nullptr);
  ASSERT_TRUE(titles);
  std::map<std::string, std::string> described;
  for (auto& f : *titles) described[f->GetFieldAsString(0)] = f->GetFieldAsString(1);
  ds->ReleaseResultSet(titles);
  EXPECT_EQ(described["reaches.peak_q_p90"], "members' peak discharge, 90th percentile (m³/s)");
  EXPECT_EQ(described["member_reaches.member"], "ensemble member");
  EXPECT_EQ(described["member_reaches.peak_q"], "peak discharge (m³/s)");
  ds.reset();
  ASSERT_TRUE(fs::exists(kValidator)) << "GDAL's GeoPackage validator is missing (apt package python3-gdal)";
  const int valid = std::system(("/usr/bin/python3 " + kValidator + " " + out.string() + " > " +
                                 (dir.path() / "validator.log").string() + " 2>&1").c_str());
  EXPECT_EQ(valid, 0) << testsupport::slurp(dir.path() / "validator.log");

  EXPECT_TRUE(fs::exists(dir.path() / "csv/member_reaches.csv"));
  const std::string page = testsupport::slurp(dir.path() / "report/index.html");
  EXPECT_TRUE(contains(page, "4 members; maps, tables and panels show member f0")) << "no ensemble row";
  const std::string outlet = testsupport::slurp(dir.path() / "report/outlet-1.svg");
  EXPECT_FALSE(outlet.empty());
}

TEST(RouteMembers, BadMemberExitsOneNamingTheFileAndLeavesNothing) {
  testsupport::TempDir dir;
  writeMembers(dir.path(), {1.0, 1.2});
  const fs::path bad = dir.path() / "members/f1.csv";
  std::ofstream(bad, std::ios::app) << "2026-05-14T06:00:00+01:00,oops\n";
  const auto run = testsupport::runReachwise("route " + kSample + "network.gpkg --members " +
                                             (dir.path() / "members").string() + " --out " +
                                             (dir.path() / "out.gpkg").string() + " --csv " +
                                             (dir.path() / "csv").string() + " --quiet");
  EXPECT_EQ(run.code, 1) << run.out;
  EXPECT_TRUE(contains(run.err, bad.string())) << run.err;
  EXPECT_FALSE(fs::exists(dir.path() / "out.gpkg"));
  EXPECT_FALSE(fs::exists(dir.path() / "csv"));
}

TEST(RouteMembers, NoMatchAndSeriesAreRefused) {
  testsupport::TempDir dir;
  const std::string pattern = (dir.path() / "none-*.csv").string();
  auto run = testsupport::runReachwise("route " + kSample + "network.gpkg --members " +
                                       testsupport::shellQuoted(pattern) + " --out " +
                                       (dir.path() / "out.gpkg").string() + " --quiet");
  EXPECT_EQ(run.code, 1);
  EXPECT_TRUE(contains(run.err, pattern)) << run.err;
  writeMembers(dir.path(), {1.0});
  run = testsupport::runReachwise("route " + kSample + "network.gpkg --members " + (dir.path() / "members").string() +
                                  " --series " + (dir.path() / "s.nc").string() + " --out " +
                                  (dir.path() / "out.gpkg").string() + " --quiet");
  EXPECT_EQ(run.code, 1);
  EXPECT_TRUE(contains(run.err, "--series")) << run.err;
  EXPECT_FALSE(fs::exists(dir.path() / "out.gpkg"));
  EXPECT_FALSE(fs::exists(dir.path() / "s.nc"));
}
