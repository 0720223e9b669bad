#pragma once
/// \file
/// Peak of a sampled hydrograph, located between samples.

#include <cstddef>
#include <span>

namespace reachwise::routing {

struct Peak {
  double value = 0;   ///< peak discharge (interpolated)
  double index = 0;   ///< fractional sample index of the peak
};

/// The highest sample and a parabola through it and its two neighbours
/// give the peak's value and time between samples (three-point parabolic
/// interpolation; common practice). At either end of the series, or on a
/// flat top, the sample itself is returned. An empty series gives {0, 0}.
Peak findPeak(std::span<const double> series);

/// Rise time (in samples) of the peak: from the last local minimum before
/// the highest sample up to it. 0 when the series starts at its peak.
double riseSamples(std::span<const double> series);

}  // namespace reachwise::routing
