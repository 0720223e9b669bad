// End-to-end: `reachwise demo` on the shipped sample network, read back with GDAL.
#include <gtest/gtest.h>

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cstdlib>
#include <sstream>
#include <vector>
#include <filesystem>
#include <fstream>
#include <map>
#include <iterator>
#include <memory>
#include <string>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {
int run(const std::string& args) { return testsupport::runReachwise(args).code; }
}  // namespace

TEST(RouteCommand, DemoWritesGeoPackageWithTheContractLayers) {
  const testsupport::TempDir tmp;
  const fs::path dir = tmp.path() / "demo";
  ASSERT_EQ(run("demo --out " + dir.string()), 0);
  reachwise::io::ensureGdal();
  const fs::path gpkg = dir / "demo-results.gpkg";
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR));
  ASSERT_TRUE(ds);
  EXPECT_TRUE(fs::exists(dir / "report" / "index.html"));  // the demo writes its run report too
  for (const char* name : {"reaches", "nodes", "hydrographs", "run_info", "confluence_branches"})
    EXPECT_NE(ds->GetLayerByName(name), nullptr) << name;
  OGRLayer* reaches = ds->GetLayerByName("reaches");
  ASSERT_NE(reaches, nullptr);
  for (const char* f : {"reach_id", "peak_q", "peak_time", "peak_depth", "peak_velocity", "volume_error_pct",
                        "subreaches", "substeps", "courant", "x"})
    EXPECT_GE(reaches->GetLayerDefn()->GetFieldIndex(f), 0) << f;
  // Same CRS as the input layer (docs/formats.md, "Layers and tables": reaches in the input CRS).
  std::unique_ptr<GDALDataset> in(GDALDataset::Open(REACHWISE_SOURCE_DIR "/sample-network/network.gpkg", GDAL_OF_VECTOR));
  ASSERT_TRUE(in);
  EXPECT_TRUE(reaches->GetSpatialRef()->IsSame(in->GetLayer(0)->GetSpatialRef()));
  EXPECT_EQ(reaches->GetFeatureCount(), in->GetLayer(0)->GetFeatureCount());
  // Every routed peak is positive and the variable-parameter volume error
  // stays below 1 %, the bound the project holds `vpmc` to (docs/methods.md §4, "Volume balance").
  for (auto& f : *reaches) {
    EXPECT_GT(f->GetFieldAsDouble("peak_q"), 0.0);
    EXPECT_LT(std::abs(f->GetFieldAsDouble("volume_error_pct")), 1.0);
  }
  // The demo routes through the sample's reservoir RES1, whose outflow
  // enters R13 (sample-network/README.md), and the report shows it.
  OGRLayer* lakes = ds->GetLayerByName("lakes");
  ASSERT_NE(lakes, nullptr);
  ASSERT_EQ(lakes->GetFeatureCount(), 1);
  std::unique_ptr<OGRFeature> lake(lakes->GetNextFeature());
  EXPECT_STREQ(lake->GetFieldAsString("lake_id"), "RES1");
  EXPECT_STREQ(lake->GetFieldAsString("reach_id"), "R13");
  EXPECT_TRUE(fs::exists(dir / "report" / "lake-1.svg"));
  // The demo compares the run with its three invented gauges
  // (sample-network/make_observed.sh), each on the reach it names.
  OGRLayer* gauges = ds->GetLayerByName("gauges");
  ASSERT_NE(gauges, nullptr);
  std::map<std::string, std::string> on;
  for (auto& g : *gauges) on[g->GetFieldAsString("gauge_id")] = g->GetFieldAsString("reach_id");
  EXPECT_EQ(on, (std::map<std::string, std::string>{{"G1-outlet", "R1"}, {"G2-below-dam", "R13"}, {"G3-upper", "R5"}}));
  std::ifstream page(dir / "report" / "index.html");
  const std::string html((std::istreambuf_iterator<char>(page)), std::istreambuf_iterator<char>());
  EXPECT_NE(html.find("<table id=\"lakes\">"), std::string::npos);
}

