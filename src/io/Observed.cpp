#include "reachwise/io/Observed.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/ForcingFiles.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"

namespace reachwise::io {

std::vector<double> observedOnAxis(const RawSeries& series, const routing::TimeAxis& axis) {
  std::vector<double> out(axis.steps, std::numeric_limits<double>::quiet_NaN());
  const std::vector<double> t = series.t_s.values();
  for (std::size_t i = 0; i < axis.steps; ++i) {
    const double at = axis.at(static_cast<double>(i));
    // First observation after `at` (less the same-instant slack).
    const auto next = std::upper_bound(t.begin(), t.end(), at + kSameInstant_s);
    const std::size_t k = static_cast<std::size_t>(next - t.begin());
    if (k > 0 && std::abs(t[k - 1] - at) <= kSameInstant_s) {
      out[i] = series.q_m3s[k - 1];
    } else if (k > 0 && k < t.size() && t[k] - t[k - 1] <= axis.dt_s + kSameInstant_s) {
      const double w = (at - t[k - 1]) / (t[k] - t[k - 1]);
      out[i] = series.q_m3s[k - 1] + w * (series.q_m3s[k] - series.q_m3s[k - 1]);
    }
  }
  return out;
}

Observations readObservations(const std::filesystem::path& path, const routing::TimeAxis& axis,
                              units::System unit) {
  // A NetCDF file carries its own units; `unit` is for CSV.
  const RawForcing raw = isNetcdfFile(path) ? readObservedNetcdf(path)
                                            : static_cast<RawForcing>(readForcingCsvFile(path, unit, CsvValues::Observed));
  Observations obs;
  obs.file = raw.file;
  for (const auto& [id, series] : raw.series) {
    auto values = observedOnAxis(series, axis);
    if (std::none_of(values.begin(), values.end(), [](double v) { return !std::isnan(v); }))
      obs.warnings.push_back(fmt::format("{}: the observations of {} have no value within the run "
                                         "(none at or within one step of a run time)",
                                         obs.file, id));
    obs.values.emplace(id, std::move(values));
  }
  return obs;
}

}  // namespace reachwise::io
