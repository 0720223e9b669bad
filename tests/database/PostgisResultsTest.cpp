// Results written into a PostgreSQL/PostGIS database (`route --out PG:...`,
// `--schema`, `--write-back` from a database): what is read back equals the
// GeoPackage output, a failure at any point leaves the database as it was,
// names from users are never SQL, and concurrent runs into two schemas do
// not disturb each other. Needs the test server (CTest fixture pg_server;
// docs/testing.md, "Database tests").

#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "io/NetworkFixtures.hpp"
#include "support/Cli.hpp"
#include "support/Postgis.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using testsupport::CliRun;
using testsupport::quotedIdentifier;
using testsupport::TempDir;
using testsupport::TestDatabase;

namespace {

const fs::path kSample = fs::path(REACHWISE_SOURCE_DIR) / "sample-network";

using testsupport::shellQuoted;

const char* const kTables[] = {"reaches", "nodes", "confluence_branches", "hydrographs", "lakes",
                               "lake_series", "gauges", "gauge_series"};

/// The rows of one layer or table as sorted text: every field (GDAL prints a
/// double with 15 significant digits, what its PostgreSQL driver stores) and
/// the geometry as WKT. Date-times are compared as instants (ISO 8601, UTC).
std::vector<std::string> rowsOf(OGRLayer* layer) {
  std::vector<std::string> rows;
  if (!layer) return rows;
  for (const auto& f : *layer) {
    std::string row;
    for (int i = 0; i < f->GetFieldCount(); ++i) {
      row += std::string(f->GetFieldDefnRef(i)->GetNameRef()) + "=";
      if (!f->IsFieldSetAndNotNull(i)) {
        row += "<null>|";
        continue;
      }
      if (f->GetFieldDefnRef(i)->GetType() == OFTDateTime) {
        const OGRField* raw = f->GetRawFieldRef(i);
        std::tm t{};
        t.tm_year = raw->Date.Year - 1900;
        t.tm_mon = raw->Date.Month - 1;
        t.tm_mday = raw->Date.Day;
        t.tm_hour = raw->Date.Hour;
        t.tm_min = raw->Date.Minute;
        // To UTC: GDAL's TZ flag is 100 + quarter hours east of UTC.
        const int tz = raw->Date.TZFlag;
        const long long utc_min = ::timegm(&t) / 60 - (tz > 1 ? (tz - 100) * 15 : 0);
        row += std::to_string(utc_min) + ":" + std::to_string(raw->Date.Second) + "|";
        continue;
      }
      row += std::string(f->GetFieldAsString(i)) + "|";
    }
    if (const OGRGeometry* g = f->GetGeometryRef()) row += g->exportToWkt();
    rows.push_back(row);
  }
  std::sort(rows.begin(), rows.end());
  return rows;
}

std::unique_ptr<GDALDataset> open(const std::string& source) {
  reachwise::io::ensureGdal();
  CPLSetThreadLocalConfigOption("PG_LIST_ALL_TABLES", "YES");
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  CPLSetThreadLocalConfigOption("PG_LIST_ALL_TABLES", nullptr);
  return ds;
}

std::string sampleRun(const std::string& inflow = (kSample / "inflow.csv").string()) {
  return " --inflow " + inflow + " --lateral " + (kSample / "lateral.csv").string() + " --lakes " +
         (kSample / "lakes.gpkg").string() + " --observed " + (kSample / "observed.csv").string() + " --gauges " +
         (kSample / "gauges.gpkg").string();
}

std::string count(const TestDatabase& db, const std::string& schema, const std::string& table) {
  return db.sql("select count(*) from " + quotedIdentifier(schema) + "." + quotedIdentifier(table));
}

/// How many tables the schema has (0 when it does not exist).
int tablesIn(const TestDatabase& db, const std::string& schema) {
  return std::stoi(db.sql("select count(*) from information_schema.tables where table_schema = '" + schema + "'"));
}

TEST(PostgisResults, ReadBackEqualsTheGeoPackageOutput) {
  TestDatabase db;
  TempDir dir;
  const fs::path gpkg = dir.path() / "results.gpkg";
  const std::string network = (kSample / "network.gpkg").string();
  const CliRun a = testsupport::runReachwise("route " + network + sampleRun() + " --out " + gpkg.string());
  ASSERT_EQ(a.code, 0) << a.err;
  const CliRun b = testsupport::runReachwise("route " + network + sampleRun() + " --out " + shellQuoted(db.source()));
  ASSERT_EQ(b.code, 0) << b.err;
  EXPECT_NE(b.out.find("(schema reachwise)"), std::string::npos) << b.out;  // the default schema

  const auto file = open(gpkg.string()), database = open(db.source());
  ASSERT_TRUE(file && database);
  for (const char* table : kTables) {
    const auto expected = rowsOf(file->GetLayerByName(table));
    const auto actual = rowsOf(database->GetLayerByName((std::string("reachwise.") + table).c_str()));
    ASSERT_FALSE(expected.empty()) << table;
    ASSERT_EQ(actual.size(), expected.size()) << table;
    for (std::size_t i = 0; i < expected.size(); ++i) ASSERT_EQ(actual[i], expected[i]) << table << " row " << i;
  }
  // Typed columns, indexes and comments: what a database user relies on.
  EXPECT_EQ(db.sql("select data_type from information_schema.columns where table_schema = 'reachwise' and "
                   "table_name = 'hydrographs' and column_name = 'time'"),
            "timestamp with time zone\n");
  EXPECT_EQ(db.sql("select data_type from information_schema.columns where table_schema = 'reachwise' and "
                   "table_name = 'reaches' and column_name = 'peak_q'"),
            "double precision\n");
  EXPECT_EQ(db.sql("select count(*) from pg_indexes where schemaname = 'reachwise' and tablename = 'hydrographs' "
                   "and indexdef like '%(reach_id, \"time\")%'"),
            "1\n");
  EXPECT_EQ(db.sql("select count(*) from pg_indexes where schemaname = 'reachwise' and tablename = 'reaches' "
                   "and indexdef like '%USING gist%'"),
            "1\n");
  EXPECT_NE(db.sql("select col_description('reachwise.reaches'::regclass, "
                   "(select attnum from pg_attribute where attrelid = 'reachwise.reaches'::regclass and "
                   "attname = 'peak_q'))")
                .find("peak discharge"),
            std::string::npos);
  EXPECT_NE(db.sql("select value from reachwise.run_info where key = 'caution'").find("licensed engineer"),
            std::string::npos);
}

TEST(PostgisResults, ExistingResultsAreReplacedOnlyWithOverwrite) {
  TestDatabase db;
  const std::string network = (kSample / "network.gpkg").string(), out = " --out " + shellQuoted(db.source());
  ASSERT_EQ(testsupport::runReachwise("route " + network + sampleRun() + out).code, 0);
  const std::string rows = count(db, "reachwise", "hydrographs");
  db.sql("update reachwise.reaches set peak_q = -1");  // a mark: is the table replaced?
  const CliRun again = testsupport::runReachwise("route " + network + sampleRun() + out);
  EXPECT_EQ(again.code, 1) << again.err;
  EXPECT_NE(again.err.find("reachwise.reaches"), std::string::npos) << again.err;
  EXPECT_NE(again.err.find("overwriting is allowed"), std::string::npos) << again.err;
  EXPECT_EQ(db.sql("select count(*) from reachwise.reaches where peak_q = -1"), "41\n");
  const CliRun replaced = testsupport::runReachwise("route " + network + sampleRun() + out + " --overwrite");
  ASSERT_EQ(replaced.code, 0) << replaced.err;
  EXPECT_EQ(db.sql("select count(*) from reachwise.reaches where peak_q = -1"), "0\n");
  EXPECT_EQ(count(db, "reachwise", "hydrographs"), rows);
}

TEST(PostgisResults, AFailedRunLeavesTheEarlierResultsUntouched) {
  TestDatabase db;
  TempDir dir;
  const std::string network = (kSample / "network.gpkg").string(), out = " --out " + shellQuoted(db.source());
  ASSERT_EQ(testsupport::runReachwise("route " + network + sampleRun() + out).code, 0);
  db.sql("update reachwise.reaches set peak_q = -1");

  // Bad forcing: refused before anything is written.
  const fs::path bad = dir.path() / "bad.csv";
  std::ofstream(bad) << "time,R27\n2026-05-14T00:00:00Z,1\n2026-05-14T01:00:00Z,nan\n";
  const CliRun r1 = testsupport::runReachwise("route " + network + sampleRun(bad.string()) + out + " --overwrite");
  EXPECT_EQ(r1.code, 1) << r1.err;
  EXPECT_EQ(db.sql("select count(*) from reachwise.reaches where peak_q = -1"), "41\n");

  // A failure at the very end, after the old tables were dropped and the new
  // ones filled in the run's transaction: the server refuses the index of
  // the hydrographs (an event trigger standing in for a full disk or a
  // lost permission).
  db.sql("create function refuse_index() returns event_trigger language plpgsql as $$ begin "
         "if exists (select 1 from pg_event_trigger_ddl_commands() where object_identity like "
         "'%hydrographs_reach_id_time_idx%') then raise exception 'no more indexes today'; end if; end $$");
  db.sql("create event trigger refuse_index on ddl_command_end when tag in ('CREATE INDEX') "
         "execute function refuse_index()");
  const CliRun r2 = testsupport::runReachwise("route " + network + sampleRun() + out + " --overwrite");
  EXPECT_EQ(r2.code, 1) << r2.err;
  EXPECT_NE(r2.err.find("no more indexes today"), std::string::npos) << r2.err;
  EXPECT_EQ(r2.err.find("password"), std::string::npos);
  db.sql("drop event trigger refuse_index");
  EXPECT_EQ(db.sql("select count(*) from reachwise.reaches where peak_q = -1"), "41\n");
  EXPECT_EQ(tablesIn(db, "reachwise"), 9);
}

TEST(PostgisResults, AConnectionLostMidWriteLeavesNoTables) {
  TestDatabase db;
  // The server ends the run's own connection when it creates its first
  // index, in the middle of writing.
  db.sql("create function drop_me() returns event_trigger language plpgsql as $$ begin "
         "perform pg_terminate_backend(pg_backend_pid()); end $$");
  db.sql("create event trigger drop_me on ddl_command_end when tag in ('CREATE INDEX') execute function drop_me()");
  const CliRun r = testsupport::runReachwise("route " + (kSample / "network.gpkg").string() + sampleRun() +
                                             " --out " + shellQuoted(db.source()) + " --schema lost");
  db.sql("drop event trigger drop_me");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("dbname="), std::string::npos) << r.err;  // names the server
  EXPECT_EQ(tablesIn(db, "lost"), 0);
  EXPECT_EQ(db.sql("select count(*) from information_schema.schemata where schema_name = 'lost'"), "0\n");
}

