#pragma once
/// \file
/// Routed hydrographs to a CF-NetCDF file (docs/formats.md, "NetCDF layout"):
/// variables `outflow` (m3 s-1), `depth` (m), `velocity` (m s-1) on
/// (time, reach), written reach by reach in whatever order the scheduler
/// finishes them; for a run with lakes also `lake_level` (m),
/// `lake_storage` (m3), `lake_inflow` and `lake_outflow` (m3 s-1) on
/// (time, lake), written once routing is done; for a run compared with
/// gauges also `gauge_id`, `observed_q` and `simulated_q` (m3 s-1) on
/// (time, gauge), written once routing is done. With US customary output
/// units (`SeriesNetcdfOptions::units`) the values are converted as they are
/// written and the `units` attributes are `ft3 s-1`, `ft`, `ft s-1`, `ft3`.
///
/// The file is built under a temporary name beside the output
/// (`.OUT.partial-<pid>`, io/OutputFiles.hpp) and appears under its own name only when
/// `finish()` succeeds; a writer destroyed without `finish()` (an exception,
/// a cancelled run) removes the temporary file, so no half-written output
/// that looks complete is ever left behind.

#include <cstdint>
#include <filesystem>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

class OutputCommit;

namespace detail {
class SeriesFile;
}

struct SeriesNetcdfOptions {
  bool depth = true;               ///< write the `depth` variable
  bool velocity = true;            ///< write the `velocity` variable
  std::string title = "reachwise routed hydrographs";
  std::string source;              ///< e.g. "reachwise 0.1.0 (abc123)"
  std::string history;             ///< e.g. the command line
  int deflate_level = 1;           ///< 0-9; 0 = uncompressed
  /// The lakes whose series the file holds (a `lake` dimension and the
  /// `lake_*` variables); empty: none.
  std::vector<std::string> lake_ids;
  /// The gauges whose observed and simulated discharges the file holds (a
  /// `gauge` dimension, `observed_q` and `simulated_q`); empty: none.
  std::vector<std::string> gauge_ids;
  /// The unit system of the values written (the arguments stay SI).
  units::System units = units::System::SI;
};

class NetcdfSeriesWriter final : public routing::SeriesSink {
public:
  /// `reach_ids[i]` names plan reach i. Creates the temporary file now
  /// (throws InputError naming it when that fails).
  NetcdfSeriesWriter(std::filesystem::path path, const routing::TimeAxis& axis,
                     std::vector<std::string> reach_ids, const SeriesNetcdfOptions& options = {});
  ~NetcdfSeriesWriter() override;

  /// Writes plan reach `reach`. `q_m3s` must have axis.steps values; `depth_m`
  /// and `velocity_ms` too, or be empty (then that variable keeps its
  /// _FillValue for this reach). Writing a reach twice is an InternalError.
  void write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
             std::span<const double> velocity_ms) override;

  /// Writes lake `lake` (an index into `options.lake_ids`): its level (m),
  /// storage (m^3), inflow and outflow (m^3/s), each axis.steps values.
  /// Writing a lake twice is an InternalError.
  void writeLake(std::size_t lake, std::span<const double> level_m, std::span<const double> storage_m3,
                 std::span<const double> inflow_m3s, std::span<const double> outflow_m3s);

  /// Writes gauge `gauge` (an index into `options.gauge_ids`): its observed
  /// discharge on the run's axis (NaN: no record, written as _FillValue)
  /// and the simulated discharge of its reach (m^3/s), each axis.steps
  /// values. Writing a gauge twice is an InternalError.
  void writeGauge(std::size_t gauge, std::span<const double> observed_m3s, std::span<const double> simulated_m3s);

  /// Closes the file and gives it its final name. Throws InternalError when
  /// some reach, lake or gauge was never written (the file would look complete but
  /// is not).
  void finish(OutputCommit* into = nullptr);

  std::size_t written() const noexcept { return written_count_; }
  const std::filesystem::path& temporaryPath() const noexcept;

private:
  std::unique_ptr<detail::SeriesFile> file_;
  std::vector<std::string> reach_ids_;
  std::vector<bool> written_;
  std::size_t written_count_ = 0;
  int depth_var_ = -1;
  int velocity_var_ = -1;
  int lake_var_ = -1;                  ///< the first lake variable
  std::vector<std::string> lake_ids_;
  std::vector<bool> lake_written_;
  int gauge_var_ = -1;                 ///< the first gauge variable
  std::vector<std::string> gauge_ids_;
  std::vector<bool> gauge_written_;
  units::System units_ = units::System::SI;
};

}  // namespace reachwise::io
