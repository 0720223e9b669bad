#include "reachwise/routing/TimeAxis.hpp"

#include <gtest/gtest.h>

#include <chrono>
#include <cmath>
#include <functional>
#include <limits>

#include "reachwise/Error.hpp"

using namespace reachwise;
using namespace reachwise::routing;

namespace {

/// Runs `f`, expects InvalidParameter naming `quantity`.
void expectRefused(const std::function<void()>& f, const std::string& quantity) {
  try {
    f();
    ADD_FAILURE() << "accepted; expected a refusal naming " << quantity;
  } catch (const InvalidParameter& e) {
    EXPECT_EQ(e.quantity(), quantity) << e.what();
  }
}

/// Seconds since the epoch of a UTC civil time, by the standard library's
/// calendar (an independent formulation of the bounds).
std::int64_t civil(int y, unsigned m, unsigned d, std::int64_t second_of_day = 0) {
  using namespace std::chrono;
  return sys_seconds{sys_days{year{y} / month{m} / day{d}}}.time_since_epoch().count() + second_of_day;
}

constexpr std::int64_t k2026 = 1777593600;  // 2026-05-01T00:00:00Z (Python calendar.timegm)

}  // namespace

TEST(TimeAxis, BoundsAreTheWholeYearsOfSigned64BitNanoseconds) {
  EXPECT_EQ(TimeAxis::kEarliest_unix_s, civil(1678, 1, 1));
  EXPECT_EQ(TimeAxis::kLatest_unix_s, civil(2261, 12, 31, 86399));
  // ±(2^63 − 1) ns is 1677-09-21T00:12:43.145Z .. 2262-04-11T23:47:16.854Z: the
  // bounds fit, and one more year on either side does not.
  const auto max_s = static_cast<double>(std::numeric_limits<std::int64_t>::max()) / 1e9;
  EXPECT_LT(static_cast<double>(TimeAxis::kLatest_unix_s), max_s);
  EXPECT_GT(static_cast<double>(TimeAxis::kEarliest_unix_s), -max_s);
  EXPECT_GT(static_cast<double>(civil(2263, 1, 1)), max_s);
  EXPECT_LT(static_cast<double>(civil(1677, 1, 1)), -max_s);
}

TEST(TimeAxis, AGoodAxisRoundTrips) {
  const TimeAxis a = TimeAxis::make(k2026, 900, 97, -300);
  EXPECT_EQ(a.start_unix_s, k2026);
  EXPECT_EQ(a.dt_s, 900.0);
  EXPECT_EQ(a.steps, 97u);
  EXPECT_EQ(a.utc_offset_min, -300);
  EXPECT_EQ(a.at(96), static_cast<double>(k2026 + 86400));  // 96 quarter hours are one day
  EXPECT_EQ(a.duration_s(), 86400.0);
  // The edges themselves are allowed: one sample at each bound, ±18:00.
  EXPECT_NO_THROW(TimeAxis::make(TimeAxis::kEarliest_unix_s, 1, 1, 18 * 60));
  EXPECT_NO_THROW(TimeAxis::make(TimeAxis::kLatest_unix_s, 1, 1, -18 * 60));
  EXPECT_NO_THROW(TimeAxis::make(TimeAxis::kLatest_unix_s - 3600, 1800, 3));
}

TEST(TimeAxis, EachBadValueIsRefusedByName) {
  // Below a millisecond (times are written to the millisecond), 1e-15 and
  // 1e-16 among them, is no step either.
  for (double dt : {0.0, -60.0, std::nan(""), std::numeric_limits<double>::infinity(), 1e-15, 1e-16, 0.0009})
    expectRefused([&] { TimeAxis::make(k2026, dt, 10); }, "dt");
  EXPECT_NO_THROW(TimeAxis::make(k2026, 0.001, 10));
  expectRefused([] { TimeAxis::make(k2026, 3600, 0); }, "steps");
  expectRefused([] { TimeAxis::make(TimeAxis::kEarliest_unix_s - 1, 3600, 10); }, "start");
  expectRefused([] { TimeAxis::make(TimeAxis::kLatest_unix_s + 1, 3600, 1); }, "start");
  // The start is fine, the last sample one hour past the bound is not.
  expectRefused([] { TimeAxis::make(TimeAxis::kLatest_unix_s - 3600, 3600, 3); }, "end");
  expectRefused([] { TimeAxis::make(k2026, 3600, 10, 18 * 60 + 1); }, "utc_offset");
  expectRefused([] { TimeAxis::make(k2026, 3600, 10, -18 * 60 - 1); }, "utc_offset");
}

TEST(TimeAxis, ADefaultAxisHasNoStep) {
  EXPECT_TRUE(std::isnan(TimeAxis{}.dt_s));
  EXPECT_EQ(TimeAxis{}.steps, 0u);
}
