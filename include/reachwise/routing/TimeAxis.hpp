#pragma once
/// \file
/// A uniform time axis: the output/forcing grid of a run.

#include <cstddef>
#include <cstdint>

namespace reachwise::routing {

struct TimeAxis {
  std::int64_t start_unix_s = 0;   ///< first sample, seconds since 1970-01-01T00:00:00Z
  double dt_s = 3600.0;            ///< step, s
  std::size_t steps = 0;           ///< number of samples (times t0, t0+dt, ...)
  int utc_offset_min = 0;          ///< offset the input used; outputs are written with it

  /// Time of sample k as seconds since the epoch (may be fractional for
  /// interpolated peak times).
  double at(double k) const { return static_cast<double>(start_unix_s) + k * dt_s; }
  double duration_s() const { return steps > 0 ? static_cast<double>(steps - 1) * dt_s : 0.0; }
};

}  // namespace reachwise::routing