TEST(PostgisResults, TwoRunsIntoTwoSchemasAtOnce) {
  TestDatabase db;
  TempDir dir;
  const std::string base = std::string(REACHWISE_BINARY_DIR) + "/reachwise route " +
                           (kSample / "network.gpkg").string() + sampleRun() + " --out " + shellQuoted(db.source());
  const std::string both = base + " --schema first > " + (dir.path() / "1.log").string() + " 2>&1 & a=$!; " + base +
                           " --schema second > " + (dir.path() / "2.log").string() + " 2>&1 & b=$!; " +
                           "wait $a; ra=$?; wait $b; rb=$?; exit $((ra + rb))";
  const CliRun r = testsupport::runShell("bash -c " + shellQuoted(both));
  EXPECT_EQ(r.code, 0) << testsupport::slurp(dir.path() / "1.log") << testsupport::slurp(dir.path() / "2.log");
  EXPECT_EQ(tablesIn(db, "first"), 9);
  EXPECT_EQ(tablesIn(db, "second"), 9);
  EXPECT_EQ(count(db, "first", "hydrographs"), count(db, "second", "hydrographs"));
  EXPECT_EQ(db.sql("select count(*) from (select * from first.reaches except select * from second.reaches) d"),
            "0\n");
}

TEST(PostgisResults, AReadOnlyUserGetsAClearError) {
  TestDatabase db;
  db.sql("drop role if exists rw_reader");
  db.sql("create role rw_reader login");
  db.sql("revoke create on schema public from public");
  db.sql("revoke create on database " + quotedIdentifier(db.name()) + " from public");
  const std::string reader = db.source() + " user=rw_reader";
  const CliRun r = testsupport::runReachwise("route " + (kSample / "network.gpkg").string() + sampleRun() +
                                             " --out " + shellQuoted(reader));
  db.sql("drop owned by rw_reader");
  db.sql("drop role rw_reader");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("user=rw_reader"), std::string::npos) << r.err;  // the server and user
  EXPECT_NE(r.err.find("schema reachwise"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("permission denied"), std::string::npos) << r.err;
}

