#pragma once
/// \file
/// What the outputs hold of each routed lake (docs/formats.md, "Lakes and
/// reservoirs"): the `lakes` layer (polygon, peaks, attenuation, lag, peak
/// level and storage, volume balance) and the `lake_series` table (level,
/// storage, inflow and outflow on the run's time axis). The GeoPackage,
/// CSV and NetCDF writers (ResultsWriter.hpp, SeriesNetcdf.hpp) take the
/// rows below; the figures come from lakeFigures() for every output alike.

#include <cstdint>
#include <string>
#include <vector>

#include "reachwise/network/Lakes.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

/// One routed lake as the outputs see it.
struct LakeOutput {
  const network::LakeRecord* lake = nullptr;
  /// The reach(es) its outflow enters, `;`-separated; empty (written as
  /// null) for a terminal lake.
  std::string outflow_reach;
  /// Plan index of the first of them (the lake sits at its top); ~0u: a
  /// terminal lake.
  std::uint32_t reach = ~0u;
  const routing::LakeRouting* routing = nullptr;   ///< null until routed
};

/// A lake's summary figures. Peaks are interpolated between samples
/// (routing::findPeak), as for reaches; times are seconds since the epoch.
struct LakeFigures {
  double inflow_peak_m3s = 0, inflow_peak_time_s = 0;
  double outflow_peak_m3s = 0, outflow_peak_time_s = 0;
  /// 100 (1 − outflow peak / inflow peak); NaN when nothing flowed in.
  double attenuation_pct = 0;
  double lag_s = 0;              ///< outflow peak time − inflow peak time
  double peak_level_m = 0;       ///< highest sample
  double peak_storage_m3 = 0;    ///< highest sample
};

LakeFigures lakeFigures(const routing::LakeRouting& routing, const routing::TimeAxis& axis);

}  // namespace reachwise::io
