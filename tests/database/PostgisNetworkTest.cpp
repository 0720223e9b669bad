// Networks read from a PostgreSQL/PostGIS database through GDAL: the sample
// network, its lakes and gauges loaded with ogr2ogr (GDAL's own loader, not
// reachwise's code) into a schema of a real server route to exactly the
// outputs of the same run from GeoPackages holding the same data. Needs the
// test server (CTest fixture pg_server; docs/testing.md, "Database tests").
//
// "The same data": GDAL 3.6's PostgreSQL driver writes double precision
// values with 15 significant digits (measured: 0.0022500000000000003 is
// stored as 0.00225), so the loaded network is the sample rounded to 15
// digits. The GeoPackages compared against are therefore copied back out of
// the database with ogr2ogr, which reads them exactly.

#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <filesystem>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "support/Cli.hpp"
#include "support/Postgis.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using testsupport::CliRun;
using testsupport::TempDir;
using testsupport::TestDatabase;

namespace {

const fs::path kSample = fs::path(REACHWISE_SOURCE_DIR) / "sample-network";

using testsupport::shellQuoted;

/// Loads LAYER of the GeoPackage FILE into SCHEMA.TABLE of the database with ogr2ogr.
void load(const TestDatabase& db, const fs::path& file, const std::string& schema, const std::string& table) {
  db.sql("create schema if not exists " + testsupport::quotedIdentifier(schema));
  const CliRun r = testsupport::runShell("ogr2ogr -f PostgreSQL " + shellQuoted(db.source()) + " " +
                                         shellQuoted(file.string()) + " -nln " + shellQuoted(table) +
                                         " -lco " + shellQuoted("SCHEMA=" + schema) + " -lco LAUNDER=NO");
  ASSERT_EQ(r.code, 0) << r.err;
}

/// Every layer and table of a GeoPackage as sorted rows of text (fields and geometry as WKT),
/// by layer name; `run_info` is left out (it names the inputs, which differ on purpose).
std::map<std::string, std::vector<std::string>> contents(const fs::path& gpkg) {
  std::map<std::string, std::vector<std::string>> out;
  GDALAllRegister();
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(gpkg.string().c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) return out;
  for (OGRLayer* layer : ds->GetLayers()) {
    const std::string name = layer->GetName();
    if (name == "run_info") continue;
    auto& rows = out[name];
    for (const auto& f : *layer) {
      std::string row;
      for (int i = 0; i < f->GetFieldCount(); ++i) {
        row += std::string(f->GetFieldDefnRef(i)->GetNameRef()) + "=" +
               (f->IsFieldSetAndNotNull(i) ? f->GetFieldAsString(i) : "<null>") + "|";
      }
      if (const OGRGeometry* g = f->GetGeometryRef()) row += g->exportToWkt();
      rows.push_back(row);
    }
    std::sort(rows.begin(), rows.end());
  }
  return out;
}

std::string sampleArgs(const std::string& network, const std::string& layer, const std::string& lakes,
                       const std::string& lakes_layer, const std::string& gauges, const std::string& gauges_layer) {
  return shellQuoted(network) + (layer.empty() ? "" : " --layer " + shellQuoted(layer)) +
         " --inflow " + (kSample / "inflow.csv").string() + " --lateral " + (kSample / "lateral.csv").string() +
         " --lakes " + shellQuoted(lakes) + (lakes_layer.empty() ? "" : " --lakes-layer " + shellQuoted(lakes_layer)) +
         " --observed " + (kSample / "observed.csv").string() + " --gauges " + shellQuoted(gauges) +
         (gauges_layer.empty() ? "" : " --gauges-layer " + shellQuoted(gauges_layer));
}

/// Copies SCHEMA.TABLE of the database into a new GeoPackage FILE (layer TABLE).
void unload(const TestDatabase& db, const std::string& schema, const std::string& table, const fs::path& file) {
  const CliRun r = testsupport::runShell("ogr2ogr -f GPKG " + shellQuoted(file.string()) + " " +
                                         shellQuoted(db.source()) + " " + shellQuoted(schema + "." + table) +
                                         " -nln " + shellQuoted(table));
  ASSERT_EQ(r.code, 0) << r.err;
}

/// Routes the sample from the database's SCHEMA and from GeoPackages with
/// the same contents, and compares every output layer and table.
void expectSameAsGeoPackage(const std::string& schema, const std::string& reaches, const std::string& lakes,
                            const std::string& gauges) {
  TestDatabase db;
  load(db, kSample / "network.gpkg", schema, reaches);
  load(db, kSample / "lakes.gpkg", schema, lakes);
  load(db, kSample / "gauges.gpkg", schema, gauges);
  TempDir dir;
  const fs::path net = dir.path() / "network.gpkg", lk = dir.path() / "lakes.gpkg", gg = dir.path() / "gauges.gpkg";
  unload(db, schema, reaches, net);
  unload(db, schema, lakes, lk);
  unload(db, schema, gauges, gg);
  const fs::path from_files = dir.path() / "files.gpkg", from_db = dir.path() / "db.gpkg";
  const CliRun a = testsupport::runReachwise("route " + sampleArgs(net.string(), "", lk.string(), "", gg.string(), "") +
                                             " --out " + from_files.string());
  ASSERT_EQ(a.code, 0) << a.err;
  // Schema-qualified layer names, as GDAL's PostgreSQL driver names tables outside `public`.
  const CliRun b = testsupport::runReachwise(
      "route " + sampleArgs(db.source(), schema + "." + reaches, db.source(), schema + "." + lakes, db.source(),
                            schema + "." + gauges) +
      " --out " + from_db.string());
  ASSERT_EQ(b.code, 0) << b.err;

  const auto expected = contents(from_files), actual = contents(from_db);
  ASSERT_FALSE(expected.empty());
  EXPECT_TRUE(expected.count("reaches") && expected.count("hydrographs") && expected.count("lakes") &&
              expected.count("gauges"));
  ASSERT_EQ(actual.size(), expected.size());
  for (const auto& [name, rows] : expected) {
    ASSERT_TRUE(actual.count(name)) << name;
    ASSERT_EQ(actual.at(name).size(), rows.size()) << name;
    for (std::size_t i = 0; i < rows.size(); ++i) EXPECT_EQ(actual.at(name)[i], rows[i]) << name << " row " << i;
  }
  // The console summary too, up to the line naming the output.
  const auto summary = [](const std::string& out) { return out.substr(out.find("outlet"), out.find("wrote") - out.find("outlet")); };
  EXPECT_EQ(summary(a.out), summary(b.out));
}

TEST(PostgisNetwork, SampleRoutesAsFromItsGeoPackage) {
  expectSameAsGeoPackage("hydro", "reaches", "lakes", "gauges");
}

TEST(PostgisNetwork, SchemaAndTableNamesWithQuotesSemicolonsAndAccents) {
  // Names a user may well have (mixed case, spaces, accents) and hostile ones
  // (quotes, a semicolon, an SQL comment): the table must be found and read,
  // and nothing else executed.
  expectSameAsGeoPackage("Flüsse \"Nord\"; --", "Strecken'; DROP TABLE x; --", "Seen", "Pegel ü");
}

TEST(PostgisNetwork, MissingLayerIsNamed) {
  TestDatabase db;
  load(db, kSample / "network.gpkg", "hydro", "reaches");
  const CliRun r = testsupport::runReachwise("check " + shellQuoted(db.source()) + " --layer hydro.rivers");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("hydro.rivers"), std::string::npos) << r.err;
}

}  // namespace
