#include "reachwise/io/ResultsWriter.hpp"

#include "reachwise/io/DataColumns.hpp"

#include <cpl_conv.h>
#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogr_p.h>
#include <ogrsf_frmts.h>
#include <sqlite3.h>

#include <cmath>
#include <limits>
#include <condition_variable>
#include <deque>
#include <mutex>
#include <system_error>
#include <thread>


#include "GdalSupport.hpp"
#include "PackedRtree.hpp"
#include "ResultsTables.hpp"
#include "TableLayer.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Database.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/Gdal.hpp"

namespace reachwise::io {

namespace fs = std::filesystem;
using results::Column;
using results::ColumnType;
using results::Value;

namespace {

[[noreturn]] void failAt(const fs::path& file, const std::string& what, const std::string& layer = {}) {
  throwWithGdalMessage(file.string(), what, layer);
}

void addField(const fs::path& file, OGRLayer& layer, const Column& column) {
  OGRFieldType type = OFTString;
  OGRFieldSubType subtype = OFSTNone;
  switch (column.type) {
    case ColumnType::Text: type = OFTString; break;
    case ColumnType::Real: type = OFTReal; break;
    case ColumnType::Integer: type = OFTInteger; break;
    case ColumnType::Integer64: type = OFTInteger64; break;
    case ColumnType::Boolean: type = OFTInteger; subtype = OFSTBoolean; break;
    case ColumnType::DateTime: type = OFTDateTime; break;
  }
  OGRFieldDefn defn(column.name, type);
  defn.SetSubType(subtype);
  if (layer.CreateField(&defn) != OGRERR_NONE)
    failAt(file, std::string("cannot add field ") + column.name, layer.GetName());
}

void setDateTime(OGRFeature& f, int index, double unix_s, int utc_offset_min) {
  const auto w = results::wallClock(unix_s, utc_offset_min);
  f.SetField(index, w.year, w.month, w.day, w.hour, w.minute, w.second, w.tz_flag);
}

void setValue(OGRFeature& f, int index, const Value& value, int utc_offset_min) {
  if (std::holds_alternative<std::monostate>(value)) {
    f.SetFieldNull(index);
  } else if (const auto* d = std::get_if<double>(&value)) {
    f.SetField(index, *d);
  } else if (const auto* i = std::get_if<std::int64_t>(&value)) {
    f.SetField(index, static_cast<GIntBig>(*i));
  } else if (const auto* s = std::get_if<std::string>(&value)) {
    f.SetField(index, s->c_str());
  } else {
    setDateTime(f, index, std::get<results::Instant>(value).unix_s, utc_offset_min);
  }
}

/// Creates layer `name` (GDAL's name; in a PostgreSQL database `schema.table`,
/// created in `schema`) with `columns`; `packed_index`: without GDAL's
/// spatial index (a GeoPackage's), which the writer packs at the end.
OGRLayer* createTable(const fs::path& file, GDALDataset& ds, const std::string& name,
                      OGRSpatialReference* srs, OGRwkbGeometryType geometry,
                      const std::vector<Column>& columns, const std::string& schema = {},
                      bool packed_index = false) {
  CPLStringList options;
  // The writer adds the index itself (addPackedSpatialIndex).
  if (packed_index) options.SetNameValue("SPATIAL_INDEX", "NO");
  std::string table = name;
  if (!schema.empty()) {
    // The schema as an option, never parsed out of the name (either may hold dots).
    table = name.substr(schema.size() + 1);
    options.SetNameValue("SCHEMA", schema.c_str());
    options.SetNameValue("LAUNDER", "NO");    // names as given
    options.SetNameValue("GEOMETRY_NAME", "geom");  // the names a GeoPackage has
    options.SetNameValue("FID", "fid");
  }
  OGRLayer* layer = ds.CreateLayer(table.c_str(), geometry == wkbNone ? nullptr : srs, geometry, options.List());
  if (!layer) failAt(file, "cannot create layer " + name, name);
  for (const auto& c : columns) addField(file, *layer, c);
  return layer;
}

/// Adds `f` to `layer` as feature `fid` (OGRNullFID: the next id).
void insert(const fs::path& file, OGRLayer& layer, OGRFeature& f, GIntBig fid = OGRNullFID) {
  f.SetFID(fid);
  if (layer.CreateFeature(&f) != OGRERR_NONE) failAt(file, "cannot write a row", layer.GetName());
}

/// The fields of `reaches`, with an ensemble's when `ensemble` is given.
const std::vector<Column>& reachColumnsFor(const EnsembleOutput* ensemble) {
  return ensemble ? results::ensembleRunReachColumns() : results::reachColumns();
}

OGRLineString lineOf(const std::vector<network::Point3>& vertices) {
  OGRLineString line;
  line.setNumPoints(static_cast<int>(vertices.size()));
  for (std::size_t k = 0; k < vertices.size(); ++k)
    line.setPoint(static_cast<int>(k), vertices[k].x, vertices[k].y);
  return line;
}

constexpr const char* kTables[] = {"reaches", "nodes", "confluence_branches", "hydrographs", "run_info",
                                   "lakes", "lake_series", "gauges", "gauge_series", kMemberReachesTable};

}  // namespace

/// The rows of a GeoPackage's `hydrographs`, added with SQLite itself on
/// GDAL's own connection (inside its transaction): one prepared INSERT,
/// the row's reach id and time bound as text (the times formatted once
/// per run, by GDAL's own formatter, so the text is what GDAL stores), the
/// values as numbers (NULL for a missing one). GDAL creates the table and
/// its index. Its feature-count trigger, which ran an UPDATE for every
/// row, is dropped while the rows come in and put back by finish(), with
/// the count, as GDAL leaves them (GDAL does the same for its own rows).
/// Through OGR each row cost a feature, a date-time formatted again and
/// that UPDATE (docs/performance.md, "Hydrograph rows through SQLite").
struct GpkgResultsWriter::SeriesRows {
  fs::path file;       ///< what the user named, for messages
  std::string table;
  sqlite3* db = nullptr;
  sqlite3_stmt* insert = nullptr;
  std::vector<std::string> times;   ///< the text of each output step's time

