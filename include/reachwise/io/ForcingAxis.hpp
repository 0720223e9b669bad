#pragma once
/// \file
/// Forcing samples as read, put on the run's time axis: what every forcing
/// format shares once its samples are read (docs/formats.md, "The run's
/// time axis").
///
/// The rule:
///  - step: `dt_s` if given, else the inflow file's own step (else the
///    lateral file's). Without `dt_s`, every reach of a file must be on one
///    uniform step and both files on the same step and grid; with `dt_s`,
///    every series is resampled to it by linear interpolation between its
///    samples (instantaneous values, as hydrographs are).
///  - start / end: given, else the earliest / latest time in either file.
///    end − start must be a whole number of steps.
///  - or, instead of the three: an axis given whole (`on_axis`, the axis of
///    other forcing of the run), onto which every series is resampled as
///    with `dt_s`.
///  - a series is held at its first value before its first sample and at
///    its last value after its last one; each such hold is reported in
///    Forcing::warnings.
/// Any violation is an InputError naming the file and, where one exists,
/// the line.

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <initializer_list>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/io/Forcing.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

/// Most time steps a run's axis may have unless the caller allows more
/// (AxisRequest::max_steps; `--max-steps` / `max_steps` in the run file):
/// a million steps is a year at 32 s, or 114 years hourly. Checked before
/// anything of that length is allocated, so that a typo (a lateral file a
/// century after the inflow, `--dt 0.001`) is an error, not hours of
/// routing or a run out of memory.
inline constexpr std::size_t kDefaultMaxSteps = 1'000'000;

/// How to allow `needed` steps, for messages: "give --max-steps N (or
/// max_steps = N in the run file) to allow it".
std::string maxStepsAdvice(double needed);

/// Times of forcing samples closer than this are the same instant, s
/// (fractional seconds are carried as doubles).
inline constexpr double kSameInstant_s = 1e-6;

/// A sequence stored as runs of equal steps: `start + step * i` for the
/// i-th value of a run, the run extended only while that gives the value
/// appended bit for bit. A regular series (hourly times, consecutive
/// lines, a line every N rows) is one run of three numbers however long
/// it is; an irregular one costs a run per value. Reading gives back
/// exactly the values appended.
template <class T>
class SteppedSequence {
public:
  SteppedSequence() = default;
  SteppedSequence(std::initializer_list<T> values) {
    for (T v : values) push_back(v);
  }

  void push_back(T v) {
    if (!runs_.empty()) {
      Run& last = runs_.back();
      const std::size_t n = size_ - last.first;
      if (n == 1) {
        const T step = v - last.start;
        if (last.start + step == v) {
          last.step = step;
          ++size_;
          return;
        }
      } else if (last.start + last.step * static_cast<T>(n) == v) {
        ++size_;
        return;
      }
    }
    runs_.push_back(Run{size_, v, T{}});
    ++size_;
  }

  T operator[](std::size_t k) const {
    const Run* run = &runs_.front();
    if (runs_.size() > 1) {
      auto it = std::upper_bound(runs_.begin(), runs_.end(), k,
                                 [](std::size_t i, const Run& r) { return i < r.first; });
      run = &*(it - 1);
    }
    const std::size_t i = k - run->first;
    return i == 0 ? run->start : run->start + run->step * static_cast<T>(i);
  }
  T front() const { return runs_.front().start; }
  T back() const { return (*this)[size_ - 1]; }
  std::size_t size() const noexcept { return size_; }
  bool empty() const noexcept { return size_ == 0; }
  /// How many runs hold the values (for tests and memory accounting).
  std::size_t runs() const noexcept { return runs_.size(); }
  /// The same values (compared run by run: cheap, so that work on a
  /// sequence may be reused for an equal one).
  bool operator==(const SteppedSequence& other) const = default;
  std::vector<T> values() const {
    std::vector<T> out;
    out.reserve(size_);
    for (std::size_t k = 0; k < size_; ++k) out.push_back((*this)[k]);
    return out;
  }

private:
  struct Run {
    std::size_t first;  ///< index of the run's first value
    T start;
    T step;
    bool operator==(const Run&) const = default;
  };
  std::vector<Run> runs_;
  std::size_t size_ = 0;
};

/// The samples of one reach as read, before they are put on the axis. The
/// discharges are stored one double each; times and lines, regular in any
/// usual file, as runs of equal steps.
struct RawSeries {
  SteppedSequence<double> t_s;        ///< seconds since the epoch, strictly increasing
  std::vector<double> q_m3s;          ///< already converted to m^3/s
  SteppedSequence<std::int64_t> line; ///< line of each sample, for messages
};

/// The samples of one forcing file, per reach, as read and checked (times
/// ordered per reach, discharges finite and >= 0), whatever its format.
struct RawForcing {
  std::string file;                   ///< names the source in messages
  std::map<std::string, RawSeries, std::less<>> series;   ///< every series has a sample
  int utc_offset_min = 0;             ///< offset of the first time stamp in the file
};

/// What a caller asks of the run's axis; what is unset follows the data.
/// Series are resampled only when `dt_s` or `on_axis` asks for it;
/// otherwise their samples must lie on the axis.
struct AxisRequest {
  std::optional<double> dt_s;                 ///< resample to this step, s
  std::optional<std::int64_t> start_unix_s;   ///< run start; default: earliest time in the data
  std::optional<std::int64_t> end_unix_s;     ///< run end (inclusive); default: latest time
  /// Put the series on this axis: it is the run's axis as it is (start,
  /// step, length and UTC offset, e.g. those of a NetCDF forcing file read
  /// beside), and every series is resampled onto it as with `dt_s`.
  /// Excludes `dt_s`, `start_unix_s` and `end_unix_s` (InvalidParameter).
  std::optional<routing::TimeAxis> on_axis;
  /// An axis longer than this is an InputError saying how to allow it.
  std::size_t max_steps = kDefaultMaxSteps;
};

/// The run's axis for one or two files by the rule above. Either pointer
/// may be null, not both.
routing::TimeAxis chooseForcingAxis(const RawForcing* inflow, const RawForcing* lateral,
                                    const AxisRequest& request);

/// Puts one or two files on the run's axis (chooseForcingAxis) and notes
/// every hold in Forcing::warnings. Either pointer may be null, not both.
Forcing buildForcing(const RawForcing* inflow, const RawForcing* lateral, const AxisRequest& request);

/// The same, taking the samples out of the files as they are placed (each
/// series is emptied once placed; a series already on the axis, one sample
/// per step, is moved rather than copied), so that a large file's values
/// are held once and not twice. The files are left with their ids and
/// emptied series; on an error they are left part taken.
Forcing takeForcing(RawForcing* inflow, RawForcing* lateral, const AxisRequest& request);

}  // namespace reachwise::io
