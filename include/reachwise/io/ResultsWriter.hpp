#pragma once
/// \file
/// Routing results as layers and tables any GIS opens (docs/formats.md,
/// "Outputs"): `reaches` (lines), `nodes` (points), `confluence_branches`,
/// `hydrographs` and `run_info` (tables), and for a run with lakes `lakes`
/// (polygons) and `lake_series` (table), in a GeoPackage, written back into
/// the input GeoPackage under a prefix, or as CSV files.
///
/// Every writer builds its output where a failure cannot leave something
/// that looks complete: a new GeoPackage or CSV file is written under a
/// temporary name and renamed in `commit()` (or handed to an OutputCommit
/// that puts a run's outputs in place together); a write-back runs in one
/// transaction that `commit()` (or that OutputCommit, last) ends. Destroying a writer without `commit()`
/// (an exception, a cancelled run) removes or rolls back what it wrote.

#include <array>
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <memory>
#include <span>
#include <limits>
#include <string>
#include <vector>

#include "reachwise/io/LakesWriter.hpp"
#include "reachwise/gauges/Skill.hpp"
#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/routing/TimeAxis.hpp"

class GDALDataset;
class OGRLayer;
class OGRFeature;

namespace reachwise::io {

class OutputCommit;

namespace detail {
struct TextFileOutput;
}

/// What was run, for the `run_info` table. The time axis, version and git
/// hash are added by the writer; warnings are these plus NetworkResults'
/// (a warning in both is listed once).
struct RunInfo {
  std::vector<std::string> inputs;   ///< network, forcing and config files (one `input` row each)
  std::string method;                ///< `vpmc`, `mc` or `muskingum`
  std::string command_line;
  std::vector<std::string> warnings; ///< one `warning` row each
  std::string series_file;           ///< NetCDF file holding the hydrographs instead (`series` row), if any
  /// The unit system of the run's outputs (`units` row: `si` or `us`).
  units::System units = units::System::SI;
  /// Processes that routed the run together (`ranks` row; MPI ranks).
  int ranks = 1;
  /// An ensemble run's members, in member order (a `members` row with
  /// their count and one `member` row each); empty: not an ensemble.
  std::vector<std::string> members;
};

/// The percentiles an ensemble run gives of its members' peaks (the
/// `_p10`, `_p50`, `_p90` fields of `reaches`).
inline constexpr double kEnsemblePercentiles[3] = {10, 50, 90};

/// An ensemble run's results across its members (docs/formats.md,
/// "Ensembles"): the spread of the members' peaks per reach for the
/// `reaches` layer, and each member's peaks for `member_reaches`. Plain
/// data, by plan index.
struct EnsembleOutput {
  std::vector<std::string> members;   ///< names, in member order
  /// Per plan reach, the kEnsemblePercentiles of the members' peak discharge
  /// (m^3/s) and peak time (s since the epoch); NaN where no member peaks.
  std::vector<std::array<double, 3>> peak_q_m3s, peak_time_s;
  /// Per plan reach: the members with a peak there (those the percentiles count).
  std::vector<std::uint32_t> counted;
  /// Per member and plan reach, member-major (`[m * reaches + i]`).
  std::vector<double> member_peak_q_m3s, member_peak_time_s, member_volume_out_m3;
};

/// The caution every run_info table carries.
extern const char* const kResultsCaution;

/// Which reaches' hydrographs are written (the caller decides).
class SeriesSelection {
public:
  static SeriesSelection all() { return SeriesSelection(true, {}); }
  static SeriesSelection none() { return SeriesSelection(false, {}); }
  /// Plan indices; out-of-range indices are an InvalidParameter at use.
  static SeriesSelection of(std::vector<std::uint32_t> reaches) {
    return SeriesSelection(false, std::move(reaches));
  }
  /// One flag per plan reach.
  std::vector<bool> mask(std::size_t n_reaches) const;

private:
  SeriesSelection(bool all, std::vector<std::uint32_t> reaches)
      : all_(all), reaches_(std::move(reaches)) {}
  bool all_;
  std::vector<std::uint32_t> reaches_;
};

struct GpkgWriterOptions {
  bool overwrite = false;                        ///< replace an existing output / prefixed layers
  SeriesSelection series = SeriesSelection::all();
  std::size_t batch_rows = 10000;                ///< rows per transaction (new file only)
  bool depth_velocity = true;                    ///< write depth and velocity in `hydrographs`
  /// The GeoPackage standard stores date-times in UTC (`...Z`), and GDAL
  /// warns of anything else as non-conformant; so by default they are
  /// written in UTC, and `run_info` keeps the run's offset (`utc_offset_min`,
  /// `start`, `end`). `true` writes them with the run's offset as the
  /// time-zone flag instead (read correctly by GDAL, not by every reader).
  bool local_offset_times = false;
  /// The run has lakes: the `lakes` layer and the `lake_series` table are
  /// written (writeLakes(), required before commit()).
  bool lakes = false;
  /// Fill `lake_series` (else it stays empty, as `hydrographs` does when the
  /// series go to a NetCDF file).
  bool lake_series = true;
  /// The unit system of every value written (io/OutputUnits.hpp: values
  /// converted, unit-suffixed field names and column titles follow).
  units::System units = units::System::SI;
  /// An ensemble run: `hydrographs` starts with a `member` column, set by
  /// setMember() before each member's series.
  bool member_column = false;
  /// Write on a thread of the writer's own while routing runs, fed through
  /// a bounded queue (64 MiB at most; the router's threads wait when it is
  /// full): each series as it comes, each reach's row of `reaches` as soon
  /// as its summary is final (summarised()), each node's rows of `nodes`
  /// and `confluence_branches` as soon as the node is (nodeFinished()),
  /// with the feature ids writing them in order after routing would give
  /// (reach: plan index + 1; node: position + 1), so the tables' contents
  /// do not depend on the order reaches finish in. A GeoPackage only (a
  /// new file or a write-back): a database, and an ensemble
  /// (`member_column`), write as without it.
  bool background = false;
};

/// Writes results into a GeoPackage. Use: construct, let the scheduler
/// stream series into it (SeriesSink), call writeSummaries(), then commit().
/// Table rows of plan reach i come from `table.reaches[plan.record[i]]`;
/// geometry is written in `table.crs_wkt` (no CRS when it is empty), each
/// line drawn in flow direction (`plan.reversed`).
/// Both `table` and `plan` must outlive the writer.
/// One gauge compared with the run: where it stands and how well the run
/// matches its record (docs/formats.md, "Gauges in the results").
struct GaugeOutput {
  std::string gauge_id, reach_id;
  double x = 0, y = 0;                    ///< the gauge (layer), else the reach's downstream end
  double snap_distance_m = std::numeric_limits<double>::quiet_NaN();  ///< NaN: the reach was named
  gauges::SkillScores skill;
  const std::vector<double>* observed = nullptr;   ///< on the run's axis, NaN: none
  const std::vector<double>* simulated = nullptr;  ///< the reach's outflow on the run's axis
};

class GpkgResultsWriter final : public routing::SeriesSink {
public:
  /// A new GeoPackage at `out`. Throws InputError naming `out` when it
  /// exists and `options.overwrite` is false, or when it cannot be created.
  GpkgResultsWriter(std::filesystem::path out, const network::ReachTable& table,
                    const network::NetworkPlan& plan, const routing::TimeAxis& axis,
                    GpkgWriterOptions options = {});

