#include "reachwise/io/IsoTime.hpp"

#include <ctime>
#include <random>

#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

using reachwise::InvalidParameter;
using reachwise::io::formatIsoTime;
using reachwise::io::parseIsoTime;

namespace {

// "Seconds Since the Epoch", POSIX.1-2017 Base Definitions §4.16: the
// formula written out there, with tm_year = years since 1900 and tm_yday
// the 0-based day of the year. An oracle independent of the parser's
// calendar code.
std::int64_t posixSeconds(int year, int yday, int hour, int minute, int second) {
  const std::int64_t tm_year = year - 1900;
  return second + minute * 60 + hour * 3600 + std::int64_t{yday} * 86400 +
         (tm_year - 70) * 31536000 + ((tm_year - 69) / 4) * 86400 -
         ((tm_year - 1) / 100) * 86400 + ((tm_year + 299) / 400) * 86400;
}

}  // namespace

TEST(IsoTime, EpochAndWellKnownInstants) {
  // The epoch itself, by the POSIX definition.
  EXPECT_EQ(parseIsoTime("1970-01-01T00:00:00Z").unix_s, 0);
  // 2000-01-01T00:00:00Z = 946684800: common knowledge (the Y2K instant),
  // and equal to the POSIX §4.16 formula (checked next).
  EXPECT_EQ(parseIsoTime("2000-01-01T00:00:00Z").unix_s, 946684800);
  EXPECT_EQ(posixSeconds(2000, 0, 0, 0, 0), 946684800);
  // 2^31 s after the epoch is 2038-01-19T03:14:08Z: common knowledge (the
  // 32-bit time_t limit).
  EXPECT_EQ(parseIsoTime("2038-01-19T03:14:08Z").unix_s, std::int64_t{1} << 31);
  // Leap day of a year divisible by 400: 2000-01-01 + 59 days (POSIX formula, yday 59).
  EXPECT_EQ(parseIsoTime("2000-02-29T00:00:00Z").unix_s, posixSeconds(2000, 59, 0, 0, 0));
}

TEST(IsoTime, OffsetsGiveTheUtcInstant) {
  const auto utc = parseIsoTime("2026-05-01T01:00:00Z");
  const auto plus = parseIsoTime("2026-05-01T03:00:00+02:00");
  EXPECT_EQ(plus.unix_s, utc.unix_s);
  EXPECT_EQ(plus.utc_offset_min, 120);
  EXPECT_FALSE(plus.naive);
  const auto compact = parseIsoTime("2026-04-30T19:30:00-0530");
  EXPECT_EQ(compact.unix_s, utc.unix_s);
  EXPECT_EQ(compact.utc_offset_min, -330);
  EXPECT_EQ(parseIsoTime("2026-05-01T06:00+05").unix_s, utc.unix_s);
  // 2026-05-01 is day 120 of a non-leap year (31+28+31+30 = 120 days before it).
  EXPECT_EQ(utc.unix_s, posixSeconds(2026, 120, 1, 0, 0));
}

TEST(IsoTime, NaiveSpaceShortAndFractional) {
  const auto naive = parseIsoTime("2026-05-01 01:00");
  EXPECT_TRUE(naive.naive);
  EXPECT_EQ(naive.utc_offset_min, 0);
  EXPECT_EQ(naive.unix_s, parseIsoTime("2026-05-01T01:00:00Z").unix_s);
  const auto frac = parseIsoTime("  2026-05-01T01:00:07.250Z\t");
  EXPECT_EQ(frac.unix_s, naive.unix_s + 7);
  EXPECT_DOUBLE_EQ(frac.fraction_s, 0.25);
}

TEST(IsoTime, RefusesInvalidCalendarAndSyntax) {
  for (const char* bad :
       {"2026-13-01T00:00:00Z", "2026-02-30T00:00:00Z", "2025-02-29T00:00Z", "1900-02-29T00:00Z",
        "2026-05-01T25:00:00Z", "2026-05-01T23:60Z", "2026-05-01T23:59:60Z", "2026-05-01",
        "2026-5-01T00:00Z", "2026-05-01T00:00:00+2", "2026-05-01T00:00:00+19:00",
        "2026-05-01T00:00:00Zx", "2026-05-01T00:00:00.Z", "", "yesterday", "2026-04-31T00:00Z",
        "2026-05-01T00:00:00+02:75"}) {
    EXPECT_THROW(parseIsoTime(bad), InvalidParameter) << bad;
  }
  EXPECT_NO_THROW(parseIsoTime("2024-02-29T00:00Z"));  // leap year (divisible by 4)
}

TEST(IsoTime, FormatsWithOffset) {
  const std::int64_t t = parseIsoTime("2026-05-01T01:00:00Z").unix_s;
  EXPECT_EQ(formatIsoTime(t), "2026-05-01T01:00:00Z");
  EXPECT_EQ(formatIsoTime(t, 120), "2026-05-01T03:00:00+02:00");
  EXPECT_EQ(formatIsoTime(t, -330), "2026-04-30T19:30:00-05:30");
  EXPECT_EQ(formatIsoTime(static_cast<double>(t) + 0.25, 0, 3), "2026-05-01T01:00:00.250Z");
  // Rounding carries into the minute.
  EXPECT_EQ(formatIsoTime(static_cast<double>(t) + 59.9996, 0, 3), "2026-05-01T01:01:00.000Z");
  EXPECT_EQ(formatIsoTime(std::int64_t{-1}), "1969-12-31T23:59:59Z");
}

TEST(IsoTime, SeededRandomInstantsAgreeWithGlibcTimegmAndRoundTrip) {
  // Reference: glibc's timegm (a general-purpose library), over a seeded
  // random sample of instants in 1900-2199 and offsets.
  const unsigned seed = 20260501;
  std::mt19937_64 rng(seed);
  std::uniform_int_distribution<std::int64_t> instant(-2208988800LL, 7258118399LL);
  std::uniform_int_distribution<int> offset(-12 * 4, 14 * 4);
  for (int i = 0; i < 5000; ++i) {
    const std::int64_t t = instant(rng);
    const int off = offset(rng) * 15;
    const std::string text = formatIsoTime(t, off);
    const auto back = parseIsoTime(text);
    ASSERT_EQ(back.unix_s, t) << text << " seed " << seed;
    ASSERT_EQ(back.utc_offset_min, off) << text;
    // The local wall clock written must be t + offset per timegm.
    std::tm tm{};
    const std::string local = text.substr(0, 19);
    ASSERT_NE(strptime(local.c_str(), "%Y-%m-%dT%H:%M:%S", &tm), nullptr) << text;
    ASSERT_EQ(static_cast<std::int64_t>(timegm(&tm)), t + off * 60) << text << " seed " << seed;
  }
}
