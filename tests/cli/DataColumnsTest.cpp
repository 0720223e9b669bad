// The results GeoPackage describes its columns for a GIS through the
// GeoPackage schema extension (gpkg_data_columns; OGC GeoPackage 1.3,
// Annex F.9): every column of every result table and layer has a title
// with its unit, in a new output and in write-back alike, and GDAL's own
// GeoPackage validator (validate_gpkg.py from python3-gdal, a reference
// outside the project) accepts the file.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <filesystem>
#include <map>
#include <set>
#include <string>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kValidator = "/usr/lib/python3/dist-packages/osgeo_utils/samples/validate_gpkg.py";

/// table -> column -> title, as gpkg_data_columns holds them.
std::map<std::string, std::map<std::string, std::string>> titles(GDALDataset& ds) {
  std::map<std::string, std::map<std::string, std::string>> out;
  OGRLayer* rows = ds.ExecuteSQL("SELECT table_name, column_name, title FROM gpkg_data_columns", nullptr, nullptr);
  if (!rows) return out;
  for (auto& f : *rows) out[f->GetFieldAsString(0)][f->GetFieldAsString(1)] = f->GetFieldAsString(2);
  ds.ReleaseResultSet(rows);
  return out;
}

void expectEveryColumnDescribed(const fs::path& file, const std::string& prefix) {
  reachwise::io::ensureGdal();
  GDALDatasetUniquePtr ds(GDALDataset::Open(file.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  const auto described = titles(*ds);
  std::size_t tables = 0;
  for (const std::string t : {"reaches", "nodes", "confluence_branches", "hydrographs", "run_info", "lakes",
                              "lake_series", "gauges", "gauge_series"}) {
    OGRLayer* layer = ds->GetLayerByName((prefix + t).c_str());
    ASSERT_TRUE(layer) << prefix + t;
    ++tables;
    const auto it = described.find(prefix + t);
    ASSERT_NE(it, described.end()) << prefix + t << " has no column descriptions";
    OGRFeatureDefn* defn = layer->GetLayerDefn();
    for (int i = 0; i < defn->GetFieldCount(); ++i) {
      const std::string column = defn->GetFieldDefn(i)->GetNameRef();
      const auto c = it->second.find(column);
      ASSERT_NE(c, it->second.end()) << prefix + t << "." << column << " is not described";
      EXPECT_FALSE(c->second.empty()) << prefix + t << "." << column;
    }
  }
  EXPECT_EQ(tables, 9u);
  // Units in the titles (an SI network: SI outputs by default, docs/formats.md "Output units").
  EXPECT_EQ(described.at(prefix + "reaches").at("peak_q"), "peak discharge (m³/s)");
  EXPECT_EQ(described.at(prefix + "reaches").at("peak_depth"), "peak depth (m)");
}

std::string demoArgs() {
  return kSample + "network.gpkg --inflow " + kSample + "inflow.csv --lateral " + kSample + "lateral.csv --lakes " +
         kSample + "lakes.gpkg --observed " + kSample + "observed.csv --gauges " + kSample + "gauges.gpkg";
}

}  // namespace

TEST(DataColumns, EveryResultColumnHasATitleAndTheValidatorAccepts) {
  testsupport::TempDir dir;
  const fs::path out = dir.path() / "out.gpkg";
  const auto run = testsupport::runReachwise("route " + demoArgs() + " --out " + out.string() + " --quiet");
  ASSERT_EQ(run.code, 0) << run.err;
  expectEveryColumnDescribed(out, "");
  ASSERT_TRUE(fs::exists(kValidator)) << "GDAL's GeoPackage validator is missing (apt package python3-gdal)";
  const int valid = std::system(("/usr/bin/python3 " + kValidator + " " + out.string() + " > " +
                                 (dir.path() / "validator.log").string() + " 2>&1").c_str());
  EXPECT_EQ(valid, 0) << testsupport::slurp(dir.path() / "validator.log");
}

TEST(DataColumns, WriteBackDescribesItsLayersToo) {
  testsupport::TempDir dir;
  const fs::path copy = dir.path() / "network.gpkg";
  fs::copy_file(kSample + "network.gpkg", copy);
  std::string args = demoArgs();
  args.replace(0, (kSample + "network.gpkg").size(), copy.string());
  const auto run = testsupport::runReachwise("route " + args + " --write-back --quiet");
  ASSERT_EQ(run.code, 0) << run.err;
  expectEveryColumnDescribed(copy, "rw_");
}