  /// Adds the layers, named `prefix` + name (e.g. `rw_reaches`), to the
  /// existing GeoPackage `input`, leaving its other layers untouched; when
  /// `input` is a PostgreSQL database (`PG:...`), as tables in the schema
  /// of the network layer `table.layer`, as intoDatabase() does. All
  /// writes form one transaction. Throws InputError naming `input` when it
  /// is not a GeoPackage, cannot be opened for update, or already holds a
  /// prefixed layer and `options.overwrite` is false (with it, those layers
  /// are deleted and written anew).
  static std::unique_ptr<GpkgResultsWriter> writeBack(std::filesystem::path input,
                                                      std::string prefix,
                                                      const network::ReachTable& table,
                                                      const network::NetworkPlan& plan,
                                                      const routing::TimeAxis& axis,
                                                      GpkgWriterOptions options = {});

  /// Writes the layers and tables into schema `schema` of the PostgreSQL/
  /// PostGIS database `connection` (GDAL's `PG:` syntax), creating the
  /// schema when missing. Everything, the schema and the replacement of
  /// earlier results included, is one transaction that commit() (or the
  /// OutputCommit, last) ends, so a failed run leaves the database as it
  /// was. Throws InputError naming the server (without its password) and
  /// the table when the database cannot be opened for writing, the schema
  /// already holds a results table and `options.overwrite` is false, or a
  /// table would be the network layer itself. `schema` must be 1–63 bytes
  /// without NUL.
  static std::unique_ptr<GpkgResultsWriter> intoDatabase(std::string connection, std::string schema,
                                                         const network::ReachTable& table,
                                                         const network::NetworkPlan& plan,
                                                         const routing::TimeAxis& axis, GpkgWriterOptions options);
  ~GpkgResultsWriter() override;
  GpkgResultsWriter(const GpkgResultsWriter&) = delete;
  GpkgResultsWriter& operator=(const GpkgResultsWriter&) = delete;

