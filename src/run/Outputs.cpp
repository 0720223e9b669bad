#include "reachwise/run/Outputs.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <filesystem>

#include "reachwise/Error.hpp"
#include "reachwise/io/Database.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/SeriesNetcdf.hpp"
#include "reachwise/report/Report.hpp"
#include "reachwise/run/Network.hpp"
#include "reachwise/run/RoutedLakes.hpp"
#include "reachwise/run/SeriesChoice.hpp"
#include "reachwise/version.hpp"

namespace reachwise::run {

namespace {

namespace fs = std::filesystem;

/// Forwards the series of selected plan reaches to a sink that numbers
/// them 0..k-1 in plan order (the NetCDF series file holds only those).
class SelectedSeries final : public routing::SeriesSink {
public:
  SelectedSeries(const std::vector<bool>& mask, routing::SeriesSink& inner) : inner_(inner) {
    position_.assign(mask.size(), kNone);
    std::uint32_t k = 0;
    for (std::size_t i = 0; i < mask.size(); ++i)
      if (mask[i]) position_[i] = k++;
  }
  void write(std::uint32_t reach, std::span<const double> q, std::span<const double> d,
             std::span<const double> v) override {
    if (position_[reach] != kNone) inner_.write(position_[reach], q, d, v);
  }
  bool wants(std::uint32_t reach) const override { return position_[reach] != kNone; }

private:
  static constexpr std::uint32_t kNone = ~0u;
  std::vector<std::uint32_t> position_;
  routing::SeriesSink& inner_;
};

/// Passes series on while open (the report takes the reference member's only).
class GatedSeries final : public routing::SeriesSink {
public:
  explicit GatedSeries(routing::SeriesSink& inner) : inner_(inner) {}
  void write(std::uint32_t reach, std::span<const double> q, std::span<const double> d,
             std::span<const double> v) override {
    if (open) inner_.write(reach, q, d, v);
  }
  bool wants(std::uint32_t reach) const override { return open && inner_.wants(reach); }
  bool open = true;

private:
  routing::SeriesSink& inner_;
};

}  // namespace

void markLakeNodes(routing::NetworkResults& results, const std::vector<LakeResult>& lakes) {
  for (auto& node : results.nodes) {
    const bool bottom = node.kind == routing::NodeKind::Outlet || node.kind == routing::NodeKind::Bifurcation;
    for (const LakeResult& lake : lakes) {
      const bool one_out = lake.outflow_reaches.size() == 1;
      const auto& reaches = !bottom && one_out ? lake.outflow_reaches : lake.inflow_reaches;
      if ((bottom == !one_out) && std::find(reaches.begin(), reaches.end(), node.reach) != reaches.end())
        node.lake_id = lake.lake_id;
    }
  }
}

struct Outputs::Writers {
  std::unique_ptr<io::GpkgResultsWriter> gpkg;
  std::unique_ptr<io::CsvSeriesWriter> csv;
  std::unique_ptr<io::NetcdfSeriesWriter> netcdf;
  std::unique_ptr<SelectedSeries> netcdf_selected;
  std::unique_ptr<report::ReportSeries> report;
  std::unique_ptr<GatedSeries> report_gate;
  std::unique_ptr<io::SeriesFanOut> fan_out;
};

Outputs::Outputs(const OutputRequest& request, const LoadedNetwork& net, const network::NetworkPlan& plan,
                 const routing::TimeAxis& axis, const std::string& history,
                 std::vector<routing::SeriesSink*> extra, std::vector<std::string> gauge_ids)
    : request_(request), net_(net), plan_(plan), units_(request.units.value_or(net.config.units)),
      gauge_ids_(std::move(gauge_ids)), w_(std::make_unique<Writers>()) {
  const OutputRequest& o = request_;
  const io::SeriesSelection selection = chooseSeries(o.hydrographs, plan);
  const bool ensemble = !o.members.empty();
  if (ensemble && !o.series_nc.empty()) {
    InputLocation at;
    at.file = o.series_nc;
    at.field = "series";
    throw InputError(at, "an ensemble run (--members) writes its members' hydrographs into the GeoPackage or CSV "
                         "hydrographs table (with a member column); a NetCDF series file is not written for "
                         "ensembles: leave out --series");
  }
  std::vector<routing::SeriesSink*> sinks = std::move(extra);
  // Lakes: a `lakes` and a `lake_series` table in every output; their series
  // go where the hydrographs go, and not at all with `--hydrographs none`.
  has_lakes_ = net.lakes.has_value();
  if (net.lakes)
    for (const auto& lake : net.lakes->lakes) lake_ids_.push_back(lake.lake_id);
  if (has_lakes_) {
    const std::vector<bool> mask = selection.mask(plan.size());
    lake_series_ = std::find(mask.begin(), mask.end(), true) != mask.end();
  }
  // A new GeoPackage (temporary name, renamed on success) or prefixed
  // layers in the input GeoPackage; with a NetCDF series file the chosen
  // hydrographs go there instead of the GeoPackage table.
  io::GpkgWriterOptions wo;
  wo.overwrite = o.overwrite;
  wo.series = o.series_nc.empty() ? selection : io::SeriesSelection::none();
  wo.lakes = has_lakes_;
  wo.lake_series = lake_series_ && o.series_nc.empty();
  wo.units = units_;
  wo.member_column = ensemble;
  wo.background = true;   // the GeoPackage's rows are written while routing runs (not in a database)
  if (o.write_back) {
    w_->gpkg = io::GpkgResultsWriter::writeBack(net.source.path, kWriteBackPrefix, net.table, plan, axis, wo);
    gpkg_target_ = net.source.path;
  } else if (io::isDatabaseSource(o.gpkg)) {
    w_->gpkg = io::GpkgResultsWriter::intoDatabase(o.gpkg, o.schema.empty() ? io::kDefaultSchema : o.schema,
                                                   net.table, plan, axis, wo);
    gpkg_target_ = fmt::format("{} (schema {})", io::redactedConnection(o.gpkg),
                               o.schema.empty() ? io::kDefaultSchema : o.schema);
  } else if (!o.gpkg.empty()) {
    w_->gpkg = std::make_unique<io::GpkgResultsWriter>(o.gpkg, net.table, plan, axis, wo);
    gpkg_target_ = o.gpkg;
  }
  if (w_->gpkg) sinks.push_back(w_->gpkg.get());
  if (!o.csv_dir.empty()) {
    // A folder made for this run is removed again when the run fails.
    std::error_code ec;
    made_csv_.inner = fs::absolute(o.csv_dir, ec).lexically_normal();
    if (!made_csv_.inner.has_filename()) made_csv_.inner = made_csv_.inner.parent_path();
    for (fs::path p = made_csv_.inner; !p.empty() && !fs::exists(p, ec); p = p.parent_path()) {
      made_csv_.outer = p;
      if (p == p.parent_path()) break;
    }
    fs::create_directories(o.csv_dir, ec);
    w_->csv = std::make_unique<io::CsvSeriesWriter>(o.csv_dir, o.overwrite, plan, axis, selection, units_, ensemble);
    if (ensemble)  // refused now rather than after routing
      io::refuseExisting(fs::path(o.csv_dir) / (std::string(io::kMemberReachesTable) + ".csv"), o.overwrite);
    if (has_lakes_)  // refused now rather than after routing
      for (const char* name : io::kCsvLakeFiles) io::refuseExisting(fs::path(o.csv_dir) / name, o.overwrite);
    if (!gauge_ids_.empty())  // likewise
      for (const char* name : io::kCsvGaugeFiles) io::refuseExisting(fs::path(o.csv_dir) / name, o.overwrite);
    sinks.push_back(w_->csv.get());
  }
  if (!o.series_nc.empty()) {
    io::refuseExisting(o.series_nc, o.overwrite);
    const std::vector<bool> mask = selection.mask(plan.size());
    std::vector<std::string> ids;
    for (std::size_t i = 0; i < plan.size(); ++i)
      if (mask[i]) ids.push_back(plan.reach_id[i]);
    io::SeriesNetcdfOptions so;
    so.source = fmt::format("reachwise {} ({})", kVersion, kGitHash);
    so.history = history;
    if (lake_series_) so.lake_ids = lake_ids_;
    so.gauge_ids = gauge_ids_;
    so.units = units_;
    w_->netcdf = std::make_unique<io::NetcdfSeriesWriter>(o.series_nc, axis, std::move(ids), so);
    w_->netcdf_selected = std::make_unique<SelectedSeries>(mask, *w_->netcdf);
    sinks.push_back(w_->netcdf_selected.get());
  }
  if (!o.state_nc.empty()) {  // refused now rather than after routing
    io::refuseExisting(o.state_nc, o.overwrite);
    io::requireParentFolder(o.state_nc);
  }
  if (!o.report_reaches.empty() && o.report_dir.empty()) {
    InputLocation at;
    at.field = "report_reaches";
    throw InputError(at, "names reaches to draw in the report, but no report is asked for (--report DIR)");
  }
  if (!o.report_dir.empty()) {
    io::refuseExisting(o.report_dir, o.overwrite);
    w_->report = std::make_unique<report::ReportSeries>(plan, axis, namedReaches(o.report_reaches, plan, "report_reaches"));
    w_->report_gate = std::make_unique<GatedSeries>(*w_->report);
    sinks.push_back(w_->report_gate.get());
  }
  w_->fan_out = std::make_unique<io::SeriesFanOut>(std::move(sinks));
}

Outputs::~Outputs() = default;

Outputs::MadeFolder::~MadeFolder() {
  if (keep || outer.empty()) return;
  // The folders this run made, innermost first, as long as they are empty
  // (the writers, destroyed before, have removed their temporary files).
  std::error_code ec;
  for (fs::path p = inner;; p = p.parent_path()) {
    if (!fs::is_directory(p, ec) || !fs::is_empty(p, ec) || !fs::remove(p, ec)) break;
    if (p == outer || p == p.parent_path()) break;
  }
}

std::vector<io::NamedPath> outputPaths(const OutputRequest& o) {
  std::vector<io::NamedPath> out;
  if (!o.gpkg.empty() && !o.write_back && !io::isDatabaseSource(o.gpkg)) out.push_back({"--out", o.gpkg});
  if (!o.series_nc.empty()) out.push_back({"--series", o.series_nc});
  if (!o.state_nc.empty()) out.push_back({"--save-state", o.state_nc});
  if (!o.csv_dir.empty()) {
    io::NamedPath csv{"--csv", o.csv_dir, true, {"reaches.csv", "nodes.csv", "confluence_branches.csv",
                                                  "run_info.csv", "hydrographs.csv"}};
    for (const char* name : io::kCsvLakeFiles) csv.names.emplace_back(name);
    for (const char* name : io::kCsvGaugeFiles) csv.names.emplace_back(name);
    if (!o.members.empty()) csv.names.push_back(std::string(io::kMemberReachesTable) + ".csv");
    out.push_back(std::move(csv));
  }
  if (!o.report_dir.empty()) out.push_back({"--report", o.report_dir, true, {}});
  return out;
}

routing::SeriesSink& Outputs::sink() { return *w_->fan_out; }

void Outputs::beginMember(std::size_t m) {
  if (m >= request_.members.size()) throw InternalError("Outputs::beginMember: no such member");
  const std::string& name = request_.members[m];
  if (w_->gpkg) w_->gpkg->setMember(name);
  if (w_->csv) w_->csv->setMember(name);
  if (w_->report_gate) w_->report_gate->open = m == 0;
}

void Outputs::commit(const routing::NetworkResults& results, const io::RunInfo& info,
                     const std::vector<io::LakeOutput>& lakes, const std::vector<io::GaugeOutput>& gauges,
                     const io::SavedState* state, const io::EnsembleOutput* ensemble,
                     const report::ReportEnsemble* report_ensemble) {
  if (!request_.state_nc.empty() && !state) throw InternalError("a state file is asked for, but no state given");
  if (request_.members.empty() != !ensemble)
    throw InternalError("Outputs::commit: an ensemble's results go with the members the outputs were opened for");
  // The lakes must be the ones the outputs were opened for, in that order.
  bool same = lakes.size() == lake_ids_.size();
  for (std::size_t k = 0; same && k < lakes.size(); ++k)
    same = lakes[k].lake && lakes[k].routing && lakes[k].lake->lake_id == lake_ids_[k];
  if (!same) throw InternalError("the lakes given to Outputs::commit are not the lakes the run routes");
  same = gauges.size() == gauge_ids_.size();
  for (std::size_t g = 0; same && g < gauges.size(); ++g)
    same = gauges[g].gauge_id == gauge_ids_[g] && gauges[g].observed && gauges[g].simulated;
  if (!same) throw InternalError("the gauges given to Outputs::commit are not the gauges the outputs were opened for");
  if (w_->gpkg) {
    w_->gpkg->writeSummaries(results, info, ensemble);
    if (has_lakes_) w_->gpkg->writeLakes(lakes);
    if (!gauges.empty()) w_->gpkg->writeGauges(gauges);
  }
  // Every output is finished under its temporary name and handed to one
  // OutputCommit, which puts them all in place at the end, or none.
  io::OutputCommit all(request_.overwrite);
  if (w_->report) {
    report::ReportInputs ri{net_.table, plan_, results, info, gpkg_target_, units_ == units::System::USCustomary};
    ri.lakes = lakes;
    ri.gauges = gauges;
    ri.calibration = request_.calibration;
    ri.ensemble = report_ensemble;
    report::writeReport(request_.report_dir, ri, *w_->report, request_.overwrite, &all);
  }
  if (w_->csv) {
    io::CsvLakes csv_lakes;
    if (has_lakes_) csv_lakes = {&lakes, lake_series_};
    io::writeCsvTables(request_.csv_dir, request_.overwrite, net_.table, plan_, results, info, csv_lakes,
                       gauges.empty() ? nullptr : &gauges, &all, units_, ensemble);
    w_->csv->commit(&all);
  }
  if (w_->netcdf) {
    for (std::size_t k = 0; k < lakes.size() && lake_series_; ++k) {
      const auto& r = *lakes[k].routing;
      w_->netcdf->writeLake(k, r.result.level_m, r.result.storage_m3, r.inflow_m3s, r.result.outflow_m3s);
    }
    for (std::size_t g = 0; g < gauges.size(); ++g)
      w_->netcdf->writeGauge(g, *gauges[g].observed, *gauges[g].simulated);
    w_->netcdf->finish(&all);
  }
  if (!request_.state_nc.empty()) {
    io::StateFileOptions so;
    so.source = fmt::format("reachwise {} ({})", kVersion, kGitHash);
    so.history = info.command_line;
    io::writeStateFile(request_.state_nc, *state, so, all);
  }
  if (w_->gpkg) w_->gpkg->commit(&all);
  all.commit();
  notes_ = all.recoveredNotes();
  made_csv_.keep = true;
}

}  // namespace reachwise::run