TEST(PostgisResults, NamesFromUsersAreNeverSql) {
  // A schema with quotes, a semicolon and an SQL comment, and reach ids
  // with quotes, SQL comments, a backslash and non-ASCII letters (a reach id
  // may not hold ';' or ','), are stored as given; nothing else happens.
  TestDatabase db;
  TempDir dir;
  db.sql("create table canary (x int)");
  const std::string schema = "Résultats \"x\"; DROP TABLE canary; --";
  const std::string up = "Quelle' OR '1'='1 --", down = "Mündung \"B\" /* \\ */";
  const fs::path network = dir.path() / "net.gpkg";
  fixtures::Layer layer;
  layer.fields = fixtures::reachFields();
  layer.features = {fixtures::reach("LINESTRING (0 3000,0 1500)", up, down),
                    fixtures::reach("LINESTRING (0 1500,0 0)", down, std::nullopt)};
  fixtures::write(network.string(), "GPKG", {layer});
  const fs::path inflow = dir.path() / "inflow.csv";
  std::ofstream(inflow) << "reach_id,time,discharge\n"
                        << up << ",2026-05-14T00:00:00Z,1\n"
                        << up << ",2026-05-14T01:00:00Z,5\n"
                        << up << ",2026-05-14T02:00:00Z,1\n";
  const CliRun r = testsupport::runReachwise("route " + network.string() + " --inflow " + inflow.string() +
                                             " --out " + shellQuoted(db.source()) + " --schema " + shellQuoted(schema));
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(db.sql("select count(*) from canary"), "0\n");
  EXPECT_EQ(db.sql("select reach_id from " + quotedIdentifier(schema) + ".reaches order by reach_id"),
            down + "\n" + up + "\n");
  EXPECT_EQ(db.sql("select count(distinct reach_id) from " + quotedIdentifier(schema) + ".hydrographs"), "2\n");
}