  /// Appends one row per time step to `hydrographs` for a selected reach
  /// (ignored otherwise). `q_m3s` must have axis.steps values; depth and
  /// velocity the same or be empty (then NULL).
  void write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
             std::span<const double> velocity_ms) override;
  bool wants(std::uint32_t reach) const override { return reach < selected_.size() && selected_[reach]; }
  /// With `options.background`: queues reach `reach`'s row of `reaches`.
  void summarised(std::uint32_t reach, const routing::ReachSummary& summary) override;
  /// With `options.background`: queues the node's row of `nodes` and its rows of `confluence_branches`.
  void nodeFinished(std::size_t position, std::size_t first_branch, const routing::NodeSummary& node) override;
  bool wantsSummaries() const override { return background_ != nullptr; }

  /// Writes `reaches`, `nodes`, `confluence_branches` and `run_info`; with
  /// `ensemble`, `reaches` gains the members' percentile fields and the
  /// `member_reaches` table is written.
  void writeSummaries(const routing::NetworkResults& results, const RunInfo& info,
                      const EnsembleOutput* ensemble = nullptr);

  /// The member the following write() calls belong to (`member` column;
  /// with `options.member_column` only).
  void setMember(std::string name) { member_ = std::move(name); }

  /// Writes `lakes` (one polygon per routed lake, in the table's CRS) and,
  /// with `options.lake_series`, their rows of `lake_series`. Only with
  /// `options.lakes`; every lake must be routed.
  void writeLakes(const std::vector<LakeOutput>& lakes);

  /// Writes `gauges` (a point per gauge with its skill scores) and
  /// `gauge_series` (observed and simulated discharge per gauge and time).
  void writeGauges(const std::vector<GaugeOutput>& gauges);

  /// Ends the writing: commits, closes, and (new file) renames onto the
  /// target. With `into`, the finished file is handed to it instead (a
  /// write-back's transaction then ends as its last step).
  void commit(OutputCommit* into = nullptr);

