#pragma once
/// \file
/// A uniform time axis: the output/forcing grid of a run.
///
/// An axis built from input goes through `TimeAxis::make`, which refuses
/// what no run can have (a step that is not a positive number or is below
/// a millisecond, no samples,
/// times outside the years 1678–2261, an offset beyond ±18:00). A
/// default-constructed axis has no step (NaN) until one is set.

#include <charconv>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <string>

#include "reachwise/Error.hpp"

namespace reachwise::routing {

struct TimeAxis {
  /// First and last instant an axis may cover, s since the epoch:
  /// 1678-01-01T00:00:00Z and 2261-12-31T23:59:59Z, the whole years within
  /// a signed 64-bit count of nanoseconds since the epoch (1677-09-21 to
  /// 2262-04-11), so that written times stay readable by tools that hold
  /// times that way.
  static constexpr std::int64_t kEarliest_unix_s = -9214560000;
  static constexpr std::int64_t kLatest_unix_s = 9214646399;
  /// Largest UTC offset, minutes (real zones lie within −12:00..+14:00;
  /// ±18:00 leaves room, common practice, as io/IsoTime reads offsets).
  static constexpr int kMaxUtcOffset_min = 18 * 60;
  /// Shortest step, s: outputs write times to the millisecond, so a
  /// shorter step would write one time stamp twice (and no river wave
  /// needs it).
  static constexpr double kMinStep_s = 1e-3;

  std::int64_t start_unix_s = 0;   ///< first sample, seconds since 1970-01-01T00:00:00Z
  double dt_s = std::numeric_limits<double>::quiet_NaN();   ///< step, s; NaN: not set
  std::size_t steps = 0;           ///< number of samples (times t0, t0+dt, ...)
  int utc_offset_min = 0;          ///< offset the input used; outputs are written with it

  /// A checked axis. Throws InvalidParameter naming the quantity ("dt",
  /// "steps", "start", "end", "utc_offset") for a step that is not finite
  /// and > 0, no steps, a first or last sample outside
  /// [kEarliest_unix_s, kLatest_unix_s], or an offset beyond ±18:00.
  static TimeAxis make(std::int64_t start_unix_s, double dt_s, std::size_t steps, int utc_offset_min = 0) {
    requireStep(dt_s);
    if (steps == 0) throw InvalidParameter("steps", "an axis needs at least one sample");
    requireUtcOffset(utc_offset_min);
    TimeAxis axis;
    axis.start_unix_s = start_unix_s;
    axis.dt_s = dt_s;
    axis.steps = steps;
    axis.utc_offset_min = utc_offset_min;
    requireInRange("start", axis.at(0));
    requireInRange("end", axis.at(static_cast<double>(steps - 1)));
    return axis;
  }

  /// Throws InvalidParameter ("dt") unless `dt_s` is finite and at least
  /// kMinStep_s.
  static void requireStep(double dt_s) {
    if (!std::isfinite(dt_s) || dt_s <= 0)
      throw InvalidParameter("dt", numberText(dt_s) + " s is not a positive time step");
    if (dt_s < kMinStep_s)
      throw InvalidParameter("dt", numberText(dt_s) + " s is shorter than the shortest time step, " +
                                       numberText(kMinStep_s) + " s (times are written to the millisecond)");
  }
  /// Throws InvalidParameter naming `quantity` unless the instant `unix_s`
  /// lies in [kEarliest_unix_s, kLatest_unix_s] (NaN does not).
  static void requireInRange(const std::string& quantity, double unix_s) {
    if (!(unix_s >= static_cast<double>(kEarliest_unix_s) && unix_s <= static_cast<double>(kLatest_unix_s)))
      throw InvalidParameter(quantity, numberText(unix_s) +
                                           " s since 1970-01-01T00:00:00Z is outside the years 1678-2261");
  }
  /// Throws InvalidParameter ("utc_offset") unless |minutes| <= 18 h.
  static void requireUtcOffset(double minutes) {
    if (!(std::abs(minutes) <= kMaxUtcOffset_min))
      throw InvalidParameter("utc_offset", numberText(minutes) + " min is beyond ±18:00");
  }

  /// Time of sample k as seconds since the epoch (may be fractional for
  /// interpolated peak times).
  double at(double k) const { return static_cast<double>(start_unix_s) + k * dt_s; }
  double duration_s() const { return steps > 0 ? static_cast<double>(steps - 1) * dt_s : 0.0; }

private:
  /// The shortest text that reads back as `v`.
  static std::string numberText(double v) {
    char text[32];
    const auto written = std::to_chars(text, text + sizeof text, v);
    return std::string(text, written.ptr);
  }
};

}  // namespace reachwise::routing
