#pragma once
/// \file
/// What each column of the results GeoPackage means, for a GIS: a title
/// with its unit ("peak discharge (m³/s)") and a sentence, written into
/// the GeoPackage schema extension's `gpkg_data_columns` table (OGC
/// GeoPackage 1.3, "Schema" extension, `gpkg_schema`). A column name has
/// one meaning in every table it appears in; the title carries the unit of
/// the run's output units (io/OutputUnits.hpp).

#include <string>
#include <string_view>

#include "reachwise/hydraulics/Units.hpp"

class GDALDataset;

namespace reachwise::io {

struct ColumnMeaning {
  std::string_view title;        ///< short, with the unit, e.g. "peak discharge (m³/s)"
  std::string_view description;  ///< one sentence
};

/// The meaning of a results column by its SI name (its title with the SI
/// unit); nullptr for a name it does not know.
const ColumnMeaning* columnMeaning(std::string_view column);

/// The title of column `column` (its name in `system`, io::fieldName) with
/// the unit of `system`, e.g. "peak discharge (ft³/s)"; empty for a name it
/// does not know.
std::string columnTitle(std::string_view column, units::System system);

/// Records the meaning of every known column of table `table` (a layer or
/// table of `ds`, a GeoPackage) in `gpkg_data_columns`, creating the
/// extension's tables and its two `gpkg_extensions` rows when missing, and
/// replacing rows of the same table and column. Titles carry the units of
/// `system`, the system the table's values are in. Throws InputError
/// naming `file` and the table when SQLite refuses.
void describeColumns(GDALDataset& ds, const std::string& file, const std::string& table,
                     units::System system = units::System::SI);

}  // namespace reachwise::io