  /// Where rows go until commit(): the temporary file, or the input itself.
  const std::filesystem::path& workingPath() const noexcept { return working_; }
  std::size_t hydrographRows() const noexcept { return hydrograph_rows_; }

private:
  struct WriteBackTag {};
  /// Into an existing data source: a GeoPackage (`schema` empty) or a
  /// PostgreSQL database (`schema` the target schema).
  GpkgResultsWriter(WriteBackTag, std::filesystem::path input, std::string schema, std::string prefix,
                    const network::ReachTable& table, const network::NetworkPlan& plan,
                    const routing::TimeAxis& axis, GpkgWriterOptions options);
  /// The table `base` in SQL: quoted, with its schema in a database.
  std::string sqlTable(const char* base) const;
  /// In a database: indexes the series tables and comments every column.
  void finishDatabaseTables();
  void openSeriesTable();
  /// Records what every column means (gpkg_data_columns, io::describeColumns).
  void describeTables();
  void openLakeSeriesTable();
  void rowWritten();
  void countRow();
  /// GDAL's name of table `base`: `prefix` + base, after `schema.` in a database.
  std::string layerName(const char* base) const {
    return schema_.empty() ? prefix_ + base : schema_ + "." + prefix_ + base;
  }
  [[noreturn]] void fail(const std::string& what) const;
  /// The rows of one series in `hydrographs`.
  void writeSeriesRows(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
                       std::span<const double> velocity_ms);
  /// Creates `reaches` (with the ensemble's fields when `ensemble` is given).
  void createReachesLayer(const EnsembleOutput* ensemble);
  /// The row of plan reach `i` in `reaches`.
  void writeReachRow(std::size_t i, const routing::ReachSummary& summary, const EnsembleOutput* ensemble);
  /// Creates `nodes` and `confluence_branches`.
  void createNodeLayers();
  /// The row of the node at `position` of NetworkResults::nodes in `nodes`.
  void writeNodeRow(std::size_t position, const routing::NodeSummary& node);
  /// The node's rows of `confluence_branches`, after `first_branch` rows of the nodes before it.
  void writeBranchRows(std::size_t first_branch, const routing::NodeSummary& node);
  /// Adds `row` to `layer` with feature id `fid` (background writing: rows
  /// come in the order reaches finish), else with the next id.
  void insertAt(OGRLayer& layer, OGRFeature& row, std::size_t fid);
  /// options.background: the writing thread, its queue and how it ended.
  struct Background;
  struct BackgroundJob;
  void startBackground();
  void runBackground();
  void writeJob(const BackgroundJob& job);
  /// Lets the writing thread finish what is queued (`abandon`: drop it)
  /// and joins it; without `abandon`, rethrows what stopped it.
  void stopBackground(bool abandon);
  int timeOffsetMin(int run_offset_min) const { return options_.local_offset_times ? run_offset_min : 0; }

  std::filesystem::path target_;    ///< what the user named
  std::filesystem::path working_;   ///< where GDAL writes
  std::string prefix_;
  std::string schema_;              ///< in a PostgreSQL database: the target schema; else empty
  bool write_back_ = false;         ///< into an existing data source, in one transaction
  const network::ReachTable& table_;
  const network::NetworkPlan& plan_;
  routing::TimeAxis axis_;
  GpkgWriterOptions options_;
  std::vector<bool> selected_;
  std::unique_ptr<GDALDataset> ds_;
  OGRLayer* series_layer_ = nullptr;
  OGRLayer* lake_series_layer_ = nullptr;
  std::unique_ptr<OGRFeature> series_feature_;   ///< reused for every row
  struct SeriesRows;
  std::unique_ptr<SeriesRows> series_rows_;      ///< a GeoPackage's: its rows through SQLite
  struct PackedIndexes;
  std::unique_ptr<PackedIndexes> packed_indexes_;  ///< a GeoPackage's: the boxes of `reaches` and `nodes`
  OGRLayer* reaches_layer_ = nullptr;
  std::unique_ptr<OGRFeature> reach_feature_;    ///< reused for every row of `reaches`
  std::vector<bool> reach_written_;              ///< per plan reach: its row is in `reaches`
  OGRLayer* nodes_layer_ = nullptr;
  OGRLayer* branches_layer_ = nullptr;
  std::unique_ptr<OGRFeature> node_feature_, branch_feature_;
  std::vector<bool> node_written_;               ///< per node position: written by the writing thread
  std::unique_ptr<Background> background_;       ///< null: rows are written by the calling thread
  std::size_t rows_in_transaction_ = 0;
  std::size_t hydrograph_rows_ = 0;
  bool summaries_written_ = false;
  bool lakes_written_ = false;
  std::string member_;              ///< the `member` of the rows write() adds
  bool committed_ = false;
};

/// The lakes of a run, for writeCsvTables.
struct CsvLakes {
  const std::vector<LakeOutput>* lakes = nullptr;   ///< null: the run has no lakes (no lake files)
  bool series = true;                               ///< fill `lake_series.csv` (else its header only)
};

