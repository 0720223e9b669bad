#pragma once
// The spatial index of a GeoPackage layer built in one pass from its
// features' boxes (private to src/io).
//
// A GeoPackage's spatial index is an SQLite R-tree (GeoPackage 1.2, the
// gpkg_rtree_index extension). SQLite builds one entry at a time, and GDAL
// fills it that way: 8 s for the 1,000,000 points of a national run's
// `nodes`, alone at the end of the run (docs/performance.md). Packed from
// the boxes the writer already has, it takes a fraction of a second.

#include <gdal_priv.h>
#include <sqlite3.h>

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

namespace reachwise::io {

/// One feature's box as the R-tree stores it: 32-bit floats rounded
/// outwards (minima down, maxima up), so the box holds the feature.
struct RtreeBox {
  std::int64_t id;
  float min_x, max_x, min_y, max_y;
};

/// The box of [min_x, max_x] × [min_y, max_y] for feature `id`.
RtreeBox rtreeBox(std::int64_t id, double min_x, double max_x, double min_y, double max_y);

/// Fills `rtree`, an empty SQLite R-tree of two dimensions (id, minx, maxx,
/// miny, maxy) just created on `db`, with `boxes`: the tree packed by
/// Sort-Tile-Recursive (Leutenegger, Lopez & Edgington 1997, "STR: a simple
/// and efficient algorithm for R-tree packing", Proc. 13th ICDE), written
/// into the R-tree's own tables (`rtree`_node, _rowid, _parent) in SQLite's
/// R-tree format, every node full but the last of each level. Returns
/// false with nothing more written when SQLite refuses a statement (its
/// message is then sqlite3_errmsg(db)); the caller rolls back.
bool fillPackedRtree(sqlite3* db, const std::string& rtree, std::vector<RtreeBox> boxes);

/// Adds the spatial index of layer `table` (geometry column `column`, of
/// `type`) of the GeoPackage open as `ds`, inside its transaction, with
/// `boxes` (one per feature with a geometry), as GDAL adds one: the R-tree,
/// its row in gpkg_extensions and the triggers that keep it up to date as
/// features are edited later (GDAL's own, taken from an empty layer of the
/// same name that GDAL indexes in memory). The layer must have been created
/// without one (SPATIAL_INDEX=NO). Throws InputError naming `file` and the
/// layer when SQLite or GDAL refuses.
void addPackedSpatialIndex(GDALDataset& ds, const std::filesystem::path& file, const std::string& table,
                           const std::string& column, OGRwkbGeometryType type, std::vector<RtreeBox> boxes);

}  // namespace reachwise::io
