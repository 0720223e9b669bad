#pragma once
/// \file
/// Forcing in CF-NetCDF (docs/formats.md, "NetCDF layout"): dimensions
/// `time` and `reach`, `time` in "seconds since 1970-01-01T00:00:00Z"
/// (reading also minutes/hours/days since any ISO 8601 reference), the
/// `reach_id` strings (NC_STRING, or a char array on reading), and
/// variables `inflow` and/or `lateral` (m3 s-1; ft3 s-1 converted) on
/// (time, reach) — (reach, time) is read too. Chunks hold the whole time
/// series of one reach, so reading one reach touches one chunk.
///
/// Large files are meant to be read through `NetcdfForcingSource`, which
/// keeps only the axis and the reach ids in memory and reads a reach's
/// series when asked, where one reach's series lies together in the file;
/// a variable laid out otherwise (time by time) is read whole, in file
/// order, when its first series is asked for.

#include <cstddef>
#include <filesystem>
#include <functional>
#include <memory>
#include <mutex>
#include <span>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include "reachwise/io/Forcing.hpp"
#include "reachwise/io/ForcingAxis.hpp"

namespace reachwise::io {

class OutputCommit;

namespace detail {
class SeriesFile;
}

struct ForcingNetcdfOptions {
  std::string title = "reachwise forcing";
  std::string source;                 ///< e.g. "reachwise 0.1.0 (abc123)"
  std::string history;
  int deflate_level = 1;              ///< 0-9; 0 = uncompressed
  bool single_precision = false;      ///< store 32-bit floats (half the bytes; 7 digits)
};

/// Streams forcing to a new file reach by reach (for generators of large
/// synthetic forcing). Temporary name, renamed by `finish()`, removed when
/// destroyed unfinished. Reaches not written keep _FillValue, which readers
/// take as "no series of this kind".
class NetcdfForcingWriter {
public:
  NetcdfForcingWriter(std::filesystem::path path, const routing::TimeAxis& axis,
                      std::vector<std::string> reach_ids, bool with_inflow, bool with_lateral,
                      const ForcingNetcdfOptions& options = {});
  ~NetcdfForcingWriter();

  /// `values_m3s.size()` must be axis.steps; values finite and >= 0.
  void write(ForcingKind kind, std::size_t reach, std::span<const double> values_m3s);
  /// Closes the file and renames it in place (with `into`: hands it over).
  void finish(OutputCommit* into = nullptr);

private:
  std::unique_ptr<detail::SeriesFile> file_;
  int inflow_var_ = -1;
  int lateral_var_ = -1;
};

/// Writes all of `forcing` (reaches: the union of both kinds, sorted).
void writeForcingNetcdf(const std::filesystem::path& path, const Forcing& forcing,
                        const ForcingNetcdfOptions& options = {});

/// Reads a forcing file's axis and reach ids; series on demand. Thread-safe
/// (netCDF calls are serialised by one process-wide lock).
class NetcdfForcingSource final : public ForcingSource {
public:
  /// Opens and checks the file: every variable's shape (buffers are sized
  /// from it, never from a dimension's name), `time` units, calendar,
  /// finite times within the years TimeAxis allows and a uniform step (of
  /// at least TimeAxis::kMinStep_s) from a whole-second start, unique
  /// reach ids, variable units.
  /// Throws InputError naming the file (and variable) on any problem.
  /// A file of more than `max_steps` times is refused before they are
  /// read (saying how to allow more).
  explicit NetcdfForcingSource(std::filesystem::path path, std::size_t max_steps = kDefaultMaxSteps);
  ~NetcdfForcingSource() override;
  NetcdfForcingSource(const NetcdfForcingSource&) = delete;
  NetcdfForcingSource& operator=(const NetcdfForcingSource&) = delete;

