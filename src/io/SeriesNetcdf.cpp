#include "reachwise/io/SeriesNetcdf.hpp"

#include <fmt/format.h>
#include <netcdf.h>

#include <cmath>

#include "NetcdfSeriesFile.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/OutputUnits.hpp"

namespace reachwise::io {

namespace {

/// `v` (SI) in `system`; a view of `v` itself for SI, else of `buffer`.
std::span<const double> inUnits(std::span<const double> v, units::System system, Quantity quantity,
                                std::vector<double>& buffer) {
  if (system == units::System::SI) return v;
  buffer.resize(v.size());
  for (std::size_t k = 0; k < v.size(); ++k) buffer[k] = toOutputUnits(system, quantity, v[k]);
  return buffer;
}

}  // namespace

NetcdfSeriesWriter::NetcdfSeriesWriter(std::filesystem::path path, const routing::TimeAxis& axis,
                                       std::vector<std::string> reach_ids,
                                       const SeriesNetcdfOptions& options)
    : reach_ids_(std::move(reach_ids)), written_(reach_ids_.size(), false), units_(options.units) {
  const auto unit = [&](Quantity q) { return std::string(unitUdunits(units_, q)); };
  // "water_volume_transport_in_river_channel" is the CF standard name for
  // river discharge in m3 s-1 (CF standard name table, from memory).
  std::vector<detail::SeriesVariable> vars{
      {"outflow", unit(Quantity::Discharge), "discharge at the downstream end of the reach",
       "water_volume_transport_in_river_channel"}};
  if (options.depth) {
    depth_var_ = static_cast<int>(vars.size());
    vars.push_back({"depth", unit(Quantity::Length), "flow depth at the downstream end of the reach", ""});
  }
  if (options.velocity) {
    velocity_var_ = static_cast<int>(vars.size());
    vars.push_back({"velocity", unit(Quantity::Velocity), "mean velocity at the downstream end of the reach", ""});
  }
  detail::SeriesFileOptions file_options;
  file_options.title = options.title;
  file_options.source = options.source;
  file_options.history = options.history;
  file_options.deflate_level = options.deflate_level;
  std::vector<detail::SeriesStations> more;
  if (!options.lake_ids.empty()) {
    lake_var_ = static_cast<int>(vars.size());
    lake_ids_ = options.lake_ids;
    lake_written_.assign(lake_ids_.size(), false);
    more.push_back({"lake", "lake_id", "lake id", lake_ids_,
                    {{"lake_level", unit(Quantity::Length), "water level of the lake (in the datum of its levels)", ""},
                     {"lake_storage", unit(Quantity::Volume), "water volume stored in the lake above its empty level", ""},
                     {"lake_inflow", unit(Quantity::Discharge), "discharge flowing into the lake", ""},
                     {"lake_outflow", unit(Quantity::Discharge), "discharge flowing out of the lake", ""}}});
  }
  if (!options.gauge_ids.empty()) {
    gauge_var_ = static_cast<int>(vars.size()) + (lake_var_ >= 0 ? 4 : 0);
    gauge_ids_ = options.gauge_ids;
    gauge_written_.assign(gauge_ids_.size(), false);
    more.push_back({"gauge", "gauge_id", "gauge id", gauge_ids_,
                    {{"observed_q", unit(Quantity::Discharge), "observed discharge at the gauge (on the run's time axis)", ""},
                     {"simulated_q", unit(Quantity::Discharge), "routed discharge at the downstream end of the gauge's reach", ""}}});
  }
  file_ = std::make_unique<detail::SeriesFile>(std::move(path), axis, reach_ids_, std::move(vars),
                                               file_options, std::move(more));
}

NetcdfSeriesWriter::~NetcdfSeriesWriter() = default;

const std::filesystem::path& NetcdfSeriesWriter::temporaryPath() const noexcept {
  return file_->temporaryPath();
}

void NetcdfSeriesWriter::write(std::uint32_t reach, std::span<const double> q_m3s,
                               std::span<const double> depth_m, std::span<const double> velocity_ms) {
  if (reach >= written_.size())
    throw InternalError(fmt::format("reach index {} beyond the {} reaches of {}", reach,
                                    written_.size(), file_->path().string()));
  if (written_[reach])
    throw InternalError(fmt::format("reach {} written twice to {}", reach_ids_[reach],
                                    file_->path().string()));
  std::vector<double> buffer;
  file_->write(0, reach, inUnits(q_m3s, units_, Quantity::Discharge, buffer));
  if (depth_var_ >= 0 && !depth_m.empty())
    file_->write(static_cast<std::size_t>(depth_var_), reach, inUnits(depth_m, units_, Quantity::Length, buffer));
  if (velocity_var_ >= 0 && !velocity_ms.empty())
    file_->write(static_cast<std::size_t>(velocity_var_), reach,
                 inUnits(velocity_ms, units_, Quantity::Velocity, buffer));
  written_[reach] = true;
  ++written_count_;
}

void NetcdfSeriesWriter::writeLake(std::size_t lake, std::span<const double> level_m,
                                   std::span<const double> storage_m3, std::span<const double> inflow_m3s,
                                   std::span<const double> outflow_m3s) {
  if (lake >= lake_written_.size())
    throw InternalError(fmt::format("lake index {} beyond the {} lakes of {}", lake, lake_written_.size(),
                                    file_->path().string()));
  if (lake_written_[lake])
    throw InternalError(fmt::format("lake {} written twice to {}", lake_ids_[lake], file_->path().string()));
  const auto first = static_cast<std::size_t>(lake_var_);
  std::vector<double> buffer;
  file_->write(first, lake, inUnits(level_m, units_, Quantity::Length, buffer));
  file_->write(first + 1, lake, inUnits(storage_m3, units_, Quantity::Volume, buffer));
  file_->write(first + 2, lake, inUnits(inflow_m3s, units_, Quantity::Discharge, buffer));
  file_->write(first + 3, lake, inUnits(outflow_m3s, units_, Quantity::Discharge, buffer));
  lake_written_[lake] = true;
}

void NetcdfSeriesWriter::writeGauge(std::size_t gauge, std::span<const double> observed_m3s,
                                    std::span<const double> simulated_m3s) {
  if (gauge >= gauge_written_.size())
    throw InternalError(fmt::format("gauge index {} beyond the {} gauges of {}", gauge, gauge_written_.size(),
                                    file_->path().string()));
  if (gauge_written_[gauge])
    throw InternalError(fmt::format("gauge {} written twice to {}", gauge_ids_[gauge], file_->path().string()));
  // A missing observation is the variable's _FillValue (CF conventions §2.5.1).
  const auto filled = [this](std::span<const double> v) {
    std::vector<double> out(v.begin(), v.end());
    for (double& x : out)
      x = std::isnan(x) ? NC_FILL_DOUBLE : toOutputUnits(units_, Quantity::Discharge, x);
    return out;
  };
  const auto first = static_cast<std::size_t>(gauge_var_);
  file_->write(first, gauge, filled(observed_m3s));
  file_->write(first + 1, gauge, filled(simulated_m3s));
  gauge_written_[gauge] = true;
}

void NetcdfSeriesWriter::finish(OutputCommit* into) {
  for (std::size_t k = 0; k < gauge_written_.size(); ++k)
    if (!gauge_written_[k])
      throw InternalError(fmt::format("gauge {} never written to {}", gauge_ids_[k], file_->path().string()));
  for (std::size_t k = 0; k < lake_written_.size(); ++k)
    if (!lake_written_[k])
      throw InternalError(fmt::format("lake {} never written to {}", lake_ids_[k], file_->path().string()));
  if (written_count_ != written_.size()) {
    std::vector<std::string> missing;
    for (std::size_t i = 0; i < written_.size() && missing.size() < 5; ++i)
      if (!written_[i]) missing.push_back(reach_ids_[i]);
    throw InternalError(fmt::format("{} of {} reaches never written to {} (first: {})",
                                    written_.size() - written_count_, written_.size(),
                                    file_->path().string(), fmt::join(missing, ", ")));
  }
  file_->finish(into);
}

}  // namespace reachwise::io
