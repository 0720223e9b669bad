// End-to-end: `reachwise demo` on the shipped sample network, read back with GDAL.
#include <gtest/gtest.h>

#include <ogrsf_frmts.h>

#include <cstdlib>
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
