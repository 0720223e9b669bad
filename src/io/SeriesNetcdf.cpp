#include "reachwise/io/SeriesNetcdf.hpp"

#include <fmt/format.h>
#include <netcdf.h>

#include <cmath>

#include "NetcdfSeriesFile.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::io {

NetcdfSeriesWriter::NetcdfSeriesWriter(std::filesystem::path path, const routing::TimeAxis& axis,
                                       std::vector<std::string> reach_ids,
                                       const SeriesNetcdfOptions& options)
    : reach_ids_(std::move(reach_ids)), written_(reach_ids_.size(), false) {
  // "water_volume_transport_in_river_channel" is the CF standard name for
  // river discharge in m3 s-1 (CF standard name table, from memory).
  std::vector<detail::SeriesVariable> vars{
      {"outflow", "m3 s-1", "discharge at the downstream end of the reach",
       "water_volume_transport_in_river_channel"}};
  if (options.depth) {
    depth_var_ = static_cast<int>(vars.size());
    vars.push_back({"depth", "m", "flow depth at the downstream end of the reach", ""});
  }
  if (options.velocity) {
    velocity_var_ = static_cast<int>(vars.size());
    vars.push_back({"velocity", "m s-1", "mean velocity at the downstream end of the reach", ""});
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
                    {{"lake_level", "m", "water level of the lake (in the datum of its levels)", ""},
                     {"lake_storage", "m3", "water volume stored in the lake above its empty level", ""},
                     {"lake_inflow", "m3 s-1", "discharge flowing into the lake", ""},
                     {"lake_outflow", "m3 s-1", "discharge flowing out of the lake", ""}}});
  }
  if (!options.gauge_ids.empty()) {
    gauge_var_ = static_cast<int>(vars.size()) + (lake_var_ >= 0 ? 4 : 0);
    gauge_ids_ = options.gauge_ids;
    gauge_written_.assign(gauge_ids_.size(), false);
    more.push_back({"gauge", "gauge_id", "gauge id", gauge_ids_,
                    {{"observed_q", "m3 s-1", "observed discharge at the gauge (on the run's time axis)", ""},
                     {"simulated_q", "m3 s-1", "routed discharge at the downstream end of the gauge's reach", ""}}});
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
  file_->write(0, reach, q_m3s);
  if (depth_var_ >= 0 && !depth_m.empty())
    file_->write(static_cast<std::size_t>(depth_var_), reach, depth_m);
  if (velocity_var_ >= 0 && !velocity_ms.empty())
    file_->write(static_cast<std::size_t>(velocity_var_), reach, velocity_ms);
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
  file_->write(first, lake, level_m);
  file_->write(first + 1, lake, storage_m3);
  file_->write(first + 2, lake, inflow_m3s);
  file_->write(first + 3, lake, outflow_m3s);
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
  const auto filled = [](std::span<const double> v) {
    std::vector<double> out(v.begin(), v.end());
    for (double& x : out)
      if (std::isnan(x)) x = NC_FILL_DOUBLE;
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
