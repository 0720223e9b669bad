#pragma once
/// \file
/// Forcing from CSV files (docs/formats.md, "Forcing input").
///
/// Long form `reach_id,time,discharge` (columns in any order) or wide form
/// `time,R12,R13,...`, told apart by the header. Times are ISO 8601 (see
/// IsoTime.hpp). Tolerated: a UTF-8 byte-order mark, CRLF line ends, blanks
/// around fields, quoted fields (RFC 4180, `""` inside quotes), blank lines.
///
/// The run axis (the rule, also in docs/formats.md):
///  - step: `dt_s` if given, else the inflow file's own step (else the
///    lateral file's). Without `dt_s`, every reach of a file must be on one
///    uniform step and both files on the same step and grid; with `dt_s`,
///    every series is resampled to it by linear interpolation between its
///    samples (instantaneous values, as hydrographs are).
///  - start / end: given, else the earliest / latest time in either file.
///    end − start must be a whole number of steps.
///  - a series is held at its first value before its first sample and at
///    its last value after its last one; each such hold is reported in
///    Forcing::warnings.
/// Any violation is an InputError naming the file and, where one exists,
/// the line.

#include <cstdint>
#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/io/Forcing.hpp"

namespace reachwise::io {

/// One CSV record and the 1-based line it starts on.
struct CsvRecord {
  std::vector<std::string> fields;   ///< unquoted, not trimmed
  std::int64_t line = 0;
};

/// Splits CSV text into records (RFC 4180 quoting; a leading BOM dropped;
/// LF or CRLF; empty lines skipped). `file` only names the source in an
/// InputError for an unterminated quote or text after a closing quote.
std::vector<CsvRecord> parseCsvRecords(std::string_view text, const std::string& file);

struct CsvForcingOptions {
  std::optional<double> dt_s;                 ///< `--dt`: resample to this step, s
  std::optional<std::int64_t> start_unix_s;   ///< run start; default: earliest time in the data
  std::optional<std::int64_t> end_unix_s;     ///< run end (inclusive); default: latest time
  units::System unit = units::System::SI;     ///< USCustomary: discharge in ft^3/s (cfs)
};

enum class CsvLayout { Long, Wide };

/// The samples of one reach as read, before they are put on the axis.
struct RawSeries {
  std::vector<double> t_s;            ///< seconds since the epoch, strictly increasing
  std::vector<double> q_m3s;          ///< already converted to m^3/s
  std::vector<std::int64_t> line;     ///< line of each sample, for messages
};

/// One forcing CSV file as read and checked (times parsed and ordered per
/// reach, discharges numeric, finite, >= 0).
struct CsvForcingFile {
  std::string file;
  CsvLayout layout = CsvLayout::Long;
  std::map<std::string, RawSeries, std::less<>> series;
  int utc_offset_min = 0;             ///< offset of the first time stamp in the file
};

/// Reads and checks one file. Throws InputError (file, line, field).
CsvForcingFile readForcingCsvFile(const std::filesystem::path& path,
                                  units::System unit = units::System::SI);

/// Puts one or two files on the common run axis by the rule above. Either
/// pointer may be null, not both.
Forcing buildForcing(const CsvForcingFile* inflow, const CsvForcingFile* lateral,
                     const CsvForcingOptions& options);

/// readForcingCsvFile + buildForcing. At least one path must be given.
Forcing readForcingCsv(const std::optional<std::filesystem::path>& inflow,
                       const std::optional<std::filesystem::path>& lateral,
                       const CsvForcingOptions& options = {});

}  // namespace reachwise::io