  SeriesRows(fs::path file_in, GDALDataset& ds, std::string table_in, const std::vector<Column>& columns,
             const routing::TimeAxis& axis, int utc_offset_min)
      : file(std::move(file_in)), table(std::move(table_in)),
        db(static_cast<sqlite3*>(ds.GetInternalHandle("SQLITE_HANDLE"))) {
    if (!db) failAt(file, "GDAL gives no SQLite connection to the GeoPackage", table);
    std::string names, marks;
    for (const auto& c : columns) {
      names += (names.empty() ? "" : ", ") + quotedIdentifier(c.name);
      marks += marks.empty() ? "?" : ", ?";
    }
    const std::string sql = "INSERT INTO " + quotedIdentifier(table) + " (" + names + ") VALUES (" + marks + ")";
    const std::string drop = "DROP TRIGGER IF EXISTS " + quotedIdentifier("trigger_insert_feature_count_" + table);
    if (sqlite3_exec(db, drop.c_str(), nullptr, nullptr, nullptr) != SQLITE_OK ||
        sqlite3_prepare_v2(db, sql.c_str(), -1, &insert, nullptr) != SQLITE_OK)
      fail("cannot prepare the rows");
    times.reserve(axis.steps);
    for (std::size_t k = 0; k < axis.steps; ++k) {
      const auto w = results::wallClock(axis.at(static_cast<double>(k)), utc_offset_min);
      OGRField field;
      field.Date.Year = static_cast<GInt16>(w.year);
      field.Date.Month = static_cast<GByte>(w.month);
      field.Date.Day = static_cast<GByte>(w.day);
      field.Date.Hour = static_cast<GByte>(w.hour);
      field.Date.Minute = static_cast<GByte>(w.minute);
      field.Date.Second = w.second;
      field.Date.TZFlag = static_cast<GByte>(w.tz_flag);
      char* text = OGRGetXMLDateTime(&field, /*bAlwaysMillisecond=*/true);
      times.emplace_back(text);
      CPLFree(text);
    }
  }
  ~SeriesRows() { sqlite3_finalize(insert); }
  SeriesRows(const SeriesRows&) = delete;
  SeriesRows& operator=(const SeriesRows&) = delete;

  /// Binds parameter `i` (from 1) to `v`, NULL when it is NaN.
  void bindValue(int i, double v) const {
    if (std::isnan(v)) sqlite3_bind_null(insert, i);
    else sqlite3_bind_double(insert, i, v);
  }
  /// Throws `what`, with SQLite's reason, naming the file and table.
  [[noreturn]] void fail(const std::string& what) const {
    InputLocation at;
    at.file = file.string();
    at.layer = table;
    throw InputError(at, what + " (" + sqlite3_errmsg(db) + ")");
  }
  /// Puts back GDAL's feature-count trigger and records the count, `rows`.
  void finish(std::size_t rows) const {
    const std::string sql = fmt::format(
        "CREATE TRIGGER {0} AFTER INSERT ON {1} BEGIN UPDATE gpkg_ogr_contents SET feature_count = "
        "feature_count + 1 WHERE lower(table_name) = lower({2}); END; "
        "UPDATE gpkg_ogr_contents SET feature_count = {3} WHERE lower(table_name) = lower({2})",
        quotedIdentifier("trigger_insert_feature_count_" + table), quotedIdentifier(table), quotedLiteral(table),
        rows);
    if (sqlite3_exec(db, sql.c_str(), nullptr, nullptr, nullptr) != SQLITE_OK) fail("cannot count the rows");
  }
  /// Adds the row bound so far.
  void add() const {
    const int rc = sqlite3_step(insert);
    sqlite3_reset(insert);
    if (rc != SQLITE_DONE) fail("cannot write a row");
  }
};

/// The boxes of the features of `reaches` and `nodes` in a GeoPackage,
/// collected as their rows are written; commit() packs them into the
/// layers' spatial indexes (PackedRtree.hpp). GDAL's own R-tree took 8 s
/// per million features, one at a time (docs/performance.md).
struct GpkgResultsWriter::PackedIndexes {
  std::vector<RtreeBox> reaches, nodes;
};

/// What the router's threads hand to the writing thread.
struct GpkgResultsWriter::BackgroundJob {
  enum class Kind { Series, Reach, Node } kind = Kind::Series;
  std::uint32_t reach = 0;
  routing::ReachSummary reach_summary;
  std::vector<double> q, depth, velocity;
  std::size_t position = 0, first_branch = 0;   ///< a node's, NetworkRouter's nodeFinished()
  routing::NodeSummary node;
  std::size_t bytes() const { return sizeof(BackgroundJob) + sizeof(double) * (q.size() + depth.size() + velocity.size()); }
};

/// The queue between the router's threads and the writing thread
/// (GpkgWriterOptions::background). Bounded by the bytes it holds, so that
/// a writer slower than routing holds the router back instead of memory
/// growing with the network.
struct GpkgResultsWriter::Background {
  static constexpr std::size_t kCapacityBytes = std::size_t{64} << 20;
  /// The writing thread is woken for this many jobs or bytes at a time:
  /// waking it for each (three jobs per reach at 1,000,000 reaches) cost
  /// more in thread switches than the writing itself (measured: routing
  /// took 100 s more CPU on 2 cores).
  static constexpr std::size_t kBatchJobs = 512, kBatchBytes = std::size_t{4} << 20;

  /// Waits for room (always taken when nothing is held), then queues
  /// `job`; rethrows what stopped the writing thread.
  void push(BackgroundJob&& job) {
    const std::size_t bytes = job.bytes();
    std::unique_lock lock(mutex);
    room.wait(lock, [&] { return error || held == 0 || held + bytes <= kCapacityBytes; });
    if (error) std::rethrow_exception(error);
    jobs.push_back(std::move(job));
    held += bytes;
    queued_bytes += bytes;
    if (batchReady()) ready.notify_one();
  }
  bool batchReady() const { return jobs.size() >= kBatchJobs || queued_bytes >= kBatchBytes; }

