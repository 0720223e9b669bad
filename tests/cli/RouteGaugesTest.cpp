// `reachwise route --observed [--gauges]`: gauge records compared with the
// run. The observations are the run's own hydrographs scaled by 1.25, so the
// scores follow from the definitions (docs/methods.md §10): r = 1,
// α = β = 1/1.25 = 0.8, KGE = 1 − √(2 × 0.2²), percent bias −20 %, peak error
// −20 %, timing 0, and the skipped (NA) samples are not counted.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Observed.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kForcing = " --inflow " + kSample + "inflow.csv --lateral " + kSample + "lateral.csv";

/// hydrographs.csv as observations × 1.25, every seventh value NA, keyed by
/// `key` in place of the reach id when given.
std::size_t writeObserved(const fs::path& hydrographs, const fs::path& out, const std::string& key = {}) {
  return testsupport::writeObserved(hydrographs, out, [](const std::string&) { return 1.25; }, 7, key);
}

}  // namespace

TEST(RouteGauges, ScoresFollowFromTheDefinitions) {
  testsupport::TempDir dir;
  const auto first = testsupport::routeSampleHydrographs(dir.path(), "R13");
  ASSERT_EQ(first.code, 0) << first.err;
  const std::size_t present = writeObserved(dir.path() / "csv" / "hydrographs.csv", dir.path() / "obs.csv");
  const std::string gpkg = (dir.path() / "b.gpkg").string();
  const auto run = testsupport::runReachwise("route " + kSample + "network.gpkg" + kForcing + " --out " + gpkg +
                                             " --observed " + (dir.path() / "obs.csv").string());
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_NE(run.out.find("gauges: 1 compared"), std::string::npos) << run.out;
  EXPECT_NE(run.out.find("gauge R13 on R13: NSE"), std::string::npos) << run.out;
  EXPECT_NE(run.out.find("bias -20.0 %"), std::string::npos) << run.out;

  reachwise::io::ensureGdal();
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* gauges = ds->GetLayerByName("gauges");
  ASSERT_NE(gauges, nullptr);
  ASSERT_EQ(gauges->GetFeatureCount(), 1);
  std::unique_ptr<OGRFeature> f(gauges->GetNextFeature());
  EXPECT_STREQ(f->GetFieldAsString("reach_id"), "R13");
  // Observations were written with 6 decimals (std::to_string): 1e-6 relative.
  EXPECT_NEAR(f->GetFieldAsDouble("kge_r"), 1.0, 1e-6);
  EXPECT_NEAR(f->GetFieldAsDouble("kge_alpha"), 0.8, 1e-5);
  EXPECT_NEAR(f->GetFieldAsDouble("kge_beta"), 0.8, 1e-5);
  EXPECT_NEAR(f->GetFieldAsDouble("kge"), 1 - std::sqrt(2 * 0.04), 1e-5);
  EXPECT_NEAR(f->GetFieldAsDouble("pbias_pct"), -20.0, 1e-3);
  EXPECT_NEAR(f->GetFieldAsDouble("peak_error_pct"), -20.0, 1e-3);
  EXPECT_NEAR(f->GetFieldAsDouble("peak_timing_h"), 0.0, 1e-12);
  EXPECT_EQ(f->GetFieldAsInteger64("n_obs"), static_cast<GIntBig>(present));
  EXPECT_TRUE(f->IsFieldNull(f->GetFieldIndex("snap_distance_m")));
  OGRLayer* series = ds->GetLayerByName("gauge_series");
  ASSERT_NE(series, nullptr);
  std::unique_ptr<OGRLayer, void (*)(OGRLayer*)> counted(
      ds->ExecuteSQL("SELECT count(*), count(observed_q), count(simulated_q) FROM gauge_series", nullptr, nullptr),
      [](OGRLayer*) {});
  ASSERT_NE(counted, nullptr);
  std::unique_ptr<OGRFeature> c(counted->GetNextFeature());
  EXPECT_EQ(c->GetFieldAsInteger64(1), static_cast<GIntBig>(present));
  EXPECT_EQ(c->GetFieldAsInteger64(0), c->GetFieldAsInteger64(2));
  ds->ReleaseResultSet(counted.release());
}

TEST(RouteGauges, AGaugeLayerIsSnappedAndUnknownIdsAreRefused) {
  testsupport::TempDir dir;
  const auto first = testsupport::routeSampleHydrographs(dir.path(), "R13");
  ASSERT_EQ(first.code, 0) << first.err;
  writeObserved(dir.path() / "csv" / "hydrographs.csv", dir.path() / "obs.csv", "Weir-A");

  // The gauge 20 m east of R13's downstream end (from the first run's nodes).
  reachwise::io::ensureGdal();
  double x = 0, y = 0;
  {
    GDALDatasetUniquePtr a(GDALDataset::Open((dir.path() / "a.gpkg").c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    OGRLayer* reaches = a->GetLayerByName("reaches");
    reaches->SetAttributeFilter("reach_id = 'R13'");
    std::unique_ptr<OGRFeature> r(reaches->GetNextFeature());
    ASSERT_TRUE(r);
    const OGRLineString* line = r->GetGeometryRef()->toLineString();
    x = line->getX(line->getNumPoints() - 1) + 20;  // the reaches layer is drawn with the flow
    y = line->getY(line->getNumPoints() - 1);
    GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
    GDALDatasetUniquePtr g(driver->Create((dir.path() / "gauges.gpkg").c_str(), 0, 0, 0, GDT_Unknown, nullptr));
    OGRLayer* layer = g->CreateLayer("gauges", reaches->GetSpatialRef(), wkbPoint, nullptr);
    OGRFieldDefn id("gauge_id", OFTString);
    layer->CreateField(&id);
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("gauge_id", "Weir-A");
    OGRPoint p(x, y);
    f.SetGeometry(&p);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
  const std::string gpkg = (dir.path() / "b.gpkg").string();
  const auto run = testsupport::runReachwise("route " + kSample + "network.gpkg" + kForcing + " --out " + gpkg +
                                             " --observed " + (dir.path() / "obs.csv").string() + " --gauges " +
                                             (dir.path() / "gauges.gpkg").string() + " --gauge-snap 50");
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_NE(run.out.find("gauge Weir-A on R13"), std::string::npos) << run.out;
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  std::unique_ptr<OGRFeature> f(ds->GetLayerByName("gauges")->GetNextFeature());
  ASSERT_TRUE(f);
  // At most 20 m: the gauge may be nearer another part of the line.
  EXPECT_LE(f->GetFieldAsDouble("snap_distance_m"), 20.0 + 1e-6);
  EXPECT_NEAR(f->GetFieldAsDouble("kge_beta"), 0.8, 1e-5);

  // Observed ids that are no gauge: refused, naming the file and the ids; no output.
  std::ofstream(dir.path() / "bad.csv") << "time,Weir-A,Nowhere\n2026-05-14T06:00:00+01:00,1,2\n";
  const std::string none = (dir.path() / "c.gpkg").string();
  const auto bad = testsupport::runReachwise("route " + kSample + "network.gpkg" + kForcing + " --out " + none +
                                             " --observed " + (dir.path() / "bad.csv").string() + " --gauges " +
                                             (dir.path() / "gauges.gpkg").string());
  EXPECT_NE(bad.code, 0);
  EXPECT_NE(bad.err.find("bad.csv"), std::string::npos) << bad.err;
  EXPECT_NE(bad.err.find("Nowhere"), std::string::npos) << bad.err;
  EXPECT_FALSE(fs::exists(none));
}
