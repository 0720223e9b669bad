#pragma once
/// \file
/// What each column of the results GeoPackage means, for a GIS: a title
/// with its unit ("peak discharge (m³/s)") and a sentence, written into
/// the GeoPackage schema extension's `gpkg_data_columns` table (OGC
/// GeoPackage 1.3, "Schema" extension, `gpkg_schema`). A column name has
/// one meaning in every table it appears in; values are SI.

#include <string>
#include <string_view>

class GDALDataset;

namespace reachwise::io {

struct ColumnMeaning {
  std::string_view title;        ///< short, with the unit, e.g. "peak discharge (m³/s)"
  std::string_view description;  ///< one sentence
};

/// The meaning of a results column; nullptr for a name it does not know.
const ColumnMeaning* columnMeaning(std::string_view column);

/// Records the meaning of every known column of table `table` (a layer or
/// table of `ds`, a GeoPackage) in `gpkg_data_columns`, creating the
/// extension's tables and its two `gpkg_extensions` rows when missing, and
/// replacing rows of the same table and column. Throws InputError naming
/// `file` and the table when SQLite refuses.
void describeColumns(GDALDataset& ds, const std::string& file, const std::string& table);

}  // namespace reachwise::io
