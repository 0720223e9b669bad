#include "reachwise/io/LakesWriter.hpp"

#include <algorithm>
#include <cmath>

#include "reachwise/routing/Peak.hpp"

namespace reachwise::io {

LakeFigures lakeFigures(const routing::LakeRouting& routing, const routing::TimeAxis& axis) {
  const auto& r = routing.result;
  const routing::Peak in = routing::findPeak(routing.inflow_m3s);
  const routing::Peak out = routing::findPeak(r.outflow_m3s);
  LakeFigures f;
  f.inflow_peak_m3s = in.value;
  f.inflow_peak_time_s = axis.at(in.index);
  f.outflow_peak_m3s = out.value;
  f.outflow_peak_time_s = axis.at(out.index);
  f.attenuation_pct = in.value > 0 ? 100.0 * (1.0 - out.value / in.value) : std::nan("");
  f.lag_s = (out.index - in.index) * axis.dt_s;
  f.peak_level_m = r.level_m.empty() ? std::nan("") : *std::max_element(r.level_m.begin(), r.level_m.end());
  f.peak_storage_m3 = r.storage_m3.empty() ? std::nan("") : *std::max_element(r.storage_m3.begin(), r.storage_m3.end());
  return f;
}

}  // namespace reachwise::io