/// Writes `reaches.csv` (with a WKT `geometry` column), `nodes.csv` (x, y),
/// `confluence_branches.csv` and `run_info.csv` into `dir` (created when
/// missing), and with lakes `lakes.csv` (a WKT `geometry` column) and
/// `lake_series.csv`, with gauges (`gauges` not null) `gauges.csv` (the
/// fields of the `gauges` layer, then x, y) and `gauge_series.csv`
/// (gauge_id, time, observed_q, simulated_q), each under a temporary name
/// renamed on success (with `into`: handed to it, put in place with the
/// run's other outputs). Throws InputError naming the file when one exists
/// and `overwrite` is false.
/// Text is quoted when it holds a comma, quote or line break; NaN is empty.
/// Values are written in `units` (io/OutputUnits.hpp; unit-suffixed column
/// names follow; `run_info.csv` records the system).
/// With `ensemble`, `reaches.csv` gains the members' percentile fields and
/// `member_reaches.csv` is written.
void writeCsvTables(const std::filesystem::path& dir, bool overwrite,
                    const network::ReachTable& table, const network::NetworkPlan& plan,
                    const routing::NetworkResults& results, const RunInfo& info,
                    const CsvLakes& lakes = {}, const std::vector<GaugeOutput>* gauges = nullptr,
                    OutputCommit* into = nullptr, units::System units = units::System::SI,
                    const EnsembleOutput* ensemble = nullptr);

/// The name of the per-member table an ensemble run writes (`.csv` in a folder).
inline constexpr const char* kMemberReachesTable = "member_reaches";

/// The names of the lake files writeCsvTables writes.
inline constexpr const char* kCsvLakeFiles[] = {"lakes.csv", "lake_series.csv"};
/// The names of the gauge files writeCsvTables writes.
inline constexpr const char* kCsvGaugeFiles[] = {"gauges.csv", "gauge_series.csv"};

/// Streams `hydrographs.csv` (reach_id, time, q, depth, velocity; values in
/// `system`; with `member_column` a leading `member`, set by setMember())
/// into `dir`; the file appears under its name in commit().
class CsvSeriesWriter final : public routing::SeriesSink {
public:
  CsvSeriesWriter(const std::filesystem::path& dir, bool overwrite, const network::NetworkPlan& plan,
                  const routing::TimeAxis& axis, SeriesSelection selection = SeriesSelection::all(),
                  units::System system = units::System::SI, bool member_column = false);
  ~CsvSeriesWriter() override;
  /// The member the following write() calls belong to (with `member_column`).
  void setMember(const std::string& name);
  bool wants(std::uint32_t reach) const override { return reach < selected_.size() && selected_[reach]; }
  CsvSeriesWriter(const CsvSeriesWriter&) = delete;
  CsvSeriesWriter& operator=(const CsvSeriesWriter&) = delete;

  void write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
             std::span<const double> velocity_ms) override;
  /// Finishes the file and puts it in place (with `into`: hands it over).
  void commit(OutputCommit* into = nullptr);

private:
  std::unique_ptr<detail::TextFileOutput> out_;
  const network::NetworkPlan& plan_;
  routing::TimeAxis axis_;
  std::vector<bool> selected_;
  units::System units_;
  int fraction_digits_ = 0;
  bool member_column_ = false;
  std::string member_;   ///< quoted, with its comma
};

/// Passes every series on to several sinks (e.g. a GeoPackage and a CSV
/// writer), in the order given. The sinks must outlive it.
class SeriesFanOut final : public routing::SeriesSink {
public:
  explicit SeriesFanOut(std::vector<routing::SeriesSink*> sinks) : sinks_(std::move(sinks)) {}
  void write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
             std::span<const double> velocity_ms) override {
    for (auto* sink : sinks_)
      if (sink && sink->wants(reach)) sink->write(reach, q_m3s, depth_m, velocity_ms);
  }
  bool wants(std::uint32_t reach) const override {
    for (auto* sink : sinks_)
      if (sink && sink->wants(reach)) return true;
    return false;
  }
  void summarised(std::uint32_t reach, const routing::ReachSummary& summary) override {
    for (auto* sink : sinks_)
      if (sink && sink->wantsSummaries()) sink->summarised(reach, summary);
  }
  void nodeFinished(std::size_t position, std::size_t first_branch, const routing::NodeSummary& node) override {
    for (auto* sink : sinks_)
      if (sink && sink->wantsSummaries()) sink->nodeFinished(position, first_branch, node);
  }
  bool wantsSummaries() const override {
    for (auto* sink : sinks_)
      if (sink && sink->wantsSummaries()) return true;
    return false;
  }

private:
  std::vector<routing::SeriesSink*> sinks_;
};

}  // namespace reachwise::io
