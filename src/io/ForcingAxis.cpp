#include "reachwise/io/ForcingAxis.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <type_traits>

#include <fmt/format.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "TextLocation.hpp"

namespace reachwise::io {
namespace {

using detail::textLocation;

/// The one step every reach of `file` is sampled on: the smallest spacing
/// of any two consecutive samples (so that a gap, not the regular rows, is
/// blamed); NaN when no reach has two samples. With `require`, any other
/// spacing is an InputError.
double fileStep(const RawForcing& file, bool require) {
  // Series on the same times as the one before (every column of a wide
  // file, as a rule) give the same spacings: they are looked at once.
  double step = std::numeric_limits<double>::infinity();
  const SteppedSequence<double>* before = nullptr;
  for (const auto& entry : file.series) {
    const SteppedSequence<double>& t = entry.second.t_s;
    if (before && t == *before) continue;
    before = &t;
    for (std::size_t k = 1; k < t.size(); ++k) step = std::min(step, t[k] - t[k - 1]);
  }
  if (std::isinf(step)) return std::numeric_limits<double>::quiet_NaN();
  if (!require) return step;
  before = nullptr;
  for (const auto& [id, s] : file.series) {
    if (before && s.t_s == *before) continue;
    before = &s.t_s;
    for (std::size_t k = 1; k < s.t_s.size(); ++k) {
      const double d = s.t_s[k] - s.t_s[k - 1];
      if (std::abs(d - step) <= kSameInstant_s) continue;
      InputLocation where = textLocation(file.file, s.line[k]);
      where.reach_id = id;
      where.field = "time";
      throw InputError(where, fmt::format("a step of {} s from the previous sample, where the "
                                          "file's step is {} s; give a time step (--dt) to resample",
                                          d, step));
    }
  }
  return step;
}

double chooseStep(const RawForcing* inflow, const RawForcing* lateral,
                  const AxisRequest& request) {
  if (request.dt_s) {
    routing::TimeAxis::requireStep(*request.dt_s);
    return *request.dt_s;
  }
  const double none = std::numeric_limits<double>::quiet_NaN();
  const double in = inflow ? fileStep(*inflow, true) : none;
  const double lat = lateral ? fileStep(*lateral, true) : none;
  if (!std::isnan(in) && !std::isnan(lat) && std::abs(in - lat) > kSameInstant_s) {
    InputLocation where;
    where.file = lateral->file;
    throw InputError(where, fmt::format("its step of {} s differs from the inflow file's {} s; "
                                        "give a time step (--dt) to resample both", lat, in));
  }
  if (!std::isnan(in)) return in;
  if (!std::isnan(lat)) return lat;
  InputLocation where;
  where.file = (inflow ? inflow : lateral)->file;
  throw InputError(where, "no reach has two samples, so the time step is unknown; give one (--dt)");
}

struct Span {
  double first = 0, last = 0;
};

Span dataSpan(const RawForcing* inflow, const RawForcing* lateral) {
  Span span{std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity()};
  for (const RawForcing* f : {inflow, lateral}) {
    if (!f) continue;
    for (const auto& entry : f->series) {
      span.first = std::min(span.first, entry.second.t_s.front());
      span.last = std::max(span.last, entry.second.t_s.back());
    }
  }
  return span;
}

/// The axis index of every sample that lies on the grid (no resampling
/// asked for); an InputError for the first one off it. True when the
/// samples are the axis itself, one per step from the first (the values
/// then need no copying).
bool checkOnGrid(const RawSeries& s, const routing::TimeAxis& axis, const std::string& file,
                 const std::string& id) {
  bool identity = s.t_s.size() == axis.steps;
  for (std::size_t k = 0; k < s.t_s.size(); ++k) {
    const double index = (s.t_s[k] - axis.at(0)) / axis.dt_s;
    const double nearest = std::round(index);
    if (std::abs(index - nearest) * axis.dt_s > kSameInstant_s) {
      InputLocation where = textLocation(file, s.line[k]);
      where.reach_id = id;
      where.field = "time";
      throw InputError(where, fmt::format("the time is not on the run's grid ({} + k × {} s); "
                                          "give a time step (--dt) to resample",
                                          formatIsoTime(axis.start_unix_s, axis.utc_offset_min),
                                          axis.dt_s));
    }
    identity = identity && nearest == static_cast<double>(k);
  }
  return identity;
}

/// Places samples that lie on the grid (checkOnGrid passed).
std::vector<double> placeOnGrid(const RawSeries& s, const routing::TimeAxis& axis) {
  std::vector<double> out(axis.steps, 0.0);
  std::optional<std::size_t> lo, hi;
  for (std::size_t k = 0; k < s.t_s.size(); ++k) {
    const double nearest = std::round((s.t_s[k] - axis.at(0)) / axis.dt_s);
    if (nearest < 0 || nearest >= static_cast<double>(axis.steps)) continue;  // outside the window
    const auto i = static_cast<std::size_t>(nearest);
    out[i] = s.q_m3s[k];
    if (!lo) lo = i;
    hi = i;
  }
  if (!lo) {  // no sample inside the window: hold the nearer end value
    std::fill(out.begin(), out.end(), s.t_s.front() > axis.at(0) ? s.q_m3s.front() : s.q_m3s.back());
    return out;
  }
  std::fill(out.begin(), out.begin() + static_cast<std::ptrdiff_t>(*lo), out[*lo]);
  std::fill(out.begin() + static_cast<std::ptrdiff_t>(*hi) + 1, out.end(), out[*hi]);
  return out;
}

/// Linear interpolation in time between the samples; held at the first and
/// last value outside them.
std::vector<double> resample(const RawSeries& s, const routing::TimeAxis& axis) {
  std::vector<double> out(axis.steps);
  std::size_t j = 0;
  const std::size_t n = s.t_s.size();
  for (std::size_t k = 0; k < axis.steps; ++k) {
    const double t = axis.at(static_cast<double>(k));
    while (j + 1 < n && s.t_s[j + 1] <= t) ++j;
    if (t <= s.t_s.front()) {
      out[k] = s.q_m3s.front();
    } else if (j + 1 >= n) {
      out[k] = s.q_m3s.back();
    } else {
      const double w = (t - s.t_s[j]) / (s.t_s[j + 1] - s.t_s[j]);
      out[k] = s.q_m3s[j] + w * (s.q_m3s[j + 1] - s.q_m3s[j]);
    }
  }
  return out;
}

std::string listIds(const std::vector<std::string>& ids) {
  constexpr std::size_t kShown = 10;
  if (ids.size() <= kShown) return fmt::format("{}", fmt::join(ids, ", "));
  return fmt::format("{}, and {} more", fmt::join(ids.begin(), ids.begin() + kShown, ", "),
                     ids.size() - kShown);
}

void noteHolds(const RawForcing& file, ForcingKind kind, const routing::TimeAxis& axis,
               std::vector<std::string>& warnings) {
  std::vector<std::string> before, after;
  const double end = axis.at(static_cast<double>(axis.steps - 1));
  for (const auto& [id, s] : file.series) {
    if (s.t_s.front() > axis.at(0) + kSameInstant_s) before.push_back(id);
    if (s.t_s.back() < end - kSameInstant_s) after.push_back(id);
  }
  if (!before.empty())
    warnings.push_back(fmt::format("{} file {}: {} series held at their first value before their "
                                   "data begin: {}", kindName(kind), file.file, before.size(),
                                   listIds(before)));
  if (!after.empty())
    warnings.push_back(fmt::format("{} file {}: {} series held at their last value after their "
                                   "data end: {}", kindName(kind), file.file, after.size(),
                                   listIds(after)));
}

}  // namespace

std::string maxStepsAdvice(double needed) {
  return fmt::format("give --max-steps {:.0f} (or max_steps = {:.0f} in the run file) to allow it", needed, needed);
}

routing::TimeAxis chooseForcingAxis(const RawForcing* inflow, const RawForcing* lateral,
                                    const AxisRequest& request) {
  if (!inflow && !lateral) throw InvalidParameter("forcing", "neither an inflow nor a lateral file");
  if (request.on_axis) {
    if (request.dt_s || request.start_unix_s || request.end_unix_s)
      throw InvalidParameter("time axis", "an axis given whole excludes a time step, start or end");
    const routing::TimeAxis& a = *request.on_axis;
    return routing::TimeAxis::make(a.start_unix_s, a.dt_s, a.steps, a.utc_offset_min);
  }
  const RawForcing& main = inflow ? *inflow : *lateral;
  InputLocation where;
  where.file = main.file;
  const double dt = chooseStep(inflow, lateral, request);
  const int offset = main.utc_offset_min;
  const Span data = dataSpan(inflow, lateral);
  const double start = request.start_unix_s ? static_cast<double>(*request.start_unix_s) : data.first;
  const double end = request.end_unix_s ? static_cast<double>(*request.end_unix_s) : data.last;
  // Checked before the instants are formatted or made integers.
  try {
    routing::TimeAxis::requireInRange("start", start);
    routing::TimeAxis::requireInRange("end", end);
  } catch (const InvalidParameter& e) {
    if (request.start_unix_s && request.end_unix_s) throw;
    throw InputError(where, e.what());
  }
  if (start != std::floor(start))
    throw InputError(where, fmt::format("the run would start at its earliest sample, {}, which is not on a whole "
                                        "second; put the times on whole seconds",
                                        formatIsoTime(start, offset, 6)));
  if (end < start)
    throw InvalidParameter("end", fmt::format("the run end {} is before its start {}",
                                              formatIsoTime(end, offset, 3), formatIsoTime(start, offset, 3)));
  const double intervals = std::round((end - start) / dt);
  if (!(intervals + 1 <= static_cast<double>(request.max_steps))) {
    InputLocation at = where;
    if (inflow && lateral) at.file = inflow->file + " and " + lateral->file;
    throw InputError(at, fmt::format("the run from {} to {} at a step of {} s would have {:.0f} time steps, more "
                                     "than the {} allowed; {}, or choose a longer time step",
                                     formatIsoTime(start, offset, 3), formatIsoTime(end, offset, 3), dt,
                                     intervals + 1, request.max_steps, maxStepsAdvice(intervals + 1)));
  }
  if (std::abs(end - start - intervals * dt) > kSameInstant_s)
    throw InputError(where, fmt::format("the run from {} to {} ({} s) is not a whole number of "
                                        "{} s steps; choose a time step that divides it",
                                        formatIsoTime(start, offset, 3), formatIsoTime(end, offset, 3),
                                        end - start, dt));
  try {
    return routing::TimeAxis::make(static_cast<std::int64_t>(start), dt, static_cast<std::size_t>(intervals) + 1,
                                   offset);
  } catch (const InvalidParameter& e) {
    // Times out of range come from the data unless the caller gave both ends.
    if (request.start_unix_s && request.end_unix_s) throw;
    throw InputError(where, e.what());
  }
}

namespace {

/// buildForcing (File const) and takeForcing: taking, each series is
/// emptied (its values moved when they are the axis itself) once placed.
template <class File>
Forcing placeAll(File* inflow, File* lateral, const AxisRequest& request) {
  constexpr bool take = !std::is_const_v<File>;
  Forcing out;
  out.axis = chooseForcingAxis(inflow, lateral, request);
  const bool resampling = request.dt_s || request.on_axis;
  for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
    File* file = kind == ForcingKind::Inflow ? inflow : lateral;
    if (!file) continue;
    out.origin(kind) = file->file;
    // Before any series is taken: the holds are read from the samples' times.
    std::vector<std::string> holds;
    noteHolds(*file, kind, out.axis, holds);
    SeriesMap& series = out.series(kind);
    // Series on the same times as the one checked before are on the grid as it is.
    SteppedSequence<double> checked;
    bool checked_identity = false, have_checked = false;
    for (auto& [id, s] : file->series) {
      std::vector<double> values;
      bool identity = false;
      if (!resampling) {
        if (!have_checked || !(s.t_s == checked)) {
          checked_identity = checkOnGrid(s, out.axis, file->file, id);
          checked = s.t_s;
          have_checked = true;
        }
        identity = checked_identity;
      }
      if (resampling) {
        values = resample(s, out.axis);
      } else if (identity && take) {
        if constexpr (take) values = std::move(s.q_m3s);
      } else {
        values = placeOnGrid(s, out.axis);
      }
      series.emplace_hint(series.end(), id, std::move(values));
      if constexpr (take) s = RawSeries{};
    }
    out.warnings.insert(out.warnings.end(), holds.begin(), holds.end());
  }
  return out;
}

}  // namespace

Forcing buildForcing(const RawForcing* inflow, const RawForcing* lateral,
                     const AxisRequest& request) {
  return placeAll(inflow, lateral, request);
}

Forcing takeForcing(RawForcing* inflow, RawForcing* lateral, const AxisRequest& request) {
  return placeAll(inflow, lateral, request);
}

}  // namespace reachwise::io