  const routing::TimeAxis& axis() const override { return axis_; }
  /// Reads one reach. Returns false when the file has no such variable or
  /// reach, or the reach's series is entirely _FillValue. Throws InputError
  /// (file, reach, field, time) for a partly missing, negative or
  /// non-finite series.
  bool fill(ForcingKind kind, std::string_view id, std::span<double> out) const override;
  /// All reach ids of the file when it has the variable of `kind` (a reach
  /// whose series is all _FillValue is listed but `series` returns false).
  std::vector<std::string> ids(ForcingKind kind) const override;
  void visitIds(ForcingKind kind, const std::function<void(std::string_view)>& visit) const override;
  using ForcingSource::ids;
  std::string origin(ForcingKind) const override { return path_.string(); }
  /// True when the file has the variable of `kind`: its series are read
  /// when asked for (or, laid out time by time, all at the first).
  bool readsOnDemand(ForcingKind kind) const override;

  bool has(ForcingKind kind, std::string_view id) const;
  /// Whether the variable of `kind` is held in memory, read whole at its
  /// first `fill` (kWholeReadFactor), rather than read reach by reach.
  bool readWhole(ForcingKind kind) const;

  /// A variable is read whole, in file order, at the first `fill` of its
  /// kind, when reading one reach's series would decompress or step over
  /// more than this many times its own values: chunks that hold many
  /// reaches each (chunks of one time step across all reaches, say), or
  /// contiguous (time, reach) storage, where a reach's values lie one row
  /// of the whole file apart. Reading such a file reach by reach reads it
  /// again for every reach.
  static constexpr double kWholeReadFactor = 8;
  /// ... while all variables held so by the process (ensemble members
  /// each have their own source) stay within this many bytes; beyond it a
  /// variable is read reach by reach, slowly, rather than held in memory.
  static constexpr std::size_t kWholeReadMaxBytes = std::size_t{16} << 30;

private:
  struct Variable {
    int varid = -1;
    bool time_first = true;        ///< dims (time, reach), else (reach, time)
    double fill = 0;
    double scale = 1;              ///< scale_factor × unit conversion
    double offset = 0;             ///< add_offset × unit conversion
    /// Read whole (kWholeReadFactor): how, and the raw values once read,
    /// reach by reach ([reach][time]) in the file's own type (at the first
    /// fill; both stay empty when the process's budget is spent).
    bool whole = false, is_float = false;
    std::size_t outer_chunk = 1;  ///< rows of the first dimension per chunk (1: not chunked)
    std::size_t bytes = 0;  ///< reserved from the budget, once read
    std::once_flag once;
    std::vector<float> whole_float;
    std::vector<double> whole_double;
  };
  void openVariable(ForcingKind kind);
  void readVariableWhole(ForcingKind kind, Variable& v) const;
  void readAxis();
  void readIds();

  std::filesystem::path path_;
  std::size_t max_steps_ = kDefaultMaxSteps;
  int ncid_ = -1;
  routing::TimeAxis axis_;
  std::vector<std::string> ids_;
  /// Hashes a reach id given as any string type, so a lookup by view
  /// allocates nothing (fill() runs once per reach).
  struct IdHash {
    using is_transparent = void;
    std::size_t operator()(std::string_view id) const noexcept { return std::hash<std::string_view>{}(id); }
  };
  std::unordered_map<std::string, std::size_t, IdHash, std::equal_to<>> index_;
  mutable Variable vars_[2];  ///< mutable: read whole at the first fill
};

/// The variable of observed discharge in a NetCDF observations file.
inline constexpr const char* kObservedNetcdfVariable = "discharge";

/// Reads observed discharges (gauge records, docs/formats.md "Observed
/// hydrographs"): `discharge` on (time, reach) keyed by `reach_id`, or on
/// (time, gauge) keyed by `gauge_id` when the file has those; (station,
/// time) is read too. `time` as for forcing, but any strictly increasing
/// times (no uniform step). _FillValue and NaN are missing values and are
/// skipped; other values must be finite and >= 0 after `scale_factor`,
/// `add_offset` and the unit (m3 s-1 or ft3 s-1, from `units`). Every
/// station is listed, also one without a value. Throws InputError naming
/// the file, variable, id and time.
RawForcing readObservedNetcdf(const std::filesystem::path& path);

/// Reads a whole forcing file into memory (small files, tests). Reaches
/// whose series of a kind is all _FillValue have no series of that kind.
Forcing readForcingNetcdf(const std::filesystem::path& path);

}  // namespace reachwise::io
