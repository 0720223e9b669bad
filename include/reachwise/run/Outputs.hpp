#pragma once
/// \file
/// Every output of a run (GeoPackage, CSV tables, NetCDF series, HTML
/// report), opened before routing, so that a refused output costs no
/// routing time, and committed together once all are written: a failed
/// run leaves nothing that looks complete. A run with lakes writes them in
/// the same outputs (`lakes`, `lake_series`), before the commit like every
/// other table.

#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/io/LakesWriter.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/io/SavedState.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/routing/TimeAxis.hpp"
#include "reachwise/run/RoutedLakes.hpp"

namespace reachwise::report {
struct CalibrationComparison;
struct ReportEnsemble;
}

namespace reachwise::run {

struct LoadedNetwork;

/// What a run writes. Everything empty/false: nothing (the results stay
/// in memory, e.g. for a calibration loop).
struct OutputRequest {
  std::string gpkg;         ///< a new results GeoPackage (written under a temporary name, renamed at the end),
                            ///< or a PostgreSQL database (`PG:...`): the tables go into `schema`
  std::string schema;       ///< the schema of results in a database (empty: io::kDefaultSchema)
  bool write_back = false;  ///< instead: the result layers into the network's own GeoPackage, prefixed `rw_`
  std::string csv_dir;      ///< the tables and hydrographs as CSV files into this folder
  std::string series_nc;    ///< the chosen hydrographs as CF-NetCDF instead of the GeoPackage table
  std::string report_dir;   ///< the HTML run report into this folder
  /// Reach ids (comma-separated) drawn in panels of their own in the
  /// report (namedReaches(); needs `report_dir`); empty: none.
  std::string report_reaches;
  std::string hydrographs = "auto";   ///< which reaches' hydrographs: see chooseSeries()
  /// The state at the end of the run (io::SavedState), to continue from
  /// with RouteRequest::initial_state; empty: not written.
  std::string state_nc;
  bool overwrite = false;   ///< replace existing outputs (else an existing one is an InputError naming it)
  /// The unit system of every output (GeoPackage, CSV, NetCDF, report;
  /// io/OutputUnits.hpp); unset: the network's input units
  /// (`[network] units`). Routing stays SI either way.
  std::optional<units::System> units;
  /// The calibration the run comes from, for the report (null: none; must
  /// outlive the run).
  const report::CalibrationComparison* calibration = nullptr;
  /// An ensemble run's member names, in member order (empty: a single
  /// run): the hydrograph tables gain a `member` column (beginMember()),
  /// and commit() takes the members' results. A NetCDF series file
  /// (`series_nc`) is refused with members.
  std::vector<std::string> members;
};

/// The prefix of written-back layers (`rw_reaches`, ...).
inline constexpr const char* kWriteBackPrefix = "rw_";

/// Sets `lake_id` on the nodes each lake sits on: the top node of the reach
/// its outflow enters; for a lake whose outflow is shared (a bifurcation)
/// or that ends the network (terminal), the bifurcation or outlet nodes at
/// the bottom of its inflowing reaches.
void markLakeNodes(routing::NetworkResults& results, const std::vector<LakeResult>& lakes);

class Outputs {
public:
  /// Opens every requested output for `net` routed over `axis`; throws
  /// InputError naming the output that exists (without `overwrite`) or
  /// cannot be created. `history` goes into the NetCDF `history` attribute.
  /// `extra` sinks (owned by the caller, may be empty) receive every series
  /// beside the files. `net` and `plan` must outlive the object.
  /// `gauge_ids`: the gauges the run is compared with (their tables in the
  /// CSV folder and their series in the NetCDF file), in the order commit()
  /// gets them.
  Outputs(const OutputRequest& request, const LoadedNetwork& net, const network::NetworkPlan& plan,
          const routing::TimeAxis& axis, const std::string& history,
          std::vector<routing::SeriesSink*> extra = {}, std::vector<std::string> gauge_ids = {});
  ~Outputs();
  Outputs(const Outputs&) = delete;
  Outputs& operator=(const Outputs&) = delete;

  /// Where the router sends each finished series.
  routing::SeriesSink& sink();

  /// Ensemble runs: the series given to sink() from now on are member
  /// `m`'s (OutputRequest::members). The report draws member 0's series
  /// only (the reference member); the hydrograph tables take every member's.
  void beginMember(std::size_t m);

  /// Writes the summaries, the gauges (the ones given to the constructor, in
  /// that order), the lakes (`lakes`: routedLakes() with their routing,
  /// every lake the run routes) and the report, each under a temporary
  /// name, then puts them all in place with one io::OutputCommit: all
  /// appear or none (docs/formats.md, "Putting the outputs in place").
  /// `state`: the end state, written to OutputRequest::state_nc (must be
  /// given when that is set).
  /// `ensemble` (with OutputRequest::members, required then) adds the
  /// members' percentiles and peaks to the tables, and `report_ensemble`
  /// (may be null) the members' band to the report's outlet panels.
  void commit(const routing::NetworkResults& results, const io::RunInfo& info,
              const std::vector<io::LakeOutput>& lakes = {}, const std::vector<io::GaugeOutput>& gauges = {},
              const io::SavedState* state = nullptr, const io::EnsembleOutput* ensemble = nullptr,
              const report::ReportEnsemble* report_ensemble = nullptr);

  /// The unit system the outputs are written in (OutputRequest::units, or
  /// the network's).
  units::System units() const noexcept { return units_; }

  /// The GeoPackage written (the network itself with write-back), or empty.
  const std::string& geopackage() const noexcept { return gpkg_target_; }

  /// Notes from commit(): interrupted commits of earlier runs it finished.
  const std::vector<std::string>& notes() const noexcept { return notes_; }

private:
  struct Writers;
  OutputRequest request_;
  const LoadedNetwork& net_;
  const network::NetworkPlan& plan_;
  std::string gpkg_target_;
  units::System units_ = units::System::SI;
  bool has_lakes_ = false;             ///< the network has lakes: lake tables in every output
  bool lake_series_ = false;           ///< the lakes' series are written (hydrographs are)
  std::vector<std::string> lake_ids_;  ///< the lakes the run routes, in order
  std::vector<std::string> gauge_ids_; ///< the gauges the run is compared with, in order
  /// The CSV folder when this run made it (`outer`: the outermost folder
  /// made): removed again, when empty, unless the outputs were committed.
  struct MadeFolder {
    std::filesystem::path inner, outer;
    bool keep = false;
    ~MadeFolder();
  };
  MadeFolder made_csv_;               ///< destroyed after the writers
  std::unique_ptr<Writers> w_;
  std::vector<std::string> notes_;
};

/// Every output path `request` names, with its option, for
/// io::refuseOutputOverInput (the CSV folder as the files written into it,
/// the report folder as a whole).
std::vector<io::NamedPath> outputPaths(const OutputRequest& request);

}  // namespace reachwise::run
