#pragma once
/// \file
/// ISO 8601 date-times as they appear in forcing files and outputs.
///
/// Accepted: `YYYY-MM-DDTHH:MM[:SS[.f...]]` followed by `Z`, `±HH:MM`,
/// `±HHMM`, `±HH` or nothing (naive = UTC). A single space may stand in for
/// the `T`. The calendar is the proleptic Gregorian one (leap years by the
/// 4/100/400 rule); a leap second (`:60`) is refused, as POSIX time has none.
///
/// The calendar arithmetic is the standard library's (`std::chrono::
/// year_month_day`, `sys_days`); only the text grammar is our own, because
/// GCC 12's <chrono> has no `parse`.

#include <cstdint>
#include <string>
#include <string_view>

namespace reachwise::io {

/// A parsed instant: whole seconds since 1970-01-01T00:00:00Z plus a
/// fraction, and the offset the text was written with.
struct IsoTime {
  std::int64_t unix_s = 0;     ///< floor of the instant, s since the epoch (UTC)
  double fraction_s = 0.0;     ///< in [0, 1)
  int utc_offset_min = 0;      ///< offset written in the text (0 for `Z` and naive)
  bool naive = false;          ///< no zone designator was written

  double seconds() const { return static_cast<double>(unix_s) + fraction_s; }
};

/// Parses `text` (surrounding blanks allowed). Throws reachwise::InvalidParameter
/// (quantity "time") saying what is wrong: bad syntax, month 13, 30 February,
/// hour 25, offset beyond ±18:00, .... Callers that know the file and line
/// rethrow it as an InputError.
IsoTime parseIsoTime(std::string_view text);

/// Formats an instant as `YYYY-MM-DDTHH:MM:SS[.fff]` followed by `Z` when
/// `utc_offset_min` is 0, else `±HH:MM`; the wall-clock part is local to that
/// offset. `fraction_digits` (0–9) digits of the second are written, rounded;
/// with 0 the instant is rounded to the nearest second.
std::string formatIsoTime(double unix_s, int utc_offset_min = 0, int fraction_digits = 0);

/// Whole-second overload (exact for any int64 in the years 0000–9999).
std::string formatIsoTime(std::int64_t unix_s, int utc_offset_min = 0);

}  // namespace reachwise::io
