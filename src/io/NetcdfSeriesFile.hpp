#pragma once
/// \file
/// Private to src/io: the CF `time × reach` file layout shared by the
/// forcing writer and the routed-series writer (docs/formats.md, "NetCDF
/// layout"), the lock every netCDF-C call takes, and error checking.

#include <cstddef>
#include <filesystem>
#include <mutex>
#include <sys/types.h>
#include <span>
#include <string>
#include <vector>

#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {
class OutputCommit;
}

namespace reachwise::io::detail {

/// netCDF-C documents no thread safety (its shared state spans files), so
/// every netCDF call in reachwise takes this one process-wide lock.
std::mutex& netcdfMutex();

/// Throws InputError naming `file` and what was being done when `status`
/// is not NC_NOERR.
void check(int status, const std::filesystem::path& file, const std::string& doing);

/// nc_open(path, NC_NOWRITE, ncid), after refusing a classic-format header
/// that netCDF-C would crash on (io::classicHeaderProblem; the first 16 MB
/// of the file are looked at). Returns nc_open's status; throws InputError
/// naming `path` for a refused header.
int openForReading(const std::filesystem::path& path, int* ncid);

/// The units string written on (and expected, among others, of) `time`.
inline constexpr const char* kTimeUnits = "seconds since 1970-01-01T00:00:00Z";

struct SeriesVariable {
  std::string name;            ///< netCDF variable name
  std::string units;           ///< UDUNITS string, e.g. "m3 s-1"
  std::string long_name;
  std::string standard_name;   ///< CF standard name, or empty
};

/// A further set of series on a dimension of its own beside `reach` (e.g.
/// the lakes of a run): its ids and one variable (time, dimension) each.
struct SeriesStations {
  std::string dimension;      ///< e.g. "lake"
  std::string id_variable;    ///< e.g. "lake_id" (NC_STRING, cf_role timeseries_id)
  std::string id_long_name;   ///< e.g. "lake id"
  std::vector<std::string> ids;
  std::vector<SeriesVariable> variables;
};

struct SeriesFileOptions {
  std::string title;
  std::string source;
  std::string history;
  int deflate_level = 1;           ///< 0 = none; shuffle is on whenever deflate is
  std::size_t reach_chunk = 1;     ///< reaches per chunk (time is always whole)
  /// Store values as 32-bit floats (7 significant digits: ample for
  /// discharges, half the bytes to store and inflate on reading).
  bool single_precision = false;
};

/// A CF file with dimensions `time` and `reach`, coordinate `time`, the
/// `reach_id` strings, and one double (or float) variable (time, reach) per entry of
/// `variables`, filled with _FillValue until written; and for each entry of
/// `more` its dimension, id strings and variables likewise. Variables are
/// numbered in that order: `variables` first, then each set's. Created under a
/// temporary name beside `path`; `finish()` closes and renames it; the
/// destructor removes it when `finish()` was not reached.
class SeriesFile {
public:
  SeriesFile(std::filesystem::path path, const routing::TimeAxis& axis,
             const std::vector<std::string>& reach_ids, std::vector<SeriesVariable> variables,
             const SeriesFileOptions& options, std::vector<SeriesStations> more = {});
  ~SeriesFile();
  SeriesFile(const SeriesFile&) = delete;
  SeriesFile& operator=(const SeriesFile&) = delete;

  /// Writes the whole series of `variable` for reach `reach` (an index into
  /// `reach_ids`, or into the ids of the variable's set). `values.size()`
  /// must be the axis length.
  void write(std::size_t variable, std::size_t reach, std::span<const double> values);

  /// Closes the file and renames it to its final name (replacing a file
  /// already there: whether that is allowed is the caller's decision).
  void finish(OutputCommit* into = nullptr);

  const std::filesystem::path& path() const noexcept { return path_; }
  const std::filesystem::path& temporaryPath() const noexcept { return temp_; }
  std::size_t reachCount() const noexcept { return reaches_; }
  std::size_t steps() const noexcept { return steps_; }

private:
  void define(const routing::TimeAxis& axis, const std::vector<std::string>& reach_ids,
              const SeriesFileOptions& options, const std::vector<SeriesStations>& more);
  void abandon() noexcept;
  /// nc_close; when it fails, the file's descriptors are pointed at
  /// /dev/null and it is closed again, so that nothing of it stays open in
  /// HDF5. Returns the first nc_close's status; `ncid_` is -1 after.
  /// `error` (may be null): errno as the first close left it.
  int closeOrDiscard(int* error = nullptr) noexcept;

  std::filesystem::path path_;
  std::filesystem::path temp_;
  std::vector<SeriesVariable> variables_;
  std::vector<int> varids_;
  std::vector<std::size_t> var_length_;   ///< length of each variable's second dimension
  std::size_t reaches_ = 0;
  std::size_t steps_ = 0;
  int ncid_ = -1;
  bool finished_ = false;
  /// The temporary file's device and inode, to find its descriptors.
  dev_t dev_ = 0;
  ino_t ino_ = 0;
  bool have_identity_ = false;
};

}  // namespace reachwise::io::detail
