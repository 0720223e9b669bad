#include "reachwise/io/IsoTime.hpp"

#include <chrono>
#include <cmath>
#include <cstdlib>

#include <fmt/format.h>

#include "reachwise/Error.hpp"

namespace reachwise::io {
namespace {

[[noreturn]] void fail(std::string_view text, const std::string& why) {
  throw InvalidParameter("time", fmt::format("'{}' is not an ISO 8601 date-time: {}", text, why));
}

/// Reads exactly `n` decimal digits at `pos`.
bool digits(std::string_view s, std::size_t& pos, int n, int& value) {
  if (pos + static_cast<std::size_t>(n) > s.size()) return false;
  value = 0;
  for (int i = 0; i < n; ++i) {
    const char c = s[pos + static_cast<std::size_t>(i)];
    if (c < '0' || c > '9') return false;
    value = value * 10 + (c - '0');
  }
  pos += static_cast<std::size_t>(n);
  return true;
}

bool expect(std::string_view s, std::size_t& pos, char c) {
  if (pos >= s.size() || s[pos] != c) return false;
  ++pos;
  return true;
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

/// Days since 1970-01-01 of a validated civil date.
std::int64_t daysFromCivil(std::string_view text, int y, int m, int d) {
  using namespace std::chrono;
  if (m < 1 || m > 12) fail(text, fmt::format("month {} is not 1-12", m));
  const year_month_day ymd{year{y}, month{static_cast<unsigned>(m)}, day{static_cast<unsigned>(d)}};
  if (!ymd.ok()) fail(text, fmt::format("day {} does not exist in {:04}-{:02}", d, y, m));
  return sys_days{ymd}.time_since_epoch().count();
}

/// Parses the zone designator from `pos` to the end; returns minutes east of UTC.
int parseOffset(std::string_view text, std::string_view s, std::size_t pos, bool& naive) {
  naive = pos == s.size();
  if (naive) return 0;
  if (s[pos] == 'Z' || s[pos] == 'z') {
    if (pos + 1 != s.size()) fail(text, "text after 'Z'");
    return 0;
  }
  if (s[pos] != '+' && s[pos] != '-') fail(text, "expected 'Z', '+HH:MM' or '-HH:MM' after the time");
  const int sign = s[pos] == '-' ? -1 : 1;
  ++pos;
  int hh = 0, mm = 0;
  if (!digits(s, pos, 2, hh)) fail(text, "offset hours must be two digits");
  if (pos < s.size()) {
    expect(s, pos, ':');
    if (!digits(s, pos, 2, mm)) fail(text, "offset minutes must be two digits");
  }
  if (pos != s.size()) fail(text, "text after the offset");
  if (mm > 59) fail(text, fmt::format("offset minute {} is not 0-59", mm));
  // Real zones lie within -12:00..+14:00; ±18:00 leaves room (common practice).
  if (hh * 60 + mm > 18 * 60) fail(text, "offset beyond ±18:00");
  return sign * (hh * 60 + mm);
}

}  // namespace

IsoTime parseIsoTime(std::string_view raw) {
  const std::string_view s = trim(raw);
  std::size_t pos = 0;
  int y = 0, mo = 0, d = 0, h = 0, mi = 0, sec = 0;
  if (!digits(s, pos, 4, y) || !expect(s, pos, '-') || !digits(s, pos, 2, mo) ||
      !expect(s, pos, '-') || !digits(s, pos, 2, d))
    fail(raw, "expected a date YYYY-MM-DD");
  if (pos >= s.size() || (s[pos] != 'T' && s[pos] != 't' && s[pos] != ' '))
    fail(raw, "expected 'T' or a space and a time HH:MM after the date");
  ++pos;
  if (!digits(s, pos, 2, h) || !expect(s, pos, ':') || !digits(s, pos, 2, mi))
    fail(raw, "expected a time HH:MM");
  double fraction = 0.0;
  if (expect(s, pos, ':')) {
    if (!digits(s, pos, 2, sec)) fail(raw, "seconds must be two digits");
    if (pos < s.size() && (s[pos] == '.' || s[pos] == ',')) {
      ++pos;
      double scale = 0.1;
      const std::size_t first = pos;
      while (pos < s.size() && s[pos] >= '0' && s[pos] <= '9') {
        fraction += scale * (s[pos] - '0');
        scale /= 10.0;
        ++pos;
      }
      if (pos == first) fail(raw, "no digits after the decimal sign");
    }
  }
  if (h > 23) fail(raw, fmt::format("hour {} is not 0-23", h));
  if (mi > 59) fail(raw, fmt::format("minute {} is not 0-59", mi));
  if (sec > 59) fail(raw, fmt::format("second {} is not 0-59 (leap seconds are not supported)", sec));
  IsoTime out;
  out.utc_offset_min = parseOffset(raw, s, pos, out.naive);
  const std::int64_t days = daysFromCivil(raw, y, mo, d);
  out.unix_s = days * 86400 + h * 3600 + mi * 60 + sec - out.utc_offset_min * 60;
  out.fraction_s = fraction >= 1.0 ? 0.999999999 : fraction;
  return out;
}

namespace {

std::string formatWhole(std::int64_t unix_s, int utc_offset_min, std::string_view fraction) {
  using namespace std::chrono;
  const std::int64_t local = unix_s + std::int64_t{utc_offset_min} * 60;
  const std::int64_t days = local >= 0 ? local / 86400 : -((-local + 86399) / 86400);
  const std::int64_t sod = local - days * 86400;
  const year_month_day ymd{sys_days{std::chrono::days{days}}};
  std::string zone = "Z";
  if (utc_offset_min != 0) {
    const int a = std::abs(utc_offset_min);
    zone = fmt::format("{}{:02}:{:02}", utc_offset_min < 0 ? '-' : '+', a / 60, a % 60);
  }
  return fmt::format("{:04}-{:02}-{:02}T{:02}:{:02}:{:02}{}{}", static_cast<int>(ymd.year()),
                     static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()),
                     sod / 3600, sod % 3600 / 60, sod % 60, fraction, zone);
}

}  // namespace

std::string formatIsoTime(std::int64_t unix_s, int utc_offset_min) {
  return formatWhole(unix_s, utc_offset_min, "");
}

std::string formatIsoTime(double unix_s, int utc_offset_min, int fraction_digits) {
  if (!std::isfinite(unix_s)) throw InvalidParameter("time", "cannot format a non-finite instant");
  if (fraction_digits < 0 || fraction_digits > 9)
    throw InvalidParameter("fraction_digits", "must be 0-9");
  std::int64_t scale = 1;
  for (int i = 0; i < fraction_digits; ++i) scale *= 10;
  // Round once in units of the last digit so that 59.9996 s carries into the minute.
  const auto ticks = static_cast<std::int64_t>(std::llround(unix_s * static_cast<double>(scale)));
  std::int64_t whole = ticks / scale;
  std::int64_t frac = ticks % scale;
  if (frac < 0) {
    frac += scale;
    whole -= 1;
  }
  const std::string fraction =
      fraction_digits == 0 ? std::string{} : fmt::format(".{:0{}}", frac, fraction_digits);
  return formatWhole(whole, utc_offset_min, fraction);
}

}  // namespace reachwise::io