TEST(PostgisResults, WriteBackBesideTheNetworkTable) {
  TestDatabase db;
  db.sql("create schema rivers");
  const CliRun load = testsupport::runShell("ogr2ogr -f PostgreSQL " + shellQuoted(db.source()) + " " +
                                            (kSample / "network.gpkg").string() + " -nln reaches -lco SCHEMA=rivers");
  ASSERT_EQ(load.code, 0) << load.err;
  const CliRun r = testsupport::runReachwise("route " + shellQuoted(db.source()) + " --layer rivers.reaches" +
                                             sampleRun() + " --write-back");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(db.sql("select count(*) from rivers.rw_reaches"), "41\n");
  EXPECT_EQ(db.sql("select count(*) from rivers.reaches"), "41\n");  // the network itself is untouched
  EXPECT_EQ(tablesIn(db, "rivers"), 10);
  // Again: refused without --overwrite, replaced with it.
  EXPECT_EQ(testsupport::runReachwise("route " + shellQuoted(db.source()) + " --layer rivers.reaches" + sampleRun() +
                                      " --write-back").code,
            1);
  EXPECT_EQ(testsupport::runReachwise("route " + shellQuoted(db.source()) + " --layer rivers.reaches" + sampleRun() +
                                      " --write-back --overwrite").code,
            0);
}

}  // namespace
