#pragma once
// A layer of result rows written through GDAL (private to src/io): what the
// results writers share.

#include <ogrsf_frmts.h>

#include <filesystem>
#include <string>
#include <vector>

#include "ResultsTables.hpp"

namespace reachwise::io::results {

/// Creates layer `name` in `ds` with `columns` and writes `rows`, each with
/// its point from `points` (when `geometry` is wkbPoint; x, y pairs in the
/// rows' order). Date-times are written at `utc_offset_min`. Throws
/// InputError naming `file` when GDAL refuses. In a PostgreSQL database,
/// `schema` is the schema of the new table and `name` GDAL's name for it,
/// `schema.table`; elsewhere `schema` is empty.
void writeRowsLayer(const std::filesystem::path& file, GDALDataset& ds, const std::string& name,
                    OGRSpatialReference* srs, OGRwkbGeometryType geometry, const std::vector<Column>& columns,
                    const std::vector<Row>& rows, const std::vector<std::pair<double, double>>& points,
                    int utc_offset_min, const std::string& schema = {});

}  // namespace reachwise::io::results