TEST(RouteCommand, BadForcingLeavesNoOutput) {
  const testsupport::TempDir tmp;
  const fs::path& dir = tmp.path();
  {
    FILE* f = std::fopen((dir / "in.csv").c_str(), "w");
    std::fputs("reach_id,time,discharge\nR12,2026-05-01T00:00:00Z,1\nNOPE,2026-05-01T01:00:00Z,2\n", f);
    std::fclose(f);
  }
  const std::string out = (dir / "out.gpkg").string();
  EXPECT_EQ(run("route " REACHWISE_SOURCE_DIR "/sample-network/network.gpkg --inflow " +
                (dir / "in.csv").string() + " --out " + out),
            1);
  EXPECT_FALSE(fs::exists(out));
  for (const auto& e : fs::directory_iterator(dir)) EXPECT_EQ(e.path().extension(), ".csv") << e.path();
}

// The console summary of `route` on a network of 14 basins whose 200
// reaches all carry an implausible Manning's n (0.35, above the 0.3 the
// check warns at): the outlets largest peak first, ten by name then a
// count; the warnings grouped by kind (200 lines of one kind become a count
// and one example), and every one kept in run_info. The outlet peaks are
// checked against the nodes layer the same run wrote.
TEST(RouteCommand, SummaryRanksOutletsAndGroupsWarningsByKind) {
  testsupport::TempDir dir;
  const fs::path net = dir.path() / "net.gpkg", lat = dir.path() / "lat.nc", out = dir.path() / "out.gpkg";
  ASSERT_EQ(run("synth " + net.string() + " --reaches 200 --outlets 14 --steps 48 --quiet --lateral " + lat.string()), 0);
  {
    reachwise::io::ensureGdal();
    GDALDatasetUniquePtr ds(GDALDataset::Open(net.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
    ASSERT_TRUE(ds);
    ds->ExecuteSQL("UPDATE reaches SET manning_n = 0.35", nullptr, nullptr);
  }
  const auto r = testsupport::runReachwise("route " + net.string() + " --lateral " + lat.string() + " --out " +
                                           out.string());
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("outlets: 14, largest peak first:"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("... and 4 more outlet(s)"), std::string::npos) << r.out;
  // The listed peaks, in order.
  std::vector<double> listed;
  std::istringstream lines(r.out);
  for (std::string line; std::getline(lines, line);)
    if (line.rfind("  outlet ", 0) == 0) listed.push_back(std::stod(line.substr(line.find("peak ") + 5)));
  ASSERT_EQ(listed.size(), 10u);
  EXPECT_TRUE(std::is_sorted(listed.rbegin(), listed.rend()));
  std::vector<double> outlet_peaks;
  {
    GDALDatasetUniquePtr ds(GDALDataset::Open(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    ASSERT_TRUE(ds);
    for (auto& f : *ds->GetLayerByName("nodes"))
      if (std::string(f->GetFieldAsString("kind")) == "outlet") outlet_peaks.push_back(f->GetFieldAsDouble("peak_q"));
    std::size_t kept = 0;
    for (auto& f : *ds->GetLayerByName("run_info"))
      if (std::string(f->GetFieldAsString("key")) == "warning" &&
          std::string(f->GetFieldAsString("value")).rfind("implausible_attribute ", 0) == 0)
        ++kept;
    EXPECT_EQ(kept, 200u);  // every warning stays in run_info
  }
  ASSERT_EQ(outlet_peaks.size(), 14u);
  std::sort(outlet_peaks.rbegin(), outlet_peaks.rend());
  for (std::size_t k = 0; k < 10; ++k) EXPECT_NEAR(listed[k], outlet_peaks[k], 0.006) << k;  // printed to 2 decimals
  EXPECT_NE(r.err.find("warning: 200 x implausible_attribute, e.g.:"), std::string::npos) << r.err;
  const auto warning_lines = static_cast<std::size_t>(std::count(r.err.begin(), r.err.end(), '\n'));
  EXPECT_LT(warning_lines, 10u) << r.err;
}

// `reachwise` with no command prints the help on stderr and exits 2 (a
// usage error, common practice for command-line tools).
TEST(RouteCommand, NoCommandPrintsTheHelpAndExitsTwo) {
  const auto r = testsupport::runReachwise("");
  EXPECT_EQ(r.code, 2);
  EXPECT_NE(r.err.find("Subcommands:"), std::string::npos) << r.err;
}