  std::mutex mutex;
  std::condition_variable ready, room;
  std::deque<BackgroundJob> jobs;
  std::size_t held = 0;           ///< bytes queued or being written
  std::size_t queued_bytes = 0;   ///< bytes queued
  bool closing = false;   ///< nothing more comes: write what is queued, then stop
  bool abandon = false;   ///< stop at once (the run failed)
  std::exception_ptr error;
  std::thread thread;
};

GpkgResultsWriter::GpkgResultsWriter(fs::path out, const network::ReachTable& table,
                                     const network::NetworkPlan& plan, const routing::TimeAxis& axis,
                                     GpkgWriterOptions options)
    : target_(std::move(out)), table_(table), plan_(plan), axis_(axis), options_(std::move(options)) {
  ensureGdal();
  CPLErrorReset();
  selected_ = options_.series.mask(plan_.size());
  refuseExisting(target_, options_.overwrite);
  requireParentFolder(target_);
  std::error_code ec;
  working_ = partialPath(target_, ".gpkg");
  fs::remove(working_, ec);
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  if (!driver) failAt(target_, "GDAL has no GeoPackage driver");
  ds_.reset(driver->Create(working_.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  if (!ds_) failAt(target_, "cannot create the output file");
  try {
    if (ds_->StartTransaction() != OGRERR_NONE) failAt(target_, "cannot start writing");
    openSeriesTable();
    openLakeSeriesTable();
  } catch (...) {
    ds_.reset();
    fs::remove(working_, ec);
    throw;
  }
  startBackground();
}

namespace {

/// Opens `input` for update after checking that it is a writable GeoPackage.
std::unique_ptr<GDALDataset> openForWriteBack(const fs::path& input) {
  std::error_code ec;
  if (!fs::is_regular_file(input, ec)) failAt(input, "write-back needs an existing GeoPackage file");
  {
    std::unique_ptr<GDALDataset> probe(
        GDALDataset::Open(input.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    if (!probe) failAt(input, "cannot be opened as vector data");
    const char* driver = probe->GetDriver() ? probe->GetDriver()->GetDescription() : "";
    if (std::string(driver) != "GPKG")
      failAt(input, fmt::format("write-back needs a GeoPackage, this is read by GDAL's {} driver; "
                                "write a new GeoPackage instead", driver));
  }
  if (::access(input.c_str(), W_OK) != 0 || ::access(input.parent_path().empty() ? "." : input.parent_path().c_str(), W_OK) != 0)
    failAt(input, "is read-only; write-back needs to modify it (write a new GeoPackage instead)");
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(input.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
  if (!ds) failAt(input, "cannot be opened for update");
  return ds;
}

/// Opens the PostgreSQL database `connection` for writing; `shown` names it in messages.
std::unique_ptr<GDALDataset> openDatabase(const std::string& connection, const fs::path& shown) {
  // Every table is a layer, the non-spatial ones (hydrographs, run_info)
  // too, so that earlier results are found whatever their kind.
  CPLConfigOptionSetter all_tables("PG_LIST_ALL_TABLES", "YES", false);
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(connection.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
  if (!ds) failAt(shown, "cannot be opened for writing (is the server running, and may this user connect?)");
  const char* driver = ds->GetDriver() ? ds->GetDriver()->GetDescription() : "";
  if (std::string(driver) != "PostgreSQL")
    failAt(shown, fmt::format("is read by GDAL's {} driver, not as a PostgreSQL database", driver));
  return ds;
}

/// Runs SQL that returns no rows; throws naming `shown` and `table` when the server refuses.
void executeSql(GDALDataset& ds, const fs::path& shown, const std::string& sql, const std::string& what,
                const std::string& table) {
  CPLErrorReset();
  if (OGRLayer* result = ds.ExecuteSQL(sql.c_str(), nullptr, nullptr)) ds.ReleaseResultSet(result);
  if (CPLGetLastErrorType() >= CE_Failure) failAt(shown, what, table);
}

/// Whether the database has table `table` in schema `schema`.
bool hasTable(GDALDataset& ds, const std::string& schema, const std::string& table) {
  CPLErrorReset();
  OGRLayer* result = ds.ExecuteSQL(
      ("SELECT 1 FROM information_schema.tables WHERE table_schema = " + quotedLiteral(schema) +
       " AND table_name = " + quotedLiteral(table)).c_str(), nullptr, nullptr);
  if (!result) return false;
  const bool found = result->GetFeatureCount() > 0;
  ds.ReleaseResultSet(result);
  return found;
}

/// The schema of GDAL's layer `layer` of a PostgreSQL database: GDAL names
/// a table outside the active schema `schema.table`, and both may hold
/// dots, so each split is looked up; a name without one is in the current
/// schema.
std::string schemaOfLayer(GDALDataset& ds, const fs::path& shown, const std::string& layer) {
  for (std::size_t dot = layer.find('.'); dot != std::string::npos; dot = layer.find('.', dot + 1))
    if (hasTable(ds, layer.substr(0, dot), layer.substr(dot + 1))) return layer.substr(0, dot);
  OGRLayer* result = ds.ExecuteSQL("SELECT current_schema()", nullptr, nullptr);
  std::string schema;
  if (result) {
    if (auto f = std::unique_ptr<OGRFeature>(result->GetNextFeature())) schema = f->GetFieldAsString(0);
    ds.ReleaseResultSet(result);
  }
  if (schema.empty()) failAt(shown, "cannot find the schema of the network table", layer);
  return schema;
}

int layerIndex(GDALDataset& ds, const std::string& name) {
  for (int i = 0; i < ds.GetLayerCount(); ++i)
    if (EQUAL(ds.GetLayer(i)->GetName(), name.c_str())) return i;
  return -1;
}

}  // namespace

std::unique_ptr<GpkgResultsWriter> GpkgResultsWriter::writeBack(
    fs::path input, std::string prefix, const network::ReachTable& table,
    const network::NetworkPlan& plan, const routing::TimeAxis& axis, GpkgWriterOptions options) {
  std::string schema;
  if (isDatabaseSource(input.string())) {
    ensureGdal();
    const std::string connection = input.string();
    const fs::path shown = redactedConnection(connection);
    schema = schemaOfLayer(*openDatabase(connection, shown), shown, table.layer);
  }
  return std::unique_ptr<GpkgResultsWriter>(new GpkgResultsWriter(
      WriteBackTag{}, std::move(input), std::move(schema), std::move(prefix), table, plan, axis, std::move(options)));
}

std::unique_ptr<GpkgResultsWriter> GpkgResultsWriter::intoDatabase(std::string connection, std::string schema,
                                                                   const network::ReachTable& table,
                                                                   const network::NetworkPlan& plan,
                                                                   const routing::TimeAxis& axis,
                                                                   GpkgWriterOptions options) {
  // PostgreSQL cuts longer names to 63 bytes, which could make two names one.
  if (schema.empty() || schema.size() > 63 || schema.find('\0') != std::string::npos)
    throw InvalidParameter("--schema", "must be 1 to 63 bytes long, without NUL characters");
  return std::unique_ptr<GpkgResultsWriter>(new GpkgResultsWriter(
      WriteBackTag{}, std::move(connection), std::move(schema), "", table, plan, axis, std::move(options)));
}

GpkgResultsWriter::GpkgResultsWriter(WriteBackTag, fs::path input, std::string schema, std::string prefix,
                                     const network::ReachTable& table,
                                     const network::NetworkPlan& plan, const routing::TimeAxis& axis,
                                     GpkgWriterOptions options)
    : target_(std::move(input)), working_(target_), prefix_(std::move(prefix)), schema_(std::move(schema)),
      write_back_(true), table_(table), plan_(plan), axis_(axis), options_(std::move(options)) {
  ensureGdal();
  CPLErrorReset();
  // An empty prefix would put results under the plain names, where they
  // could replace the user's own layers; a schema of their own may hold them.
  if (prefix_.empty() && schema_.empty()) throw InvalidParameter("write-back prefix", "must not be empty");
  selected_ = options_.series.mask(plan_.size());
  std::string connection;
  if (!schema_.empty()) {
    connection = target_.string();
    target_ = redactedConnection(connection);  // messages never show a password
    working_ = target_;
    ds_ = openDatabase(connection, target_);
  } else {
    ds_ = openForWriteBack(target_);
  }
  std::vector<std::string> existing;
  {
    CPLConfigOptionSetter all_tables("PG_LIST_ALL_TABLES", "YES", false);
    for (const char* base : kTables) {
      const auto name = layerName(base);
      if (EQUAL(name.c_str(), table_.layer.c_str()))
        failAt(target_, "the network layer itself is named " + name + "; choose another " +
                            (schema_.empty() || !prefix_.empty() ? "prefix" : "schema"), name);
      if (layerIndex(*ds_, name) >= 0) existing.push_back(name);
    }
  }
  if (!existing.empty() && !options_.overwrite)
    failAt(target_, fmt::format("already holds the {} {}; it is replaced only when overwriting is allowed",
                                schema_.empty() ? "layer" : "table", existing.front()),
           existing.front());
  if (ds_->StartTransaction() != OGRERR_NONE) failAt(target_, "cannot start a transaction");
  if (!schema_.empty())
    executeSql(*ds_, target_, "CREATE SCHEMA IF NOT EXISTS " + quotedIdentifier(schema_),
               "cannot create the schema " + schema_ + " (may this user create schemas in the database?)", schema_);
  for (const auto& name : existing)
    if (ds_->DeleteLayer(layerIndex(*ds_, name)) != OGRERR_NONE)
      failAt(target_, "cannot delete the old layer " + name, name);
  openSeriesTable();
  openLakeSeriesTable();
  startBackground();
}

GpkgResultsWriter::~GpkgResultsWriter() {
  try {
    stopBackground(/*abandon=*/true);  // drops what is queued: the file is removed below
  } catch (...) {
    // A destructor must not throw (joining the thread could, in principle).
  }
  series_rows_.reset();  // its statement ends before GDAL's connection does
  if (committed_) return;
  try {
    if (ds_) {
      ds_->RollbackTransaction();
      ds_.reset();
    }
    std::error_code ec;
    if (!write_back_) fs::remove(working_, ec);
  } catch (...) {
    // A destructor must not throw; the temporary file is all that is at stake.
  }
}

void GpkgResultsWriter::fail(const std::string& what) const { failAt(target_, what); }

void GpkgResultsWriter::startBackground() {
  // A database loads each table with one COPY, which rows of two tables in
  // turn would end and restart; an ensemble's `reaches` rows need every member.
  if (!options_.background || !schema_.empty() || options_.member_column) return;
  background_ = std::make_unique<Background>();
  background_->thread = std::thread([this] { runBackground(); });
}

void GpkgResultsWriter::runBackground() {
  Background& b = *background_;
  try {
    for (;;) {
      std::deque<BackgroundJob> batch;
      {
        std::unique_lock lock(b.mutex);
        b.ready.wait(lock, [&] { return b.abandon || b.closing || b.batchReady(); });
        if (b.abandon || b.jobs.empty()) return;
        batch.swap(b.jobs);
        b.queued_bytes = 0;
      }
      std::size_t written = 0;
      for (const BackgroundJob& job : batch) {
        writeJob(job);
        written += job.bytes();
      }
      {
        std::lock_guard lock(b.mutex);
        b.held -= written;
      }
      b.room.notify_all();
    }
  } catch (...) {
    std::lock_guard lock(b.mutex);
    b.error = std::current_exception();
    b.jobs.clear();
    b.held = 0;
  }
  b.room.notify_all();
}

void GpkgResultsWriter::writeJob(const BackgroundJob& job) {
  switch (job.kind) {
    case BackgroundJob::Kind::Series: writeSeriesRows(job.reach, job.q, job.depth, job.velocity); break;
    case BackgroundJob::Kind::Reach: writeReachRow(job.reach, job.reach_summary, nullptr); break;
    case BackgroundJob::Kind::Node:
      writeNodeRow(job.position, job.node);
      writeBranchRows(job.first_branch, job.node);
      if (node_written_.size() <= job.position) node_written_.resize(job.position + 1, false);
      node_written_[job.position] = true;
      break;
  }
}

void GpkgResultsWriter::stopBackground(bool abandon) {
  if (!background_) return;
  Background& b = *background_;
  if (b.thread.joinable()) {
    {
      std::lock_guard lock(b.mutex);
      (abandon ? b.abandon : b.closing) = true;
    }
    b.ready.notify_all();
    b.thread.join();
  }
  if (!abandon && b.error) std::rethrow_exception(b.error);
}

void GpkgResultsWriter::openSeriesTable() {
  std::vector<Column> columns;
  if (options_.member_column) columns.push_back({"member", ColumnType::Text});
  columns.push_back({"reach_id", ColumnType::Text});
  columns.push_back({"time", ColumnType::DateTime});
  columns.push_back({"q", ColumnType::Real});
  if (options_.depth_velocity) {
    columns.push_back({"depth", ColumnType::Real});
    columns.push_back({"velocity", ColumnType::Real});
  }
  const auto series = layerName("hydrographs");
  series_layer_ = createTable(target_, *ds_, series, nullptr, wkbNone, columns, schema_);
  series_feature_ = std::make_unique<OGRFeature>(series_layer_->GetLayerDefn());
  if (!schema_.empty()) return;  // a database indexes it after loading (finishDatabaseTables())
  // GIS users pick one reach's hydrograph; an index keeps that fast. It is
  // made now, before any layer holds rows: SQL run later inside the open
  // transaction would make GDAL finish the deferred spatial index of a large
  // layer, which it cannot do within a transaction ("database is locked").
  CPLErrorReset();
  ds_->ExecuteSQL(fmt::format("CREATE INDEX \"idx_{0}_reach_id\" ON \"{0}\" (reach_id)", series).c_str(),
                  nullptr, nullptr);
  if (CPLGetLastErrorType() >= CE_Failure) failAt(target_, "cannot index " + series, series);
  series_rows_ = std::make_unique<SeriesRows>(target_, *ds_, series, columns, axis_, timeOffsetMin(axis_.utc_offset_min));
  packed_indexes_ = std::make_unique<PackedIndexes>();
}

void GpkgResultsWriter::openLakeSeriesTable() {
  if (!options_.lakes) return;
  const auto name = layerName("lake_series");
  lake_series_layer_ = createTable(target_, *ds_, name, nullptr, wkbNone,
                                   results::inUnits(results::lakeSeriesColumns(), options_.units), schema_);
  if (!schema_.empty()) return;  // as in openSeriesTable()
  // Indexed now, before any layer holds rows, for the reason given in openSeriesTable().
  CPLErrorReset();
  ds_->ExecuteSQL(fmt::format("CREATE INDEX \"idx_{0}_lake_id\" ON \"{0}\" (lake_id)", name).c_str(), nullptr,
                  nullptr);
  if (CPLGetLastErrorType() >= CE_Failure) failAt(target_, "cannot index " + name, name);
}

void GpkgResultsWriter::countRow() {
  ++hydrograph_rows_;
  rowWritten();
}

void GpkgResultsWriter::rowWritten() {
  // A new file commits in batches so that memory and journal stay small; a
  // write-back keeps its one transaction so that it stays all-or-nothing.
  if (write_back_ || ++rows_in_transaction_ < options_.batch_rows) return;
  if (ds_->CommitTransaction() != OGRERR_NONE || ds_->StartTransaction() != OGRERR_NONE)
    fail("cannot commit a batch of rows");
  rows_in_transaction_ = 0;
}

void GpkgResultsWriter::write(std::uint32_t reach, std::span<const double> q_m3s,
                              std::span<const double> depth_m, std::span<const double> velocity_ms) {
  REACHWISE_ASSERT(ds_ && !committed_);
  REACHWISE_ASSERT(reach < plan_.size());
  if (!selected_[reach]) return;
  REACHWISE_ASSERT(q_m3s.size() == axis_.steps);
  REACHWISE_ASSERT(depth_m.empty() || depth_m.size() == axis_.steps);
  REACHWISE_ASSERT(velocity_ms.empty() || velocity_ms.size() == axis_.steps);
  if (background_) {
    BackgroundJob job;
    job.reach = reach;
    job.q.assign(q_m3s.begin(), q_m3s.end());
    job.depth.assign(depth_m.begin(), depth_m.end());
    job.velocity.assign(velocity_ms.begin(), velocity_ms.end());
    background_->push(std::move(job));
    return;
  }
  writeSeriesRows(reach, q_m3s, depth_m, velocity_ms);
}

void GpkgResultsWriter::summarised(std::uint32_t reach, const routing::ReachSummary& summary) {
  if (!background_) return;
  REACHWISE_ASSERT(reach < plan_.size());
  BackgroundJob job;
  job.kind = BackgroundJob::Kind::Reach;
  job.reach = reach;
  job.reach_summary = summary;
  background_->push(std::move(job));
}

void GpkgResultsWriter::nodeFinished(std::size_t position, std::size_t first_branch, const routing::NodeSummary& node) {
  if (!background_) return;
  BackgroundJob job;
  job.kind = BackgroundJob::Kind::Node;
  job.position = position;
  job.first_branch = first_branch;
  job.node = node;
  background_->push(std::move(job));
}

void GpkgResultsWriter::insertAt(OGRLayer& layer, OGRFeature& row, std::size_t fid) {
  insert(target_, layer, row, background_ ? static_cast<GIntBig>(fid) : OGRNullFID);
}

void GpkgResultsWriter::writeSeriesRows(std::uint32_t reach, std::span<const double> q_m3s,
                                        std::span<const double> depth_m, std::span<const double> velocity_ms) {
  const int c0 = options_.member_column ? 1 : 0;   // the first column after `member`
  const auto value = [this](std::span<const double> s, std::size_t k, Quantity quantity) {
    return s.empty() || std::isnan(s[k]) ? std::numeric_limits<double>::quiet_NaN()
                                         : toOutputUnits(options_.units, quantity, s[k]);
  };
  if (series_rows_) {
    const SeriesRows& rows = *series_rows_;
    const std::string& id = plan_.reach_id[reach];
    // Text bound without a copy (the member, the id and the times outlive
    // the rows); a binding holds across sqlite3_reset, so the member and
    // the id are bound once for the series.
    if (options_.member_column) sqlite3_bind_text(rows.insert, 1, member_.c_str(), -1, SQLITE_STATIC);
    sqlite3_bind_text(rows.insert, c0 + 1, id.c_str(), static_cast<int>(id.size()), SQLITE_STATIC);
    for (std::size_t k = 0; k < axis_.steps; ++k) {
      sqlite3_bind_text(rows.insert, c0 + 2, rows.times[k].c_str(), static_cast<int>(rows.times[k].size()),
                        SQLITE_STATIC);
      rows.bindValue(c0 + 3, value(q_m3s, k, Quantity::Discharge));
      if (options_.depth_velocity) {
        rows.bindValue(c0 + 4, value(depth_m, k, Quantity::Length));
        rows.bindValue(c0 + 5, value(velocity_ms, k, Quantity::Velocity));
      }
      rows.add();
      countRow();
    }
    return;
  }
  OGRFeature& f = *series_feature_;
  if (options_.member_column) f.SetField(0, member_.c_str());
  f.SetField(c0, plan_.reach_id[reach].c_str());
  const auto field = [](double v) { return std::isnan(v) ? Value{} : Value{v}; };
  for (std::size_t k = 0; k < axis_.steps; ++k) {
    setDateTime(f, c0 + 1, axis_.at(static_cast<double>(k)), timeOffsetMin(axis_.utc_offset_min));
    setValue(f, c0 + 2, field(value(q_m3s, k, Quantity::Discharge)), 0);
    if (options_.depth_velocity) {
      setValue(f, c0 + 3, field(value(depth_m, k, Quantity::Length)), 0);
      setValue(f, c0 + 4, field(value(velocity_ms, k, Quantity::Velocity)), 0);
    }
    insert(target_, *series_layer_, f);
    countRow();
  }
}

void GpkgResultsWriter::createReachesLayer(const EnsembleOutput* ensemble) {
  const auto srs = spatialReferenceFromWkt(table_.crs_wkt);
  reaches_layer_ = createTable(target_, *ds_, layerName("reaches"), srs.get(), wkbLineString,
                               results::inUnits(reachColumnsFor(ensemble), options_.units), schema_,
                               packed_indexes_ != nullptr);
  reach_feature_ = std::make_unique<OGRFeature>(reaches_layer_->GetLayerDefn());
  reach_written_.assign(plan_.size(), false);
}

void GpkgResultsWriter::writeReachRow(std::size_t i, const routing::ReachSummary& summary,
                                      const EnsembleOutput* ensemble) {
  if (!reaches_layer_) createReachesLayer(ensemble);
  REACHWISE_ASSERT(i < plan_.size() && !reach_written_[i]);
  OGRFeature& f = *reach_feature_;
  auto row = results::reachRow(plan_, summary, i);
  if (ensemble) {
    auto more = results::ensembleReachRow(*ensemble, i);
    row.insert(row.end(), std::make_move_iterator(more.begin()), std::make_move_iterator(more.end()));
  }
  results::convertRow(row, reachColumnsFor(ensemble), options_.units);
  const int offset = timeOffsetMin(axis_.utc_offset_min);
  for (std::size_t c = 0; c < row.size(); ++c) setValue(f, static_cast<int>(c), row[c], offset);
  const std::size_t fid = i + 1;  // the id plan order gives
  const auto vertices = results::flowLine(table_, plan_, i);
  if (vertices.size() >= 2) {
    auto line = lineOf(vertices);
    f.SetGeometry(&line);
    if (packed_indexes_) {
      OGREnvelope box;
      line.getEnvelope(&box);
      packed_indexes_->reaches.push_back(rtreeBox(static_cast<std::int64_t>(fid), box.MinX, box.MaxX, box.MinY, box.MaxY));
    }
  } else {
    f.SetGeometryDirectly(nullptr);
  }
  insertAt(*reaches_layer_, f, fid);
  reach_written_[i] = true;
}

void GpkgResultsWriter::createNodeLayers() {
  const auto srs = spatialReferenceFromWkt(table_.crs_wkt);
  nodes_layer_ = createTable(target_, *ds_, layerName("nodes"), srs.get(), wkbPoint,
                             results::inUnits(results::nodeColumns(), options_.units), schema_,
                             packed_indexes_ != nullptr);
  branches_layer_ = createTable(target_, *ds_, layerName("confluence_branches"), nullptr, wkbNone,
                                results::inUnits(results::branchColumns(), options_.units), schema_);
  node_feature_ = std::make_unique<OGRFeature>(nodes_layer_->GetLayerDefn());
  branch_feature_ = std::make_unique<OGRFeature>(branches_layer_->GetLayerDefn());
}

void GpkgResultsWriter::writeNodeRow(std::size_t position, const routing::NodeSummary& node) {
  if (!nodes_layer_) createNodeLayers();
  OGRFeature& f = *node_feature_;
  auto row = results::nodeRow(plan_, node);
  results::convertRow(row, results::nodeColumns(), options_.units);
  const int offset = timeOffsetMin(axis_.utc_offset_min);
  for (std::size_t c = 0; c < row.size(); ++c) setValue(f, static_cast<int>(c), row[c], offset);
  const std::size_t fid = position + 1;
  if (std::isfinite(node.x) && std::isfinite(node.y)) {
    OGRPoint point(node.x, node.y);
    f.SetGeometry(&point);
    if (packed_indexes_) packed_indexes_->nodes.push_back(rtreeBox(static_cast<std::int64_t>(fid), node.x, node.x, node.y, node.y));
  } else {
    f.SetGeometryDirectly(nullptr);
  }
  insertAt(*nodes_layer_, f, fid);
}

void GpkgResultsWriter::writeBranchRows(std::size_t first_branch, const routing::NodeSummary& node) {
  if (!nodes_layer_) createNodeLayers();
  OGRFeature& b = *branch_feature_;
  const int offset = timeOffsetMin(axis_.utc_offset_min);
  for (const auto& branch : node.branches) {
    auto row = results::branchRow(plan_, node, branch);
    results::convertRow(row, results::branchColumns(), options_.units);
    for (std::size_t c = 0; c < row.size(); ++c) setValue(b, static_cast<int>(c), row[c], offset);
    insertAt(*branches_layer_, b, ++first_branch);
  }
}

void GpkgResultsWriter::writeSummaries(const routing::NetworkResults& results, const RunInfo& info,
                                       const EnsembleOutput* ensemble) {
  stopBackground(/*abandon=*/false);
  REACHWISE_ASSERT(ds_ && !committed_ && !summaries_written_);
  REACHWISE_ASSERT(results.reaches.size() == plan_.size());
  REACHWISE_ASSERT(plan_.record.size() == plan_.size());
  REACHWISE_ASSERT(!(ensemble && reaches_layer_));   // the writing thread never has ensemble fields
  const int offset = timeOffsetMin(results.axis.utc_offset_min);
  const units::System u = options_.units;

  // The rows the writing thread has not written (all of them without it).
  if (!reaches_layer_) createReachesLayer(ensemble);
  for (std::size_t i = 0; i < plan_.size(); ++i)
    if (!reach_written_[i]) writeReachRow(i, results.reaches[i], ensemble);

  // The nodes the writing thread has not written (all of them without it),
  // one table after the other: a database loads each with one COPY, which
  // writing them in turn would end and restart at every node (measured:
  // 51,000 COPY statements for 100,000 reaches).
  if (!nodes_layer_) createNodeLayers();
  node_written_.resize(results.nodes.size(), false);
  for (std::size_t p = 0; p < results.nodes.size(); ++p)
    if (!node_written_[p]) writeNodeRow(p, results.nodes[p]);
  std::size_t branches_before = 0;
  for (std::size_t p = 0; p < results.nodes.size(); ++p) {
    if (!node_written_[p]) writeBranchRows(branches_before, results.nodes[p]);
    branches_before += results.nodes[p].branches.size();
  }

  if (ensemble) {
    // One row per member and reach, member by member.
    const std::vector<Column>& columns = results::memberReachColumns();
    OGRLayer* members = createTable(target_, *ds_, layerName(kMemberReachesTable), nullptr, wkbNone,
                                    results::inUnits(columns, u), schema_);
    OGRFeature f(members->GetLayerDefn());
    for (std::size_t m = 0; m < ensemble->members.size(); ++m)
      for (std::size_t i = 0; i < plan_.size(); ++i) {
        auto row = results::memberReachRow(plan_, *ensemble, m, i);
        results::convertRow(row, columns, u);
        for (std::size_t c = 0; c < row.size(); ++c) setValue(f, static_cast<int>(c), row[c], offset);
        insert(target_, *members, f);
        rowWritten();
      }
  }

  OGRLayer* run_info = createTable(target_, *ds_, layerName("run_info"), nullptr, wkbNone,
                                   {{"key", ColumnType::Text}, {"value", ColumnType::Text}}, schema_);
  OGRFeature f(run_info->GetLayerDefn());
  for (const auto& [key, value] : results::runInfoRows(results, info)) {
    f.SetField(0, key.c_str());
    f.SetField(1, value.c_str());
    insert(target_, *run_info, f);
  }
  summaries_written_ = true;
}

void GpkgResultsWriter::writeLakes(const std::vector<LakeOutput>& lakes) {
  stopBackground(/*abandon=*/false);
  REACHWISE_ASSERT(ds_ && !committed_ && !lakes_written_);
  REACHWISE_ASSERT(options_.lakes && lake_series_layer_);
  const int offset = timeOffsetMin(axis_.utc_offset_min);
  const auto srs = spatialReferenceFromWkt(table_.crs_wkt);
  const auto name = layerName("lakes");
  OGRLayer* layer = createTable(target_, *ds_, name, srs.get(), wkbMultiPolygon,
                                results::inUnits(results::lakeColumns(), options_.units), schema_);
  OGRFeature f(layer->GetLayerDefn());
  for (const auto& lake : lakes) {
    auto row = results::lakeRow(axis_, lake);
    results::convertRow(row, results::lakeColumns(), options_.units);
    for (std::size_t c = 0; c < row.size(); ++c) setValue(f, static_cast<int>(c), row[c], offset);
    OGRGeometry* g = nullptr;
    if (!lake.lake->wkt.empty() &&
        OGRGeometryFactory::createFromWkt(lake.lake->wkt.c_str(), nullptr, &g) == OGRERR_NONE) {
      f.SetGeometryDirectly(OGRGeometryFactory::forceToMultiPolygon(g));
    } else {
      f.SetGeometryDirectly(nullptr);
    }
    f.SetFID(OGRNullFID);
    if (layer->CreateFeature(&f) != OGRERR_NONE) failAt(target_, "cannot write lake " + lake.lake->lake_id, name);
  }
  if (options_.lake_series) {
    OGRFeature s(lake_series_layer_->GetLayerDefn());
    for (const auto& lake : lakes) {
      const auto series = results::lakeSeries(lake, axis_.steps);
      s.SetField(0, lake.lake->lake_id.c_str());
      for (std::size_t k = 0; k < axis_.steps; ++k) {
        setDateTime(s, 1, axis_.at(static_cast<double>(k)), offset);
        for (std::size_t v = 0; v < series.size(); ++v)
          setValue(s, static_cast<int>(2 + v),
                   std::isnan(series[v][k])
                       ? Value{}
                       : Value{toOutputUnits(options_.units, results::kLakeSeriesQuantities[v], series[v][k])},
                   0);
        insert(target_, *lake_series_layer_, s);
        rowWritten();
      }
    }
  }
  lakes_written_ = true;
}

void results::writeRowsLayer(const fs::path& file, GDALDataset& ds, const std::string& name,
                             OGRSpatialReference* srs, OGRwkbGeometryType geometry,
                             const std::vector<Column>& columns, const std::vector<Row>& rows,
                             const std::vector<std::pair<double, double>>& points, int utc_offset_min,
                             const std::string& schema) {
  OGRLayer* layer = createTable(file, ds, name, srs, geometry, columns, schema);
  OGRFeature f(layer->GetLayerDefn());
  for (std::size_t r = 0; r < rows.size(); ++r) {
    for (std::size_t c = 0; c < rows[r].size(); ++c) setValue(f, static_cast<int>(c), rows[r][c], utc_offset_min);
    if (geometry == wkbPoint && r < points.size()) f.SetGeometryDirectly(new OGRPoint(points[r].first, points[r].second));
    insert(file, *layer, f);
  }
}

void GpkgResultsWriter::writeGauges(const std::vector<GaugeOutput>& gauges) {
  stopBackground(/*abandon=*/false);
  REACHWISE_ASSERT(ds_ && !committed_);
  const int offset = timeOffsetMin(axis_.utc_offset_min);
  const auto srs = spatialReferenceFromWkt(table_.crs_wkt);
  std::vector<results::Row> rows;
  std::vector<std::pair<double, double>> points;
  const units::System u = options_.units;
  for (const auto& gauge : gauges) {
    rows.push_back(results::gaugeRow(gauge));
    results::convertRow(rows.back(), results::gaugeColumns(), u);
    points.emplace_back(gauge.x, gauge.y);
  }
  results::writeRowsLayer(target_, *ds_, layerName("gauges"), srs.get(), wkbPoint,
                          results::inUnits(results::gaugeColumns(), u), rows, points, offset, schema_);
  const auto series_name = layerName("gauge_series");
  OGRLayer* series = createTable(target_, *ds_, series_name, nullptr, wkbNone,
                                 results::inUnits(results::gaugeSeriesColumns(), u), schema_);
  OGRFeature s(series->GetLayerDefn());
  const auto at = [u](const std::vector<double>* v, std::size_t k) {
    return v && k < v->size() && !std::isnan((*v)[k]) ? Value{toOutputUnits(u, Quantity::Discharge, (*v)[k])}
                                                       : Value{};
  };
  for (const auto& gauge : gauges) {
    s.SetField(0, gauge.gauge_id.c_str());
    for (std::size_t k = 0; k < axis_.steps; ++k) {
      setDateTime(s, 1, axis_.at(static_cast<double>(k)), offset);
      setValue(s, 2, at(gauge.observed, k), 0);
      setValue(s, 3, at(gauge.simulated, k), 0);
      insert(target_, *series, s);
      rowWritten();
    }
  }
}

std::string GpkgResultsWriter::sqlTable(const char* base) const {
  const std::string table = prefix_ + base;
  return schema_.empty() ? quotedIdentifier(table) : quotedIdentifier(schema_) + "." + quotedIdentifier(table);
}

void GpkgResultsWriter::finishDatabaseTables() {
  // The series tables are read one reach (lake, gauge) at a time, in time
  // order: one B-tree on (id, time) each, built once after loading, which
  // PostgreSQL does faster than keeping it up row by row.
  const std::pair<const char*, const char*> series[] = {
      {"hydrographs", "reach_id"}, {"lake_series", "lake_id"}, {"gauge_series", "gauge_id"}};
  CPLConfigOptionSetter all_tables("PG_LIST_ALL_TABLES", "YES", false);
  for (const auto& [base, id] : series) {
    if (layerIndex(*ds_, layerName(base)) < 0) continue;
    executeSql(*ds_, target_,
               "CREATE INDEX ON " + sqlTable(base) + " (" + quotedIdentifier(id) + ", " + quotedIdentifier("time") + ")",
               std::string("cannot index ") + base, layerName(base));
  }
  // What each column means, as the database's own column comments (what
  // gpkg_data_columns holds in a GeoPackage).
  for (const char* base : kTables) {
    const int index = layerIndex(*ds_, layerName(base));
    if (index < 0) continue;
    OGRFeatureDefn* defn = ds_->GetLayer(index)->GetLayerDefn();
    for (int i = 0; i < defn->GetFieldCount(); ++i) {
      const std::string column = defn->GetFieldDefn(i)->GetNameRef();
      const std::string title = columnTitle(column, options_.units);
      const ColumnMeaning* meaning = columnMeaning(siFieldName(column));
      if (title.empty() || !meaning) continue;
      executeSql(*ds_, target_,
                 "COMMENT ON COLUMN " + sqlTable(base) + "." + quotedIdentifier(column) + " IS " +
                     quotedLiteral(title + ": " + std::string(meaning->description)),
                 "cannot describe column " + column, layerName(base));
    }
  }
}

void GpkgResultsWriter::describeTables() {
  if (!schema_.empty()) return;  // done by finishDatabaseTables(), inside the transaction
  // What each column means, for a GIS (gpkg_data_columns): SQL after the
  // transaction, as SQL within it would make GDAL finish the deferred
  // spatial indexes there (openSeriesTable()); still before the file is
  // put in place.
  for (const char* t : kTables) describeColumns(*ds_, target_.string(), layerName(t), options_.units);
}

void GpkgResultsWriter::commit(OutputCommit* into) {
  stopBackground(/*abandon=*/false);
  REACHWISE_ASSERT(ds_ && !committed_);
  REACHWISE_ASSERT(summaries_written_);  // a file without its summaries would look complete
  REACHWISE_ASSERT(lakes_written_ || !options_.lakes);
  if (!schema_.empty()) finishDatabaseTables();
  if (series_rows_) series_rows_->finish(hydrograph_rows_);
  if (packed_indexes_) {
    if (reaches_layer_)
      addPackedSpatialIndex(*ds_, target_, reaches_layer_->GetName(), reaches_layer_->GetGeometryColumn(),
                            wkbLineString, std::move(packed_indexes_->reaches));
    if (nodes_layer_)
      addPackedSpatialIndex(*ds_, target_, nodes_layer_->GetName(), nodes_layer_->GetGeometryColumn(), wkbPoint,
                            std::move(packed_indexes_->nodes));
    packed_indexes_.reset();
  }
  if (write_back_ && into) {
    // The transaction ends after every other output is in place, so that a
    // failure there puts them back (OutputCommit::addFinal).
    into->addFinal([this] {
      if (ds_->CommitTransaction() != OGRERR_NONE) fail("cannot finish writing");
      describeTables();
      series_feature_.reset();
      series_rows_.reset();
      ds_.reset();
      committed_ = true;
    });
    return;
  }
  if (ds_->CommitTransaction() != OGRERR_NONE) fail("cannot finish writing");
  describeTables();
  series_feature_.reset();
  series_rows_.reset();
  ds_.reset();  // closes and flushes the file before it is renamed
  if (!write_back_) {
    committed_ = true;  // from here on the OutputCommit owns the file
    if (into) {
      into->add(working_, target_);
    } else {
      OutputCommit own(options_.overwrite);
      own.add(working_, target_);
      own.commit();
    }
    return;
  }
  committed_ = true;
}

}  // namespace reachwise::io
