#include "PackedRtree.hpp"

#include <ogrsf_frmts.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>
#include <utility>

#include "GdalSupport.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Database.hpp"

namespace reachwise::io {

namespace {

float roundedDown(double v) {
  float f = static_cast<float>(v);
  if (static_cast<double>(f) > v) f = std::nextafter(f, -std::numeric_limits<float>::infinity());
  return f;
}

float roundedUp(double v) {
  float f = static_cast<float>(v);
  if (static_cast<double>(f) < v) f = std::nextafter(f, std::numeric_limits<float>::infinity());
  return f;
}

/// SQLite's R-tree format (the R-tree module's own tables, as it reads and
/// writes them): a node is a blob of the table's node size, big-endian
/// throughout: 2 bytes the tree's depth (the root only, 0 elsewhere),
/// 2 bytes the number of cells, then the cells, each the 8-byte id (a
/// feature's id in a leaf, a child's node number above) and the box's four
/// 32-bit floats in column order (minx, maxx, miny, maxy). The root is node
/// 1; `_rowid` maps each feature to its leaf and `_parent` each other node
/// to its parent.
constexpr std::size_t kCellBytes = 8 + 4 * 4;

void putBig16(unsigned char* p, unsigned v) {
  p[0] = static_cast<unsigned char>(v >> 8);
  p[1] = static_cast<unsigned char>(v);
}

void putBig32(unsigned char* p, std::uint32_t v) {
  for (int b = 0; b < 4; ++b) p[b] = static_cast<unsigned char>(v >> (24 - 8 * b));
}

void putBig64(unsigned char* p, std::uint64_t v) {
  for (int b = 0; b < 8; ++b) p[b] = static_cast<unsigned char>(v >> (56 - 8 * b));
}

void putFloat(unsigned char* p, float f) {
  std::uint32_t bits;
  std::memcpy(&bits, &f, sizeof bits);
  putBig32(p, bits);
}

/// A prepared statement, finalized when it goes.
struct Statement {
  sqlite3_stmt* stmt = nullptr;
  Statement(sqlite3* db, const std::string& sql) { sqlite3_prepare_v2(db, sql.c_str(), -1, &stmt, nullptr); }
  ~Statement() { sqlite3_finalize(stmt); }
  Statement(const Statement&) = delete;
  Statement& operator=(const Statement&) = delete;
  /// Binds two integers and runs the statement.
  bool run(std::int64_t a, std::int64_t b) {
    sqlite3_bind_int64(stmt, 1, a);
    sqlite3_bind_int64(stmt, 2, b);
    const int rc = sqlite3_step(stmt);
    sqlite3_reset(stmt);
    return rc == SQLITE_DONE;
  }
  /// Binds an integer and a blob and runs the statement.
  bool run(std::int64_t a, const std::vector<unsigned char>& blob) {
    sqlite3_bind_int64(stmt, 1, a);
    sqlite3_bind_blob(stmt, 2, blob.data(), static_cast<int>(blob.size()), SQLITE_STATIC);
    const int rc = sqlite3_step(stmt);
    sqlite3_reset(stmt);
    return rc == SQLITE_DONE;
  }
};

/// The smallest box holding `cells`.
RtreeBox unionOf(std::int64_t id, const RtreeBox* cells, std::size_t count) {
  RtreeBox u{id, cells[0].min_x, cells[0].max_x, cells[0].min_y, cells[0].max_y};
  for (std::size_t i = 1; i < count; ++i) {
    u.min_x = std::min(u.min_x, cells[i].min_x);
    u.max_x = std::max(u.max_x, cells[i].max_x);
    u.min_y = std::min(u.min_y, cells[i].min_y);
    u.max_y = std::max(u.max_y, cells[i].max_y);
  }
  return u;
}

/// Node `blob` (already of the node size) holding `cells`.
void encodeNode(std::vector<unsigned char>& blob, unsigned depth, const RtreeBox* cells, std::size_t count) {
  std::fill(blob.begin(), blob.end(), 0);
  putBig16(blob.data(), depth);
  putBig16(blob.data() + 2, static_cast<unsigned>(count));
  for (std::size_t i = 0; i < count; ++i) {
    unsigned char* p = blob.data() + 4 + i * kCellBytes;
    putBig64(p, static_cast<std::uint64_t>(cells[i].id));
    putFloat(p + 8, cells[i].min_x);
    putFloat(p + 12, cells[i].max_x);
    putFloat(p + 16, cells[i].min_y);
    putFloat(p + 20, cells[i].max_y);
  }
}

/// A GDAL SQL result, released when it goes.
struct ResultSet {
  GDALDataset& ds;
  OGRLayer* layer;
  ResultSet(GDALDataset& d, const std::string& sql) : ds(d), layer(d.ExecuteSQL(sql.c_str(), nullptr, nullptr)) {}
  ~ResultSet() {
    if (layer) ds.ReleaseResultSet(layer);
  }
  ResultSet(const ResultSet&) = delete;
  ResultSet& operator=(const ResultSet&) = delete;
  /// The text of the first field of every row.
  std::vector<std::string> texts() {
    std::vector<std::string> out;
    if (!layer) return out;
    for (auto& f : *layer) out.emplace_back(f->GetFieldAsString(0));
    return out;
  }
};

/// What GDAL writes beside an R-tree of its own for layer `table`: the
/// gpkg_extensions table's definition, the extension's row (definition,
/// scope) and the triggers. Taken from an empty layer of the same name,
/// type and geometry column in a GeoPackage in memory, which GDAL indexes at
/// once; so the output carries exactly what GDAL would have written.
struct IndexTemplate {
  std::string extensions_table, definition, scope;
  std::vector<std::string> triggers;
};

IndexTemplate indexTemplate(const std::filesystem::path& file, const std::string& table, const std::string& column,
                            OGRwkbGeometryType type) {
  auto fail = [&](const std::string& what) {
    throwWithGdalMessage(file.string(), "cannot build the spatial index: " + what, table);
  };
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  if (!driver) fail("GDAL has no GeoPackage driver");
  static std::atomic<unsigned> count{0};
  const std::string path = "/vsimem/reachwise_rtree_" + std::to_string(++count) + ".gpkg";
  IndexTemplate t;
  struct Unlink {
    const std::string& path;
    ~Unlink() { VSIUnlink(path.c_str()); }
  } unlink{path};
  {
    std::unique_ptr<GDALDataset> mem(driver->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
    if (!mem) fail("GDAL cannot create a GeoPackage in memory");
    CPLStringList options;
    options.SetNameValue("GEOMETRY_NAME", column.c_str());
    options.SetNameValue("SPATIAL_INDEX", "NO");
    if (!mem->CreateLayer(table.c_str(), nullptr, type, options.List())) fail("GDAL cannot create the layer");
    {
      ResultSet indexed(*mem, "SELECT CreateSpatialIndex(" + quotedLiteral(table) + ", " + quotedLiteral(column) + ")");
    }
    t.extensions_table = ResultSet(*mem, "SELECT sql FROM sqlite_master WHERE type = 'table' AND name = "
                                         "'gpkg_extensions'").texts().at(0);
    const std::string where = " FROM gpkg_extensions WHERE extension_name = 'gpkg_rtree_index' AND table_name = " +
                              quotedLiteral(table);
    auto definition = ResultSet(*mem, "SELECT definition" + where).texts();
    auto scope = ResultSet(*mem, "SELECT scope" + where).texts();
    if (definition.size() != 1 || scope.size() != 1) fail("GDAL did not register its index");
    t.definition = definition[0], t.scope = scope[0];
    const std::string prefix = "rtree_" + table + "_" + column + "_";
    for (auto& sql : ResultSet(*mem, "SELECT name || char(1) || sql FROM sqlite_master WHERE type = 'trigger' "
                                     "ORDER BY name").texts()) {
      const auto cut = sql.find('\1');
      if (sql.compare(0, prefix.size(), prefix) == 0 && cut != std::string::npos) t.triggers.push_back(sql.substr(cut + 1));
    }
    if (t.triggers.empty()) fail("GDAL wrote no triggers for its index");
  }
  return t;
}

}  // namespace

RtreeBox rtreeBox(std::int64_t id, double min_x, double max_x, double min_y, double max_y) {
  return {id, roundedDown(min_x), roundedUp(max_x), roundedDown(min_y), roundedUp(max_y)};
}

bool fillPackedRtree(sqlite3* db, const std::string& rtree, std::vector<RtreeBox> boxes) {
  // The node size is the one SQLite chose when it created the table (the
  // length of its empty root); it decides how many cells a node holds.
  std::size_t node_bytes = 0;
  {
    Statement size(db, "SELECT length(data) FROM " + quotedIdentifier(rtree + "_node") + " WHERE nodeno = 1");
    if (!size.stmt || sqlite3_step(size.stmt) != SQLITE_ROW) return false;
    node_bytes = static_cast<std::size_t>(sqlite3_column_int64(size.stmt, 0));
  }
  const std::size_t fanout = node_bytes >= 4 ? (node_bytes - 4) / kCellBytes : 0;
  if (fanout < 2) return false;
  if (boxes.empty()) return true;  // the empty root SQLite wrote stays

  Statement node(db, "INSERT OR REPLACE INTO " + quotedIdentifier(rtree + "_node") + " (nodeno, data) VALUES (?, ?)");
  Statement parent(db, "INSERT INTO " + quotedIdentifier(rtree + "_parent") + " (nodeno, parentnode) VALUES (?, ?)");
  Statement rowid(db, "INSERT INTO " + quotedIdentifier(rtree + "_rowid") + " (rowid, nodeno) VALUES (?, ?)");
  if (!node.stmt || !parent.stmt || !rowid.stmt) return false;

  std::vector<unsigned char> blob(node_bytes);
  std::vector<std::pair<std::int64_t, std::int64_t>> leaf_of;  // feature id, its leaf
  leaf_of.reserve(boxes.size());
  // The cells of a node: features in a leaf, else its children.
  auto place = [&](const RtreeBox* cells, std::size_t count, std::int64_t nodeno, unsigned depth) {
    encodeNode(blob, nodeno == 1 ? depth : 0, cells, count);  // the root (node 1) carries the depth
    if (!node.run(nodeno, blob)) return false;
    for (std::size_t i = 0; i < count; ++i) {
      if (depth == 0) leaf_of.emplace_back(cells[i].id, nodeno);
      else if (!parent.run(cells[i].id, nodeno)) return false;
    }
    return true;
  };
  auto centreX = [](const RtreeBox& b) { return double(b.min_x) + double(b.max_x); };
  auto centreY = [](const RtreeBox& b) { return double(b.min_y) + double(b.max_y); };

  std::vector<RtreeBox> level = std::move(boxes);
  unsigned depth = 0;
  std::int64_t next_node = 2;  // 1 is the root's
  while (level.size() > fanout) {
    // STR: P = ⌈n/F⌉ nodes in ⌈√P⌉ vertical slices of ⌈√P⌉·F cells, each
    // slice sorted by y and cut into nodes of F.
    const std::size_t n = level.size();
    const std::size_t pages = (n + fanout - 1) / fanout;
    const auto slices = static_cast<std::size_t>(std::ceil(std::sqrt(static_cast<double>(pages))));
    const std::size_t per_slice = slices * fanout;
    std::sort(level.begin(), level.end(), [&](const RtreeBox& a, const RtreeBox& b) { return centreX(a) < centreX(b); });
    for (std::size_t s = 0; s < n; s += per_slice)
      std::sort(level.begin() + static_cast<std::ptrdiff_t>(s),
                level.begin() + static_cast<std::ptrdiff_t>(std::min(s + per_slice, n)),
                [&](const RtreeBox& a, const RtreeBox& b) { return centreY(a) < centreY(b); });
    std::vector<RtreeBox> up;
    up.reserve(pages);
    for (std::size_t p = 0; p < n; p += fanout) {
      const std::size_t count = std::min(fanout, n - p);
      const std::int64_t nodeno = next_node++;
      if (!place(level.data() + p, count, nodeno, depth)) return false;
      up.push_back(unionOf(nodeno, level.data() + p, count));
    }
    level = std::move(up);
    ++depth;
  }
  if (!place(level.data(), level.size(), 1, depth)) return false;
  // In id order, the rows go to the end of the table's B-tree.
  std::sort(leaf_of.begin(), leaf_of.end());
  for (const auto& [id, leaf] : leaf_of)
    if (!rowid.run(id, leaf)) return false;
  return true;
}

void addPackedSpatialIndex(GDALDataset& ds, const std::filesystem::path& file, const std::string& table,
                           const std::string& column, OGRwkbGeometryType type, std::vector<RtreeBox> boxes) {
  const IndexTemplate t = indexTemplate(file, table, column, type);
  auto* db = static_cast<sqlite3*>(ds.GetInternalHandle("SQLITE_HANDLE"));
  auto fail = [&](const std::string& what) {
    InputLocation at;
    at.file = file.string();
    at.layer = table;
    throw InputError(at, "cannot build the spatial index: " + what + (db ? std::string(" (") + sqlite3_errmsg(db) + ")" : ""));
  };
  if (!db) fail("GDAL gives no SQLite connection to the GeoPackage");
  auto exec = [&](const std::string& sql) {
    if (sqlite3_exec(db, sql.c_str(), nullptr, nullptr, nullptr) != SQLITE_OK) fail("SQLite refused " + sql.substr(0, 60));
  };
  {
    Statement has(db, "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'gpkg_extensions'");
    if (!has.stmt) fail("cannot read the file's tables");
    if (sqlite3_step(has.stmt) != SQLITE_ROW) exec(t.extensions_table);
  }
  const std::string rtree = "rtree_" + table + "_" + column;
  exec("CREATE VIRTUAL TABLE " + quotedIdentifier(rtree) + " USING rtree(id, minx, maxx, miny, maxy)");
  if (!fillPackedRtree(db, rtree, std::move(boxes))) fail("cannot fill " + rtree);
  exec("INSERT INTO gpkg_extensions (table_name, column_name, extension_name, definition, scope) VALUES (" +
       quotedLiteral(table) + ", " + quotedLiteral(column) + ", 'gpkg_rtree_index', " + quotedLiteral(t.definition) +
       ", " + quotedLiteral(t.scope) + ")");
  for (const auto& trigger : t.triggers) exec(trigger);
}

}  // namespace reachwise::io
