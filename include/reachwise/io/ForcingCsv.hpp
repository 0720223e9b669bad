#pragma once
/// \file
/// Forcing from CSV files (docs/formats.md, "Forcing input").
///
/// Long form `reach_id,time,discharge` (columns in any order) or wide form
/// `time,R12,R13,...`, told apart by the header. Times are ISO 8601 (see
/// IsoTime.hpp); the file is read a block at a time and split into
/// records by CsvScanner, numbers read by parseCsvNumber (CsvRecords.hpp).
/// Each value is stored once (a wide file's columns share the rows' times);
/// the samples read are put on the run's axis by the rule of
/// ForcingAxis.hpp. Any violation is an InputError naming the file and,
/// where one exists, the line.

#include <filesystem>
#include <optional>

#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/io/Forcing.hpp"
#include "reachwise/io/ForcingAxis.hpp"

namespace reachwise::io {

/// The axis asked for (ForcingAxis.hpp) and the unit discharges are in.
struct CsvForcingOptions : AxisRequest {
  units::System unit = units::System::SI;     ///< USCustomary: discharge in ft^3/s (cfs)
};

enum class CsvLayout { Long, Wide };

/// One forcing CSV file as read and checked (times parsed and ordered per
/// reach, discharges numeric, finite, >= 0).
struct CsvForcingFile : RawForcing {
  CsvLayout layout = CsvLayout::Long;
};

/// What the values of a file are: forcing (every value present) or
/// observations, where an empty cell, `NA` or `NaN` (any case) is a missing
/// value and is skipped (in the wide form an empty cell is always skipped).
enum class CsvValues { Forcing, Observed };

/// Reads and checks one file. Throws InputError (file, line, field).
CsvForcingFile readForcingCsvFile(const std::filesystem::path& path,
                                  units::System unit = units::System::SI,
                                  CsvValues values = CsvValues::Forcing);

/// readForcingCsvFile + buildForcing. At least one path must be given.
Forcing readForcingCsv(const std::optional<std::filesystem::path>& inflow,
                       const std::optional<std::filesystem::path>& lateral,
                       const CsvForcingOptions& options = {});

}  // namespace reachwise::io
