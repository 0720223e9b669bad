#pragma once
/// \file
/// Observed hydrographs (gauge records) put on the run's time axis, for
/// comparison with the simulated ones (docs/formats.md, "Observed
/// hydrographs").
///
/// The file is a CSV in the long or wide form of the forcing (ForcingCsv.hpp),
/// keyed by reach id, where a value may be missing (an empty cell, `NA`,
/// `NaN`). Observations are never held or extended: a run sample gets an
/// observed value when an observation lies at its time (within
/// kSameInstant_s), or, linearly interpolated, when it lies between two
/// consecutive observations at most one run step apart. Elsewhere (outside
/// the record, across a missing value, between observations coarser than
/// the run's step) it has none (NaN) and is not compared: no observation is
/// invented across a gap. Time stamps with
/// any UTC offset are read as instants.

#include <filesystem>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/io/Forcing.hpp"
#include "reachwise/io/ForcingAxis.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

struct Observations {
  std::string file;
  /// Reach id → observed discharge on the run's axis, m^3/s; NaN where
  /// there is none. Every series of the file, also one with no value on
  /// the axis (then all NaN, and a warning says so).
  SeriesMap values;
  std::vector<std::string> warnings;
};

/// One record put on the axis by the rule above (NaN where none).
std::vector<double> observedOnAxis(const RawSeries& series, const routing::TimeAxis& axis);

/// Reads a CSV of observations (discharge in m^3/s, or ft^3/s with
/// USCustomary) and puts it on `axis`. Throws InputError naming the file,
/// line and field.
Observations readObservations(const std::filesystem::path& path, const routing::TimeAxis& axis,
                              units::System unit = units::System::SI);

}  // namespace reachwise::io
